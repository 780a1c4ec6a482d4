// The model tree as edited on the build page: rules and the build plan (issue 13 §1, "Editing the tree").
// The size rules are the engine's: max(10, A + 3) per one-class model (docs/methods.md), and, for a discriminant
// split, at least 5 spectra per child (common practice: every cross-validation fold trains on every child).
import { describe, expect, it } from 'vitest';
import { blankNode, labelClass, planTree, specFromLabels, type TreeSpec, type TreeSpecNode } from '../../../src/lib/analysis/tree-spec';
import { buildModel } from '../../../src/lib/analysis';
import { treeOf, walkTree } from '../../../src/lib/analysis/tree';
import { treeLibrary } from '../../../src/lib/demo';
import { parseTreeText } from '../../../src/lib/validation/tree';

const node = (name: string, kind: TreeSpecNode['kind'], extra: Partial<TreeSpecNode> = {}): TreeSpecNode => ({ ...blankNode(name, kind), ...extra });
const counts = { 'genuine/site-a': 15, 'genuine/site-b': 15, 'diluted/starch': 12, 'diluted/talc': 12, substituted: 15 };
const threeLevel = (): TreeSpec => specFromLabels(Object.keys(counts));

describe('the tree that follows from the library labels', () => {
	it('makes one node per level, kinds from the genuine class, labels at the leaves', () => {
		const spec = threeLevel();
		expect(spec.map((n) => [n.name, n.kind, n.children.map((c) => c.name)])).toEqual([
			['diluted', 'suspect', ['starch', 'talc']],
			['genuine', 'genuine', ['site-a', 'site-b']],
			['substituted', 'suspect', []]
		]);
		expect(spec[0].children[1].labels).toEqual(['diluted/talc']);
		expect(spec[0].labels).toEqual([]);
	});
	it('drops a leading "suspect" word: suspect/diluted/starch is diluted › starch', () => {
		const spec = specFromLabels(['genuine', 'suspect/diluted/starch', 'suspect/diluted/talc']);
		expect(spec.map((n) => n.name)).toEqual(['genuine', 'diluted']);
		expect(spec[1].children.map((c) => c.labels)).toEqual([['suspect/diluted/starch'], ['suspect/diluted/talc']]);
		expect(labelClass('suspect/diluted/starch')).toEqual({ path: ['suspect', 'diluted', 'starch'], className: 'diluted' });
		expect(labelClass('diluted//starch')).toEqual({ problem: expect.stringContaining('none may be empty') });
		expect(labelClass('Diluted/Starch')).toEqual({ problem: expect.stringContaining('"Diluted" does not') });
	});
});

