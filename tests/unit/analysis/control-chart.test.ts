import { describe, expect, test } from 'vitest';
import { AnalysisError, ewma, individualsLimits, westernElectric } from '../../../src/lib/analysis';

// Montgomery, Introduction to Statistical Quality Control, 6th ed. (Wiley 2009), Example 6.5 / Table 6.6: cost of
// processing mortgage loans, 20 weekly individual values. Data and published results from memory: x̄ = 300.5,
// MR̄ = 7.79, UCL = 321.22, LCL = 279.78, moving-range UCL = 25.45. The recalled data reproduce every recalled
// result, which is what the hand computation below checks (Σx = 6010, Σ|MR| = 148 over 19 ranges).
const LOAN_COST = [310, 288, 297, 298, 307, 303, 294, 297, 308, 306, 294, 299, 297, 299, 314, 295, 293, 306, 301, 304];

describe('individuals chart (Montgomery Example 6.5, from memory)', () => {
	const lim = individualsLimits(LOAN_COST);
	test('centre, MR̄ and σ̂ = MR̄/d₂ with d₂ = 1.128', () => {
		expect(lim.centre).toBeCloseTo(6010 / 20, 10); // 300.5
		expect(lim.mrBar).toBeCloseTo(148 / 19, 10); // 7.789…
		expect(lim.mrBar).toBeCloseTo(7.79, 2);
		expect(lim.sigma).toBeCloseTo(148 / 19 / 1.128, 10);
	});
	test('published limits 279.78 and 321.22; MR chart UCL 25.45', () => {
		expect(lim.ucl).toBeCloseTo(321.22, 2);
		expect(lim.lcl).toBeCloseTo(279.78, 2);
		expect(lim.mrUcl).toBeCloseTo(25.45, 2);
	});
	test('every week of the example is inside the limits (Montgomery: "no evidence of a lack of statistical control")', () => {
		for (let i = 0; i < LOAN_COST.length; i++) expect(westernElectric(LOAN_COST.slice(0, i + 1), lim).filter((h) => h.rule === 1)).toEqual([]);
	});
	test('inputs are checked', () => {
		expect(() => individualsLimits([1])).toThrow(AnalysisError);
		expect(() => individualsLimits([1, Number.NaN])).toThrow(/not a finite/);
	});
});

// Western Electric Handbook (1956) rules as quoted in Montgomery & Runger, Applied Statistics and Probability for
// Engineers, 3rd ed. (2003) §16-3 p. 606. Hand-made sequences in σ units around centre 0, σ = 1: each sequence is
// built to complete exactly one pattern on its last point.
describe('Western Electric rules 1–4 (hand-made sequences, centre 0, σ = 1)', () => {
	const L = { centre: 0, sigma: 1 };
	const rules = (xs: number[]) => westernElectric(xs, L).map((h) => h.rule);
	test('rule 1: a point beyond 3σ, either side', () => {
		expect(rules([0.2, 3.2])).toEqual([1]);
		expect(rules([0.2, -3.1])).toEqual([1]);
		expect(rules([0.2, 2.99])).toEqual([]);
	});
	test('rule 2: two of three beyond the same 2σ limit; opposite sides do not count', () => {
		expect(rules([2.5, -0.3, 2.1])).toEqual([2]);
		expect(rules([-2.5, 0.3, 2.1])).toEqual([]);
		expect(rules([2.5, 0.1, 0.2, 2.1])).toEqual([]); // the first is four back: not within three
	});
	test('rule 3: four of five beyond the same 1σ line', () => {
		expect(rules([1.2, 1.5, 0.3, 1.1, 1.4])).toEqual([3]);
		expect(rules([1.2, 1.5, 0.3, 0.9, 1.4])).toEqual([]);
	});
	test('rule 4: eight in a row on one side', () => {
		expect(rules([0.1, 0.5, 0.2, 0.9, 0.3, 0.1, 0.4, 0.6])).toEqual([4]);
		expect(rules([0.1, 0.5, 0.2, 0.9, -0.3, 0.1, 0.4, 0.6])).toEqual([]);
		expect(rules([0.1, 0.5, 0.2, 0.9, 0.3, 0.1, 0.4])).toEqual([]);
	});
	test('several rules on one point are all reported, lowest first', () => {
		expect(rules([0.5, 1.5, 1.5, 0.5, 1.5, 1.5, 2.5, 3.5])).toEqual([1, 2, 3, 4]);
	});
	test('a point on the judged side completes a rule only if it takes part in the pattern', () => {
		expect(rules([2.5, 2.5, 0.5])).toEqual([]);
	});
});

// Montgomery, Introduction to Statistical Quality Control, 6th ed., Example 9.2 (from memory): EWMA with λ = 0.10,
// L = 2.7, μ₀ = 10, σ = 1 on the 30 observations of Table 9.1. By hand: z₁ = 0.1·9.45 + 0.9·10 = 9.945,
// z₂ = 0.1·7.99 + 0.9·9.945 = 9.7495; UCL₁ = 10 + 2.7·√(0.1/1.9·(1 − 0.81)) = 10.27, UCL₂ = 10.3632,
// steady state 10 + 2.7·√(0.1/1.9) = 10.6194. The chart first signals at observation 29 (z₂₉ ≈ 10.647 > 10.619).
const TABLE_9_1 = [9.45, 7.99, 9.29, 11.66, 12.16, 10.18, 8.04, 11.46, 9.2, 10.34, 9.03, 11.47, 10.51, 9.4, 10.08, 9.37, 10.62, 10.31, 8.52, 10.84, 10.9, 9.33, 12.29, 11.5, 10.6, 11.08, 10.38, 11.62, 11.31, 10.52];
describe('EWMA (Montgomery Example 9.2, from memory; Lucas & Saccucci 1990 design)', () => {
	const pts = ewma(TABLE_9_1, { mu0: 10, sigma: 1 }, { lambda: 0.1, L: 2.7 });
	test('first statistics and time-varying limits by hand', () => {
		expect(pts[0].z).toBeCloseTo(9.945, 10);
		expect(pts[1].z).toBeCloseTo(9.7495, 10);
		expect(pts[0].ucl).toBeCloseTo(10 + 2.7 * Math.sqrt((0.1 / 1.9) * 0.19), 10);
		expect(pts[0].ucl).toBeCloseTo(10.27, 2);
		expect(pts[29].ucl).toBeCloseTo(10 + 2.7 * Math.sqrt((0.1 / 1.9) * (1 - 0.9 ** 60)), 10);
		expect(pts[29].ucl).toBeCloseTo(10.619, 2);
	});
	test('the first signal is observation 29', () => {
		expect(pts.findIndex((p) => p.signal) + 1).toBe(29);
		expect(pts[28].z).toBeCloseTo(10.6468, 3);
	});
	test('inputs are checked', () => {
		expect(() => ewma([1], { mu0: 0, sigma: 1 }, { lambda: 0 })).toThrow(AnalysisError);
		expect(() => ewma([1, Number.POSITIVE_INFINITY], { mu0: 0, sigma: 1 })).toThrow(/finite/);
	});
});
