import { describe, expect, test } from 'vitest';
import { cvFrrBound, DEFAULT_CRITERIA, evaluateAcceptance, type AcceptanceInput, type ValidationItem } from '../../../src/lib/analysis/acceptance';
import { binomialInv } from '../../../src/lib/analysis/quantiles';
import { buildModel, evaluate } from '../../../src/lib/analysis';
import { iris } from './fixtures';

// Reference values: tests/unit/analysis/reference/acceptance_scipy.py (SciPy 1.17.1), output beside it.

describe('binomial quantile and the CV false-reject bound', () => {
	test.each([
		[60, 0.05, 6],
		[30, 0.05, 4],
		[120, 0.01, 3],
		[90, 0.01, 3],
		[10, 0.05, 2]
	])('Binomial(%i, %f) 95th percentile = %i (scipy.stats.binom.ppf)', (n, a, k) => {
		expect(binomialInv(0.95, n, a)).toBe(k);
	});
	test('bound = max(2α, q95/n): n = 60, α = 0.05 → 0.10; n = 30 → 4/30; n = 120, α = 0.01 → 3/120', () => {
		expect(cvFrrBound(60, 0.05, 2, 0.95)).toBeCloseTo(0.1, 12);
		expect(cvFrrBound(30, 0.05, 2, 0.95)).toBeCloseTo(4 / 30, 12);
		expect(cvFrrBound(120, 0.01, 2, 0.95)).toBeCloseTo(3 / 120, 12);
	});
});

const item = (label: string, role: 'test' | 'challenge', lot: string | null, verdict: string, profile: string | null = null): ValidationItem => ({ label, role, supplierLot: lot, verdict, profile });

function goodInput(): AcceptanceInput {
	const items: ValidationItem[] = [];
	for (let i = 0; i < 12; i++) items.push(item('genuine', 'test', `NEW-${i % 3}`, 'genuine'));
	for (let i = 0; i < 5; i++) items.push(item('diluted', 'test', 'D1', 'suspect', 'diluted'));
	for (let i = 0; i < 5; i++) items.push(item('talc-cut', 'challenge', 'T1', i % 2 ? 'unknown' : 'not-this-material'));
	return { genuine: 'genuine', suspects: ['diluted'], items, trainingLots: ['L1', 'L2'], models: [{ name: 'family', alpha: 0.01, n: 120, cvFalseRejectRate: 3 / 120 }, { name: 'genuine', alpha: 0.05, n: 60, cvFalseRejectRate: 6 / 60 }] };
}

