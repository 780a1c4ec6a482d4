// Model trees: every path of a three-level tree. The spectra are the invented demo generator's
// (src/lib/demo/tree-library.ts): they exercise the decision wiring, they prove no formula.
import { beforeAll, describe, expect, test } from 'vitest';
import {
	AnalysisError,
	buildModel,
	describePath,
	parseArtefact,
	prepareArtefact,
	screen,
	serializeArtefact,
	treeDepth,
	treeOf,
	walkTree,
	type ModelArtefact,
	type PreparedArtefact,
	type ScreenResult
} from '../../../src/lib/analysis';
import { walkSplits } from '../../../src/lib/analysis/tree-screen';
import { sealArtefact } from '../../../src/lib/analysis/integrity';
import { decideOneClassLevel } from '../../../src/lib/analysis/tree';
import { treeLibrary, type TreeLibraryRow } from '../../../src/lib/demo';
import type { ModelStats } from '../../../src/lib/analysis/projection';

const RECIPE = 'snv, savgol(5,2,1), center';
const lib = treeLibrary();
const training = lib.filter((r) => r.role === 'training');
const tests = lib.filter((r) => r.role === 'test');
const mcc = lib.filter((r) => r.role === 'challenge');
const clone = (a: ModelArtefact): ModelArtefact => JSON.parse(serializeArtefact(a));
const named = (a: ModelArtefact | PreparedArtefact, r: TreeLibraryRow): ScreenResult => screen(a, r);
/** A prepared copy with acceptance limits moved in memory (a stored artefact cannot be edited: integrity, §12.1). */
const forced = (a: ModelArtefact, change: (p: PreparedArtefact) => void): PreparedArtefact => {
	const p = prepareArtefact(clone(a));
	change(p);
	return p;
};
const label = (r: ScreenResult) => describePath(r.verdict, r.path, r.levels);

let tree: ModelArtefact;
beforeAll(() => {
	tree = buildModel(training, { recipe: RECIPE, genuine: 'genuine', meta: { material: 'LAC-TREE' } });
});

