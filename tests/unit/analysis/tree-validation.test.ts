// Tree validation (issue 13 §1 "one confusion matrix per node and one for the whole path", §3 the PLS-DA / kNN
// comparison). The per-node tables are counts of hand-written walks (no formula); the comparison runs on the invented
// tree library (wiring only: the classifiers themselves are checked against scikit-learn in discriminant.test.ts).
import { describe, expect, it } from 'vitest';
import { buildModel, screen } from '../../../src/lib/analysis';
import { compareDiscriminants, treeConfusions } from '../../../src/lib/analysis/tree-validation';
import { treeLibrary } from '../../../src/lib/demo';
import type { LevelEvidence } from '../../../src/lib/analysis/tree';

const lib = treeLibrary();
const training = lib.filter((r) => r.role === 'training');
const artefact = buildModel(training, { recipe: 'snv, center', genuine: 'genuine', components: 2, familyComponents: 3 });
const tests = lib.filter((r) => r.role !== 'training').map((r) => ({ ...r, expected: r.role === 'challenge' ? null : r.className }));

const level = (node: string[], chosen: string | null): LevelEvidence => ({ node, method: 'one-class', children: [], stats: {}, accepted: [], classifier: null, chosen, ambiguous: false, reason: null });
const walk = (path: string[], stoppedAt?: string[]) => {
	const levels = [level([], path[0] ?? null)];
	for (let d = 1; d <= path.length; d++) if (path.length > d || stoppedAt) levels.push(level(path.slice(0, d), path[d] ?? null));
	return { path, levels: stoppedAt ? levels : levels.filter((l) => l.node.length < path.length || l.chosen !== null) };
};

describe('treeConfusions', () => {
	it('counts each node: right child, wrong child, none of these, stopped above, and spectra from elsewhere', () => {
		const results = [
			{ ...walk(['diluted', 'starch']), expected: 'diluted/starch' },
			{ ...walk(['diluted', 'talc']), expected: 'diluted/starch' },
			{ path: ['diluted'], levels: [level([], 'diluted'), level(['diluted'], null)], expected: 'diluted/talc' },
			{ path: [], levels: [level([], null)], expected: 'diluted/talc' },
			{ ...walk(['diluted', 'talc']), expected: 'substituted' },
			{ ...walk(['genuine', 'site-b']), expected: 'genuine/site-b' },
			{ path: [], levels: [level([], null)], expected: null }
		];
		const v = treeConfusions(artefact, results);
		const diluted = v.nodes.find((n) => n.node.join('/') === 'diluted')!;
		expect(diluted.rows).toEqual(['starch', 'talc', 'from elsewhere']);
		expect(diluted.columns).toEqual(['starch', 'talc', 'none of these', 'stopped above']);
		expect(diluted.counts).toEqual([
			[1, 1, 0, 0],
			[0, 0, 1, 1],
			[0, 1, 0, 0]
		]);
		expect([diluted.correct, diluted.expected]).toEqual([1, 4]);
		const root = v.nodes.find((n) => n.node.length === 0)!;
		expect(root.rows).toEqual([...artefact.classes, 'from elsewhere']);
		// root: every spectrum reaches it; the alien row holds the one of no class
		expect(root.counts[root.rows.indexOf('from elsewhere')]).toEqual([0, 0, 0, 1, 0]);
		const rc = (r: string, c: string) => root.counts[root.rows.indexOf(r)][root.columns.indexOf(c)];
		expect([rc('diluted', 'diluted'), rc('diluted', 'none of these'), rc('substituted', 'diluted'), rc('genuine', 'genuine')]).toEqual([3, 1, 1, 1]);
		expect(v.path.columns).toEqual(['genuine/site-a', 'genuine/site-b', 'diluted/starch', 'diluted/talc', 'substituted', 'partial path', 'no class']);
		const row = (r: string) => v.path.counts[v.path.rows.indexOf(r)];
		const col = (c: string) => v.path.columns.indexOf(c);
		expect(row('diluted/talc')[col('partial path')]).toBe(1);
		expect(row('diluted/talc')[col('no class')]).toBe(1);
		expect(row('substituted')[col('diluted/talc')]).toBe(1);
		expect(row('alien')[col('no class')]).toBe(1);
	});

	it('on the screened test set every expected spectrum is counted once per node on its way', () => {
		const results = tests.map((t) => ({ ...screen(artefact, t), expected: t.expected }));
		const v = treeConfusions(artefact, results);
		const root = v.nodes.find((n) => n.node.length === 0)!;
		expect(root.counts.flat().reduce((a, b) => a + b, 0)).toBe(tests.length);
		const diluted = v.nodes.find((n) => n.node.join('/') === 'diluted')!;
		expect(diluted.expected).toBe(tests.filter((t) => t.expected?.startsWith('diluted/')).length);
		expect(v.path.counts.flat().reduce((a, b) => a + b, 0)).toBe(tests.length);
	});
});

describe('compareDiscriminants', () => {
	const cmp = compareDiscriminants(artefact, training, tests)!;
	it('classifies every test spectrum with both classifiers; aliens land in some class (a closed set has no "none")', () => {
		expect(cmp.level1).toEqual(artefact.classes);
		for (const c of cmp.classifiers) {
			expect(c.columns).toEqual(artefact.classes);
			expect(c.counts.flat().reduce((a, b) => a + b, 0) + c.unusable).toBe(tests.length);
			const alienRow = c.counts[c.rows.indexOf('alien')];
			expect(alienRow.reduce((a, b) => a + b, 0)).toBe(tests.filter((t) => t.expected === null).length);
			expect(c.aliensCalledGenuine).toBe(alienRow[artefact.classes.indexOf('genuine')]);
			expect(c.candidates.length).toBe(c.cvError.length);
			expect(c.candidates).toContain(c.chosen);
		}
		expect(cmp.classifiers[1].candidates.every((k) => k % 2 === 1)).toBe(true);
	});
	it('the one-class tree says "not this material" to the other material (MCC) instead of naming a class', () => {
		expect(cmp.oneClass.aliens).toBe(tests.filter((t) => t.expected === null).length);
		expect(cmp.oneClass.aliensCalledGenuine).toBe(0);
		expect(cmp.oneClass.known).toBe(tests.length - cmp.oneClass.aliens);
	});
	it('needs at least two classes', () => {
		const one = buildModel(training.filter((r) => r.className.startsWith('genuine/')).map((r) => ({ ...r, className: 'genuine' })), { recipe: 'snv, center', components: 2, familyComponents: 2 });
		expect(compareDiscriminants(one, [], [])).toBeNull();
	});
});