describe('acceptance criteria (issue 12 §1 defaults, common practice)', () => {
	test('a proper validation set meets every criterion; the sensitivity lower bound is Clopper–Pearson (12/12 → 0.7354)', () => {
		const r = evaluateAcceptance(goodInput());
		expect(r.unmet).toEqual([]);
		expect(r.met).toBe(true);
		const sens = r.criteria.find((c) => c.key === 'sensitivity')!;
		expect(sens.interval!.lower).toBeCloseTo(0.7353515306, 9);
		expect(sens.observed).toContain('lower bound 73.5 %');
	});
	test('no test or challenge spectra: every evidence criterion is unmet and listed', () => {
		const r = evaluateAcceptance({ ...goodInput(), items: [] });
		expect(r.met).toBe(false);
		const keys = r.criteria.filter((c) => !c.met).map((c) => c.key);
		expect(keys).toEqual(['genuine-test-set', 'suspect-set:diluted', 'challenge-set', 'specificity', 'sensitivity']);
		expect(r.unmet[0]).toMatch(/^at least 10 test spectra of the genuine class from at least 3 supplier lots not in training: 0 spectra/);
	});
	test('genuine test spectra from training lots do not count; two new lots are not enough', () => {
		const input = goodInput();
		input.items = input.items.map((i) => (i.label === 'genuine' ? { ...i, supplierLot: i.supplierLot === 'NEW-2' ? 'L1' : i.supplierLot } : i));
		const r = evaluateAcceptance(input);
		expect(r.criteria.find((c) => c.key === 'genuine-test-set')).toMatchObject({ met: false, observed: '8 spectra from 2 lots not in training (12 genuine test spectra in all)' });
	});
	test('one suspect spectrum called genuine breaks the 100 % specificity', () => {
		const input = goodInput();
		input.items[12] = { ...input.items[12], verdict: 'genuine', profile: null };
		const r = evaluateAcceptance(input);
		expect(r.criteria.find((c) => c.key === 'specificity')).toMatchObject({ met: false });
		expect(r.unmet.join('\n')).toMatch(/9 of 10 not called genuine = 90.0 %/);
	});
	test('a genuine spectrum called suspect is a miss at verdict level: 10/12 = 83 % < 90 %', () => {
		const input = goodInput();
		input.items[0] = { ...input.items[0], verdict: 'suspect', profile: 'diluted' };
		input.items[1] = { ...input.items[1], verdict: 'unknown' };
		expect(evaluateAcceptance(input).criteria.find((c) => c.key === 'sensitivity')).toMatchObject({ met: false });
		input.items[1] = { ...input.items[1], verdict: 'genuine' };
		// 11/12 = 91.7 %: met, lower bound 0.6152 (scipy beta.ppf(0.025, 11, 2))
		const s = evaluateAcceptance(input).criteria.find((c) => c.key === 'sensitivity')!;
		expect(s.met).toBe(true);
		expect(s.interval!.lower).toBeCloseTo(0.6152038348, 9);
	});
	test('CV false-reject: 7 of 60 at α = 0.05 fails (bound 6/60), the demo genuine class of issue 12', () => {
		const input = goodInput();
		input.models[1] = { name: 'genuine', alpha: 0.05, n: 60, cvFalseRejectRate: 7 / 60 };
		const r = evaluateAcceptance(input);
		expect(r.criteria.find((c) => c.key === 'cv-frr:genuine')).toMatchObject({ met: false, observed: '11.7 % (7 of 60) at α = 0.05', required: '≤ 10.0 %' });
		expect(r.criteria.find((c) => c.key === 'cv-frr:family')!.met).toBe(true);
	});
	test('criteria values are checked', () => {
		expect(() => evaluateAcceptance(goodInput(), { ...DEFAULT_CRITERIA, sensitivityMin: 0.2 })).toThrow(/sensitivityMin must be between 0.5 and 1/);
	});
});

describe('verdict-level metrics beside class-model ones (issue 11 §4), iris (Fisher 1936)', () => {
	test('a versicolor flower called suspect:versicolor is a true positive for versicolor and never one for setosa', () => {
		const data = iris();
		const a = buildModel(data, { genuine: 'setosa', recipe: 'autoscale' });
		const r = evaluate(a, data.map((s) => ({ ...s, expected: s.className ?? null })));
		expect(r.verdictLevel.map((v) => v.className)).toEqual(['setosa', 'versicolor', 'virginica']);
		for (const v of r.verdictLevel) {
			const own = r.results.filter((x) => x.expected === v.className);
			const hits = own.filter((x) => (v.className === 'setosa' ? x.verdict === 'genuine' : x.verdict === 'suspect' && x.profile === v.className)).length;
			expect(v.tp).toBe(hits);
			expect(v.tp + v.fn).toBe(own.length);
			expect(v.tn + v.fp).toBe(data.length - own.length);
		}
		// the class-model level counts a flower accepted by both versicolor and virginica models for both classes;
		// at verdict level it counts for at most one
		const cm = r.perClass.reduce((s, c) => s + c.tp, 0);
		const vl = r.verdictLevel.reduce((s, c) => s + c.tp, 0);
		expect(vl).toBeLessThanOrEqual(cm);
		expect(vl).toBeLessThanOrEqual(data.length);
	});
});