describe('three-level one-class tree', () => {
	test('label paths give the tree: level 1 from the first names, one split per node with children', () => {
		expect(tree.schemaVersion).toBe(3);
		expect(tree.classes).toEqual(['genuine', 'diluted', 'substituted']);
		expect(tree.genuine).toBe('genuine');
		expect(tree.splits!.map((s) => [s.path, s.method, s.children])).toEqual([
			[['genuine'], 'one-class', ['site-a', 'site-b']],
			[['diluted'], 'one-class', ['starch', 'talc']]
		]);
		// level-1 models train on every spectrum below them
		expect(tree.models.genuine.n).toBe(30);
		expect(tree.models.diluted.n).toBe(30);
		expect(tree.splits![1].models.starch.n).toBe(15);
		const view = treeOf(tree);
		expect(treeDepth(view)).toBe(3);
		expect(walkTree(view).map((n) => `${n.path.join('/') || '(root)'}:${n.n}:${n.kind}`)).toEqual([
			'(root):75:root',
			'genuine:30:genuine',
			'genuine/site-a:15:genuine',
			'genuine/site-b:15:genuine',
			'diluted:30:suspect',
			'diluted/starch:15:suspect',
			'diluted/talc:15:suspect',
			'substituted:15:suspect'
		]);
	});

	test.each([
		['genuine/site-a', 'genuine', null, ['genuine', 'site-a'], 'genuine › site-a'],
		['genuine/site-b', 'genuine', null, ['genuine', 'site-b'], 'genuine › site-b'],
		['diluted/starch', 'suspect', 'diluted', ['diluted', 'starch'], 'suspect › diluted › starch'],
		['diluted/talc', 'suspect', 'diluted', ['diluted', 'talc'], 'suspect › diluted › talc'],
		['substituted', 'suspect', 'substituted', ['substituted'], 'suspect › substituted']
	])('held-out %s spectra end at their leaf', (cls, verdict, profile, path, text) => {
		const rows = tests.filter((r) => r.className === cls);
		expect(rows.length).toBe(3);
		for (const row of rows) {
			const r = named(tree, row);
			expect(r.verdict).toBe(verdict);
			expect(r.profile).toBe(profile);
			expect(r.path).toEqual(path);
			expect(label(r)).toBe(text);
			// one evidence entry per level walked; each names the child it chose
			expect(r.levels.map((l) => l.chosen)).toEqual(path);
			expect(r.levels.map((l) => l.node)).toEqual(path.map((_, i) => path.slice(0, i)));
		}
	});

	test('a wrong material stops at the root: not-this-material with an empty path', () => {
		for (const row of mcc) {
			const r = named(tree, row);
			expect(r.verdict).toBe('not-this-material');
			expect(r.path).toEqual([]);
			expect(r.levels).toHaveLength(1);
			expect(r.levels[0].chosen).toBeNull();
			expect(label(r)).toBe('not-this-material');
		}
	});

	test('no level-1 model accepting gives unknown (unchanged table), with no deeper level walked', () => {
		const a = forced(tree, (p) => p.classes.forEach((m) => (m.cCrit = 1e-9)));
		const r = named(a, tests.find((x) => x.className === 'diluted/starch')!);
		expect(r.verdict).toBe('unknown');
		expect(r.path).toEqual([]);
		expect(r.levels).toHaveLength(1);
	});

	test('"none of these" below a node: the path ends there and the name says unknown sub-profile / sub-level', () => {
		const a = forced(tree, (p) => p.splits.forEach((s) => s.models.forEach((m) => (m.cCrit = 1e-9))));
		const d = named(a, tests.find((x) => x.className === 'diluted/talc')!);
		expect(d.verdict).toBe('suspect');
		expect(d.path).toEqual(['diluted']);
		expect(d.levels[1]).toMatchObject({ node: ['diluted'], chosen: null, accepted: [] });
		expect(d.levels[1].reason).toMatch(/^no model below diluted accepts \(closest: /);
		expect(label(d)).toBe('suspect › diluted › unknown sub-profile');
		const g = named(a, tests.find((x) => x.className === 'genuine/site-b')!);
		expect(g.verdict).toBe('genuine');
		expect(g.path).toEqual(['genuine']);
		expect(label(g)).toBe('genuine › unknown sub-level');
	});

	test('several children accepting: the smallest c/c_crit is chosen and the level is flagged ambiguous', () => {
		const a = forced(tree, (p) => p.splits.get('diluted')!.models.forEach((m) => (m.cCrit = 1e12)));
		const r = named(a, tests.find((x) => x.className === 'diluted/talc')!);
		const lv = r.levels[1];
		expect(lv.accepted.sort()).toEqual(['starch', 'talc']);
		expect(lv.ambiguous).toBe(true);
		const ratio = (k: string) => lv.stats[k].c / lv.stats[k].cCrit;
		expect(lv.chosen).toBe(ratio('starch') < ratio('talc') ? 'starch' : 'talc');
		expect(r.ambiguous).toBe(false); // the top-level flag belongs to the level-1 table
	});

	test('a split model edited and re-sealed is refused on load, like a level-1 model (methods §12.1)', () => {
		const bad = clone(tree);
		bad.splits![1].models.talc.cCrit *= 10;
		const { integrity: _old, ...content } = bad;
		expect(() => parseArtefact(JSON.stringify(sealArtefact(content)))).toThrow(/splits\[1\]\.models\["talc"\]\.cCrit is .* recomputes to/);
		expect(() => parseArtefact(JSON.stringify(sealArtefact({ ...content, schemaVersion: 2 })))).toThrow(/splits need schemaVersion 3/);
	});

	test('the artefact round-trips through JSON to identical results', () => {
		const b = parseArtefact(serializeArtefact(tree));
		for (const row of [...tests, ...mcc]) expect(named(b, row)).toEqual(named(tree, row));
	});

	test('a node recipe with its own window and second derivative screens on that window', () => {
		const a = buildModel(training, { recipe: RECIPE, nodes: { diluted: { recipe: 'range(1600,2400), snv, savgol(7,2,2), center' } } });
		const s = a.splits!.find((x) => x.path[0] === 'diluted')!;
		expect(s.recipe).toBe('range(1600,2400),snv,savgol(7,2,2),center');
		// the artefact axis runs 1100, 1108, …: the window keeps 1604–2396 nm
		expect([a.axis.x[s.window[0]], a.axis.x[s.window[1] - 1]]).toEqual([1604, 2396]);
		expect(s.models.starch.mean.length).toBe(100);
		for (const row of tests.filter((r) => r.className.startsWith('diluted/'))) expect(named(a, row).path).toEqual(row.className.split('/'));
	});
});

describe('discriminant nodes', () => {
	test.each(['plsda', 'knn'] as const)('%s below an accepting one-class node names the sub-profile', (method) => {
		const a = buildModel(training, { recipe: RECIPE, nodes: { diluted: { method }, genuine: { method } } });
		const s = a.splits!.find((x) => x.path[0] === 'diluted')!;
		expect(s.method).toBe(method);
		expect(s.models).toEqual({});
		expect(s.classifier!.method).toBe(method);
		for (const row of tests.filter((r) => r.className.includes('/'))) {
			const r = named(a, row);
			expect(r.path).toEqual(row.className.split('/'));
			expect(r.levels[1].method).toBe(method);
			expect(r.levels[1].classifier!.scores[r.path[1]]).toBe(Math.max(...Object.values(r.levels[1].classifier!.scores)));
		}
		// a closed-set node never runs on a spectrum its parent level did not accept
		for (const row of mcc) expect(named(a, row).levels).toHaveLength(1);
	});

	test('the walk refuses a discriminant split when the node was not accepted by a one-class model', () => {
		const a = buildModel(training, { recipe: RECIPE, nodes: { diluted: { method: 'knn' } } });
		const prep = prepareArtefact(a);
		const row = tests.find((r) => r.className === 'diluted/starch')!;
		const levels = [{ ...named(a, row).levels[0], accepted: [] as string[] }];
		const path = ['diluted'];
		walkSplits(prep.splits, Float64Array.from(row.values), path, levels);
		expect(path).toEqual(['diluted']);
		expect(levels[1]).toMatchObject({ chosen: null, classifier: null });
		expect(levels[1].reason).toMatch(/not accepted by a one-class model/);
	});

	test('a discriminant node below a discriminant node is refused at build and at load', () => {
		// four levels: starch lots 1–2 and 3–4 as two grades (10 training spectra each)
		const deep = treeLibrary({ lots: 4 })
			.filter((r) => r.role === 'training')
			.map((r) => (r.className === 'diluted/starch' ? { ...r, className: `diluted/starch/${/#[12]$/.test(r.group) ? 'fine' : 'coarse'}` } : r));
		expect(() => buildModel(deep, { recipe: RECIPE, nodes: { diluted: { method: 'knn' }, 'diluted/starch': { method: 'plsda' } } })).toThrow(
			/"diluted\/starch" cannot be discriminant: it is chosen by a knn split/
		);
		const ok = buildModel(deep, { recipe: RECIPE, nodes: { 'diluted/starch': { method: 'plsda' } } });
		expect(treeDepth(treeOf(ok))).toBe(4);
		// hand-made artefact: the knn "diluted" split of one build with the plsda "diluted/starch" split of the other
		const bad = clone(buildModel(deep, { recipe: RECIPE, nodes: { diluted: { method: 'knn' } } }));
		const i = bad.splits!.findIndex((s) => s.path.join('/') === 'diluted/starch');
		bad.splits![i] = clone(ok).splits!.find((s) => s.path.join('/') === 'diluted/starch')!;
		expect(() => parseArtefact(JSON.stringify(bad))).toThrow(/a discriminant split needs a node accepted by a one-class model/);
	});
});

describe('labels and node options are checked', () => {
	test.each([
		[{ relabel: (c: string) => (c === 'diluted/talc' ? 'diluted' : c) }, {}, /labelled "diluted", but other spectra of "diluted" go deeper/],
		[{ relabel: (c: string) => (c === 'substituted' ? 'substituted/' : c) }, {}, /has an empty level/],
		[{ relabel: (c: string) => c }, { substituted: { method: 'knn' as const } }, /node "substituted" has no children/],
		[{ relabel: (c: string) => c }, { '': { method: 'knn' as const } }, /the root always decides/],
		[{ relabel: (c: string) => c }, { diluted: { recipe: 'range(3000,3100), center' } }, /range\(3000,3100\) keeps 0 point/]
	])('bad tree input %#', ({ relabel }, nodes, message) => {
		expect(() => buildModel(training.map((r) => ({ ...r, className: relabel(r.className) })), { recipe: RECIPE, nodes })).toThrow(message);
	});
	test('node options with flat labels are refused', () => {
		const flat = training.map((r) => ({ ...r, className: r.className.split('/')[0] }));
		expect(() => buildModel(flat, { nodes: { diluted: { method: 'knn' } } })).toThrow(AnalysisError);
	});
});

describe('deeper one-class decision rule', () => {
	const st = (c: number, cCrit = 1): ModelStats => ({ scores: [], t2: 0, spe: 0, h: 0, v: 0, c, t2Limit: 1, speLimit: 1, cCrit, cOutlier: 2, accepted: c <= cCrit });
	test('none / one / several accepting', () => {
		expect(decideOneClassLevel(['x'], [{ name: 'a', stats: st(2) }, { name: 'b', stats: st(3) }])).toMatchObject({ chosen: null, accepted: [], ambiguous: false });
		expect(decideOneClassLevel(['x'], [{ name: 'a', stats: st(2) }, { name: 'b', stats: st(0.5) }])).toMatchObject({ chosen: 'b', accepted: ['b'], ambiguous: false, reason: null });
		expect(decideOneClassLevel(['x'], [{ name: 'a', stats: st(0.9) }, { name: 'b', stats: st(0.5) }])).toMatchObject({ chosen: 'b', accepted: ['b', 'a'], ambiguous: true });
	});
});