describe('planTree', () => {
	it('plans a three-level tree: class path per label, genuine node, options only for nodes with children', () => {
		const spec = threeLevel();
		spec[0].method = 'knn';
		spec[0].recipe = 'snv, center';
		const { plan, problems } = planTree(spec, counts);
		expect(problems).toEqual([]);
		expect(plan!.genuine).toBe('genuine');
		expect(plan!.classOf).toEqual({ 'genuine/site-a': 'genuine/site-a', 'genuine/site-b': 'genuine/site-b', 'diluted/starch': 'diluted/starch', 'diluted/talc': 'diluted/talc', substituted: 'substituted' });
		expect(plan!.nodes).toEqual({ diluted: { method: 'knn', recipe: 'snv, center', k: 'auto' }, genuine: { method: 'one-class' } });
		expect(plan!.counts).toMatchObject({ diluted: 24, 'diluted/starch': 12, genuine: 30 });
	});

	it('renames and regroups flat labels: the tree, not the label, names the node', () => {
		const flat = { lactose: 20, 'diluted-starch': 12, 'diluted-talc': 12 };
		const spec: TreeSpec = [
			node('genuine', 'genuine', { labels: ['lactose'] }),
			node('diluted', 'grouping', { children: [node('starch', 'suspect', { labels: ['diluted-starch'] }), node('talc', 'suspect', { labels: ['diluted-talc'] })] })
		];
		// a grouping node cannot stand at the first level (the decision table needs genuine or suspect)
		expect(planTree(spec, flat).problems).toEqual(['node diluted: a node of the first level is genuine or suspect (the decision table needs one of them), not grouping']);
		spec[1].kind = 'suspect';
		const { plan } = planTree(spec, flat);
		expect(plan!.classOf).toEqual({ lactose: 'genuine', 'diluted-starch': 'diluted/starch', 'diluted-talc': 'diluted/talc' });
	});

	it('refuses a discriminant split below a discriminant split, naming both nodes', () => {
		const spec: TreeSpec = [
			node('genuine', 'genuine', { labels: ['g'] }),
			node('diluted', 'suspect', {
				method: 'plsda',
				children: [node('starch', 'suspect', { method: 'knn', children: [node('maize', 'suspect', { labels: ['m'] }), node('potato', 'suspect', { labels: ['p'] })] }), node('talc', 'suspect', { labels: ['t'] })]
			})
		];
		const { plan, problems } = planTree(spec, { g: 20, m: 6, p: 6, t: 12 });
		expect(plan).toBeNull();
		expect(problems).toEqual([
			'node diluted › starch: a discriminant split is allowed only below a node a one-class model accepted, but this node is chosen by the plsda split of diluted (a closed-set classifier cannot say "none of these")'
		]);
	});

	it('counts spectra per child against the split rule: 10 for a one-class child, 5 for a discriminant one', () => {
		const spec = threeLevel();
		const few = { ...counts, 'diluted/talc': 9 };
		expect(planTree(spec, few).problems).toEqual(['node diluted › talc: 9 training spectra, its one-class model needs at least 10 (max(10, A + 3))']);
		spec[0].method = 'plsda';
		expect(planTree(spec, few).problems).toEqual([]);
		expect(planTree(spec, { ...few, 'diluted/talc': 4 }).problems).toEqual(['node diluted › talc: 4 training spectra, a child of a plsda split needs at least 5']);
		// a fixed A raises the one-class minimum to A + 3
		const fixed = threeLevel();
		fixed[1].components = 13;
		expect(planTree(fixed, counts).problems).toEqual([
			'node genuine › site-a: 15 training spectra, its one-class model needs at least 16 (max(10, A + 3))',
			'node genuine › site-b: 15 training spectra, its one-class model needs at least 16 (max(10, A + 3))'
		]);
	});

	it('names every structural problem at once', () => {
		const spec: TreeSpec = [
			node('genuine', 'genuine', { labels: ['g'], children: [node('a', 'genuine', { labels: ['x'] })] }),
			node('Bad Name', 'suspect', { labels: ['g', 'nothing'] }),
			node('leaf', 'suspect', { method: 'knn', labels: ['y'] }),
			node('grp', 'suspect', { children: [node('inner', 'genuine', { labels: ['z'] })] })
		];
		const { problems } = planTree(spec, { g: 30, x: 30, y: 30, z: 30, stray: 12 });
		expect(problems).toEqual([
			'node genuine: has children and also holds the labels g; put those spectra in one of its children (a node\'s spectra are its children\'s)',
			'node Bad Name: the name "Bad Name" must use lower-case letters, digits and dashes (1–40 characters, e.g. site-b)',
			'node Bad Name: label "g" is already used by node genuine',
			'node Bad Name: label "nothing" has no training spectra in the library',
			'node leaf: a knn split needs children to decide among',
			'node grp › inner: below a suspect node a node is suspect or grouping, not genuine',
			'library label "stray" (12 training spectra) is in no node: give it to a leaf (spectra outside the tree would silently leave the model)'
		]);
		expect(planTree([], {}).problems).toEqual(['the tree is empty: add a genuine node and at least one suspect node']);
		expect(planTree([node('a', 'suspect', { labels: ['a'] })], { a: 12 }).problems).toEqual(['the first level needs exactly one genuine node, found 0']);
	});

	it('the form text is parsed strictly: bad JSON and bad kinds are named', () => {
		expect(parseTreeText('')).toEqual({ tree: null, problem: null });
		expect(parseTreeText('{').problem).toBe('The tree is not valid JSON');
		expect(parseTreeText(JSON.stringify([{ name: 'g', kind: 'family' }])).problem).toBe('0.kind: A node kind is genuine, suspect or grouping');
		expect(parseTreeText(JSON.stringify([{ name: 'g', kind: 'genuine', components: '3' }])).tree![0]).toMatchObject({ components: 3, k: 'auto', method: 'one-class', labels: [], children: [] });
	});

	it('the plan builds: a flat library regrouped into a three-level tree gives that tree', () => {
		const lib = treeLibrary().filter((r) => r.role === 'training');
		// flat library labels, as a site without label paths would have them
		const flatLabel = (l: string) => l.replace('/', '-');
		const perLabel: Record<string, number> = {};
		for (const r of lib) perLabel[flatLabel(r.className)] = (perLabel[flatLabel(r.className)] ?? 0) + 1;
		const spec: TreeSpec = [
			node('genuine', 'genuine', { children: [node('site-a', 'genuine', { labels: ['genuine-site-a'] }), node('site-b', 'genuine', { labels: ['genuine-site-b'] })] }),
			node('diluted', 'suspect', { method: 'knn', children: [node('starch', 'suspect', { labels: ['diluted-starch'] }), node('talc', 'suspect', { labels: ['diluted-talc'] })] }),
			node('anhydrous', 'suspect', { labels: ['substituted'] })
		];
		const { plan, problems } = planTree(spec, perLabel);
		expect(problems).toEqual([]);
		const artefact = buildModel(
			lib.map((r) => ({ ...r, className: plan!.classOf[flatLabel(r.className)] })),
			{ recipe: 'snv, center', genuine: plan!.genuine, nodes: plan!.nodes, components: 2, familyComponents: 3 }
		);
		const nodes = walkTree(treeOf(artefact)).map((n) => [n.path.join('/'), n.n, n.split?.method ?? null]);
		expect(nodes).toEqual([
			['', lib.length, 'one-class'],
			['genuine', perLabel['genuine-site-a'] + perLabel['genuine-site-b'], 'one-class'],
			['genuine/site-a', perLabel['genuine-site-a'], null],
			['genuine/site-b', perLabel['genuine-site-b'], null],
			['diluted', perLabel['diluted-starch'] + perLabel['diluted-talc'], 'knn'],
			['diluted/starch', perLabel['diluted-starch'], null],
			['diluted/talc', perLabel['diluted-talc'], null],
			['anhydrous', perLabel.substituted, null]
		]);
	}, 60_000);
});
