import { describe, expect, test } from 'vitest';
import { buildModel, clopperPearson, evaluate, mcc } from '../../../src/lib/analysis';
import { iris } from './fixtures';

describe('Clopper–Pearson intervals (Clopper & Pearson 1934) via jstat Beta quantiles', () => {
	test('x = 0 and x = n have closed forms: upper = 1 − (α/2)^{1/n}, lower = (α/2)^{1/n}', () => {
		expect(clopperPearson(0, 10).upper).toBeCloseTo(1 - 0.025 ** (1 / 10), 8);
		expect(clopperPearson(0, 10).lower).toBe(0);
		expect(clopperPearson(20, 20).lower).toBeCloseTo(0.025 ** (1 / 20), 8);
		expect(clopperPearson(20, 20).upper).toBe(1);
	});
	test('interior: the bounds are where the binomial tails equal α/2 (definition)', () => {
		const { lower, upper } = clopperPearson(7, 20);
		const binom = (k: number, n: number, p: number) => {
			let c = 1;
			for (let i = 0; i < k; i++) c = (c * (n - i)) / (i + 1);
			return c * p ** k * (1 - p) ** (n - k);
		};
		let upperTail = 0;
		for (let k = 7; k <= 20; k++) upperTail += binom(k, 20, lower);
		let lowerTail = 0;
		for (let k = 0; k <= 7; k++) lowerTail += binom(k, 20, upper);
		expect(upperTail).toBeCloseTo(0.025, 8);
		expect(lowerTail).toBeCloseTo(0.025, 8);
	});
});

describe('MCC (Matthews 1975) and efficiency (Oliveri & Downey 2012)', () => {
	test('hand example TP=8, TN=9, FP=1, FN=2 → (72 − 2)/√(9·10·10·11)', () => {
		expect(mcc(8, 9, 1, 2)).toBeCloseTo(70 / Math.sqrt(9 * 10 * 10 * 11), 12);
		expect(mcc(5, 0, 0, 0)).toBe(0);
	});
});

describe('evaluate: K×(K+2) confusion with "several" and "none"', () => {
	test('iris train/test halves (Fisher 1936)', () => {
		const data = iris();
		const train = data.filter((_, i) => i % 2 === 0);
		const test = data.filter((_, i) => i % 2 === 1);
		const a = buildModel(train, { genuine: 'setosa', recipe: 'autoscale', folds: 5 });
		const tests = [...test.map((s) => ({ ...s, expected: s.className as string })), { id: 'alien', axis: [1, 2, 3, 4], values: [20, 1, 20, 1], unit: 'nm' as const, expected: null }];
		const r = evaluate(a, tests);
		expect(r.columns).toEqual(['setosa', 'versicolor', 'virginica', 'several', 'none']);
		expect(r.confusion.length).toBe(3);
		expect(r.confusion.every((row) => row.length === 5)).toBe(true);
		expect(r.confusion.flat().reduce((s, v) => s + v, 0) + r.alienRow.reduce((s, v) => s + v, 0)).toBe(76);
		expect(r.alienRow[4]).toBe(1);
		const setosa = r.perClass[0];
		expect(setosa.tp + setosa.fn).toBe(25);
		expect(setosa.tn + setosa.fp).toBe(51);
		expect(setosa.specificity.estimate).toBe(1);
		expect(setosa.sensitivity.lower).toBeLessThan(setosa.sensitivity.estimate);
		expect(setosa.efficiency).toBeCloseTo(Math.sqrt(setosa.sensitivity.estimate * setosa.specificity.estimate), 12);
		expect(Object.keys(setosa.specificityBy)).toEqual(['alien', 'versicolor', 'virginica']);
	});
});
