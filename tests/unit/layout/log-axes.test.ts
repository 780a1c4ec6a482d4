// Log axes: the decade arithmetic is the definition of log10 (10^k); the expected strings are how decades are written
// in plain decimal notation. The overlap rule is checked on label boxes worked out by hand.
import { describe, expect, it } from 'vitest';
import { decadeTicks, decadesSpanned, formatDecade, isDecade, keepApart, preferLogAxes } from '../../../src/lib/layout/log-axes';

describe('when to use log axes', () => {
	it('counts decades between the smallest and largest positive value, ignoring zero, negatives and non-finite values', () => {
		expect(decadesSpanned([0.05, 1, 5])).toBeCloseTo(2, 12); // log10(5 / 0.05) = log10(100) = 2
		expect(decadesSpanned([0, -3, 0.2, Number.NaN, 2000, Number.POSITIVE_INFINITY])).toBeCloseTo(4, 12);
		expect(decadesSpanned([3])).toBe(0);
		expect(decadesSpanned([])).toBe(0);
	});
	it('prefers log axes above two decades, not at exactly two', () => {
		expect(preferLogAxes([0.05, 5])).toBe(false); // exactly 2 decades
		expect(preferLogAxes([0.05, 5.1])).toBe(true);
		expect(preferLogAxes([0.9, 1.1, 466])).toBe(true);
		expect(preferLogAxes([0.2, 0.5, 3])).toBe(false);
	});
	it('names bad input', () => {
		expect(() => decadesSpanned('x' as unknown as number[])).toThrow(/array/);
		expect(() => decadesSpanned(['1' as unknown as number])).toThrow(/numbers/);
		expect(() => preferLogAxes([1], -1)).toThrow(/threshold/);
	});
});

describe('decade ticks', () => {
	it('brackets the range with whole decades', () => {
		expect(decadeTicks(0.03, 466)).toEqual([0.01, 0.1, 1, 10, 100, 1000]);
		expect(decadeTicks(1, 100)).toEqual([1, 10, 100]);
		expect(decadeTicks(2, 3)).toEqual([1, 10]);
	});
	it('writes them as 0.1, 1, 10, 100 (no exponent, no float noise)', () => {
		expect(decadeTicks(1e-4, 1e5).map(formatDecade)).toEqual(['0.0001', '0.001', '0.01', '0.1', '1', '10', '100', '1000', '10000', '100000']);
		expect(formatDecade(1e-7)).toBe('1e-7');
		expect(formatDecade(1e9)).toBe('1e+9');
		expect(formatDecade(0.1 * 3 * (1 / 3))).toBe('0.1'); // 0.10000000000000002 is still the decade 0.1
	});
	it('tells decades from other ticks', () => {
		expect([0.1, 1, 10, 100, 2, 50, 0, -10].map(isDecade)).toEqual([true, true, true, true, false, false, false, false]);
	});
	it('names bad input', () => {
		expect(() => decadeTicks(0, 10)).toThrow(/positive/);
		expect(() => decadeTicks(10, 1)).toThrow(/min must not exceed max/);
		expect(() => formatDecade(20)).toThrow(/not a whole decade/);
	});
});

describe('labels kept apart', () => {
	it('drops a label that would touch the one before it', () => {
		// centres 0, 10, 30, 34 with 8-wide labels: [−4,4] [6,14] [26,34] [30,38]; gap 2 → the last overlaps the third.
		expect(keepApart([0, 10, 30, 34], [8, 8, 8, 8], 2)).toEqual([true, true, true, false]);
		// with gap 3 the second starts only 2 after the first ends
		expect(keepApart([0, 10, 30, 34], [8, 8, 8, 8], 3)).toEqual([true, false, true, false]);
	});
	it('works in any input order (a y axis lists top to bottom)', () => {
		expect(keepApart([34, 30, 10, 0], [8, 8, 8, 8], 2)).toEqual([false, true, true, true]);
	});
	it('names bad input', () => {
		expect(() => keepApart([1, 2], [1])).toThrow(/one size per label/);
		expect(() => keepApart([1], [Number.NaN])).toThrow(/finite/);
	});
});
