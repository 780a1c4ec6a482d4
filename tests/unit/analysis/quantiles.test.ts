import { describe, expect, test } from 'vitest';
import { betaInv, chi2Inv, fInv, normalInv, sampleQuantile } from '../../../src/lib/analysis/quantiles';

// Printed critical values: NIST/SEMATECH e-Handbook of Statistical Methods, §1.3.6.7 (tables of the
// normal, chi-square and F distributions), 3-4 printed digits. Values marked "from memory" were
// recalled from those tables rather than read at test-writing time.
describe('distribution quantiles (jstat) against printed tables', () => {
	test.each([
		[0.95, 1.645],
		[0.975, 1.96],
		[0.99, 2.326],
		[0.995, 2.576]
	])('normal z_%s = %s (NIST §1.3.6.7.1, from memory)', (p, z) => {
		expect(normalInv(p)).toBeCloseTo(z, 3);
	});

	test.each([
		[0.95, 1, 3.841],
		[0.95, 2, 5.991],
		[0.95, 3, 7.815], // also [chk] in docs/methods.md §7.1
		[0.95, 10, 18.307],
		[0.99, 1, 6.635],
		[0.99, 5, 15.086],
		[0.05, 10, 3.94]
	])('chi-square χ²_%s(%s) = %s (NIST §1.3.6.7.4, from memory)', (p, df, x) => {
		expect(chi2Inv(p, df)).toBeCloseTo(x, 2);
	});

	test.each([
		[1, 10, 4.965],
		[3, 27, 2.96],
		[5, 10, 3.326],
		[10, 10, 2.978],
		[2, 20, 3.493]
	])('F_0.95(%s, %s) = %s (NIST §1.3.6.7.3 upper 5 % table, from memory)', (d1, d2, x) => {
		expect(fInv(0.95, d1, d2)).toBeCloseTo(x, 2);
	});

	test('Beta quantiles against the closed forms B_p(1, b) = 1 − (1 − p)^{1/b} and B_p(a, 1) = p^{1/a}', () => {
		for (const [p, b] of [
			[0.95, 3],
			[0.5, 10],
			[0.025, 7]
		])
			expect(betaInv(p, 1, b)).toBeCloseTo(1 - (1 - p) ** (1 / b), 8);
		for (const [p, a] of [
			[0.95, 2.5],
			[0.1, 4]
		])
			expect(betaInv(p, a, 1)).toBeCloseTo(p ** (1 / a), 8);
	});

	test('sample quantile is R type 7 (Hyndman & Fan 1996 definition 7): 1..10 → Q1 = 3.25', () => {
		expect(sampleQuantile([1, 2, 3, 4, 5, 6, 7, 8, 9, 10], 0.25)).toBeCloseTo(3.25, 12);
		expect(sampleQuantile([5, 1, 3], 0.5)).toBe(3);
	});

	// numpy 2.4.6, numpy.percentile(a, 100 * p) with its default method 'linear' (R type 7), computed here:
	// a = [0.12, 0.35, 0.07, 0.51, 0.22, 0.68, 0.44, 0.31, 0.72, 0.19, 0.95, 0.27]
	test.each([
		[0.05, 0.0975],
		[0.25, 0.2125],
		[0.5, 0.33],
		[0.75, 0.5525],
		[0.95, 0.8235],
		[0.99, 0.9247]
	])('sample quantile p = %s agrees with numpy.percentile to 1e-12 (top order statistics too)', (p, expected) => {
		const a = [0.12, 0.35, 0.07, 0.51, 0.22, 0.68, 0.44, 0.31, 0.72, 0.19, 0.95, 0.27];
		expect(sampleQuantile(a, p)).toBeCloseTo(expected, 12);
	});

	test('median of two values is their mean (numpy.percentile([3, 7], 50) = 5.0)', () => {
		expect(sampleQuantile([3, 7], 0.5)).toBe(5);
		expect(sampleQuantile([4], 0.9)).toBe(4);
		expect(() => sampleQuantile([], 0.5)).toThrow(/at least one/);
	});

	test('probabilities outside (0, 1) are refused', () => {
		expect(() => chi2Inv(1, 3)).toThrow(/probability/);
	});
});
