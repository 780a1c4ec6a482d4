import { describe, expect, test } from 'vitest';
import savitzkyGolayImport from 'ml-savitzky-golay';
import { snv } from '../../../src/lib/analysis/preprocess/snv';
import { msc, mscReference } from '../../../src/lib/analysis/preprocess/msc';
import { detrend, detrendBasis } from '../../../src/lib/analysis/preprocess/detrend';
import { savgol, savgolPlan, savgolWeights } from '../../../src/lib/analysis/preprocess/savgol';
import { formatRecipe, parseRecipe } from '../../../src/lib/analysis/preprocess/recipe';
import { fitScaling } from '../../../src/lib/analysis/preprocess/scaling';

const sgLib = (typeof savitzkyGolayImport === 'function' ? savitzkyGolayImport : (savitzkyGolayImport as unknown as { default: typeof savitzkyGolayImport }).default);

describe('SNV by definition (Barnes, Dhanoa & Lister 1989)', () => {
	test('[1,2,3,4,5]: mean 3, s = √2.5 (p − 1) → (x − 3)/√2.5', () => {
		const out = snv(Float64Array.from([1, 2, 3, 4, 5]));
		[1, 2, 3, 4, 5].forEach((x, j) => expect(out[j]).toBeCloseTo((x - 3) / Math.sqrt(2.5), 14));
	});
	test('a flat spectrum is refused', () => {
		expect(() => snv(Float64Array.from([2, 2, 2]))).toThrow(/flat/);
	});
});

describe('MSC by definition (Geladi, MacDougall & Martens 1985)', () => {
	test('x = a + b·m is mapped back to m exactly; the reference is the training mean', () => {
		const m = Float64Array.from([1, 3, 2, 5, 4]);
		const x = Float64Array.from(m, (v) => 0.7 + 2.5 * v);
		const out = msc(x, m);
		m.forEach((v, j) => expect(out[j]).toBeCloseTo(v, 13));
		expect(Array.from(mscReference([Float64Array.from([1, 2]), Float64Array.from([3, 6])]))).toEqual([2, 4]);
	});
	test('hand example: m = [1,2,3], x = [3,5,8] → b = 2.5, a = 0.333…, corrected (x − a)/b', () => {
		const out = msc(Float64Array.from([3, 5, 8]), [1, 2, 3]);
		const b = 2.5;
		const a = 16 / 3 - 2.5 * 2;
		[3, 5, 8].forEach((x, j) => expect(out[j]).toBeCloseTo((x - a) / b, 13));
	});
});

describe('detrend (Barnes et al. 1989): subtracts the least-squares polynomial', () => {
	test('removes a quadratic exactly and leaves a residual orthogonal to 1, x, x²', () => {
		const axis = Array.from({ length: 50 }, (_, i) => 1000 + 4 * i);
		const wiggle = axis.map((x) => Math.sin(x / 7));
		const y = Float64Array.from(axis, (x, i) => 3 - 0.01 * x + 2e-5 * x * x + wiggle[i]);
		const basis = detrendBasis(axis, 2);
		const r1 = detrend(y, basis);
		const r2 = detrend(Float64Array.from(wiggle), basis);
		r1.forEach((v, j) => expect(v).toBeCloseTo(r2[j], 9));
	});
});

// Savitzky & Golay 1964 with the Steinier, Termonia & Deltour 1972 corrections; values as tabulated in
// docs/methods.md §4 [chk].
const TABLE: [string, number, number, number, number[], number][] = [
	['5-point quadratic smooth', 5, 2, 0, [-3, 12, 17, 12, -3], 35],
	['7-point quadratic smooth', 7, 2, 0, [-2, 3, 6, 7, 6, 3, -2], 21],
	['9-point quadratic smooth', 9, 2, 0, [-21, 14, 39, 54, 59, 54, 39, 14, -21], 231],
	['5-point first derivative', 5, 2, 1, [-2, -1, 0, 1, 2], 10],
	['7-point first derivative', 7, 2, 1, [-3, -2, -1, 0, 1, 2, 3], 28],
	['5-point second derivative', 5, 2, 2, [2, -1, -2, -1, 2], 7]
];

describe('Savitzky–Golay coefficients against the published table', () => {
	test.each(TABLE)('ml-savitzky-golay interior: %s', (_n, w, poly, d, coef, norm) => {
		// impulse responses of the library's filter give its convolution weights (Δx = 1)
		for (let r = 0; r < w; r++) {
			const data = new Array(w).fill(0);
			data[r] = 1;
			const out = sgLib(data, 1, { windowSize: w, polynomial: poly, derivative: d, pad: 'none' });
			expect(out.length).toBe(1);
			expect(out[0]).toBeCloseTo(coef[r] / norm, 12);
		}
	});
	test.each(TABLE)('own least-squares weights: %s', (_n, w, poly, d, coef, norm) => {
		const wts = savgolWeights(w, poly, d, 0);
		wts.forEach((v, r) => expect(v).toBeCloseTo(coef[r] / norm, 12));
	});
	test('derivatives are divided by Δx^deriv (table note "divide by Δx")', () => {
		const axis = Array.from({ length: 30 }, (_, i) => 1000 + 2 * i);
		const y = Float64Array.from(axis, (x) => 0.3 * x);
		const d1 = savgol(y, savgolPlan({ window: 7, polyorder: 2, deriv: 1 }, axis));
		d1.forEach((v) => expect(v).toBeCloseTo(0.3, 10));
	});
	test('edges: a polynomial of the filter order is reproduced exactly everywhere (least-squares fit of the end windows)', () => {
		const axis = Array.from({ length: 25 }, (_, i) => i);
		const y = Float64Array.from(axis, (x) => 1 + 0.5 * x - 0.03 * x * x);
		const s = savgol(y, savgolPlan({ window: 9, polyorder: 2, deriv: 0 }, axis));
		s.forEach((v, j) => expect(v).toBeCloseTo(y[j], 10));
		const d2 = savgol(y, savgolPlan({ window: 9, polyorder: 2, deriv: 2 }, axis));
		d2.forEach((v) => expect(v).toBeCloseTo(-0.06, 10));
	});
});

describe('recipe text syntax', () => {
	test('parses and formats canonically', () => {
		const steps = parseRecipe(' gaps(3), SNV , savgol(11,2,1),detrend, center ');
		expect(steps).toEqual([
			{ op: 'gaps', maxGap: 3 },
			{ op: 'snv' },
			{ op: 'savgol', window: 11, polyorder: 2, deriv: 1 },
			{ op: 'detrend', order: 2 },
			{ op: 'center' }
		]);
		expect(formatRecipe(steps)).toBe('gaps(3),snv,savgol(11,2,1),detrend(2),center');
		expect(parseRecipe(formatRecipe(steps))).toEqual(steps);
		expect(parseRecipe('savgol(15)')).toEqual([{ op: 'savgol', window: 15, polyorder: 2, deriv: 0 }]);
		expect(formatRecipe(parseRecipe('none'))).toBe('none');
	});
	test.each([
		['snv,center,msc', /out of order/],
		['center,autoscale', /out of order|more than one/],
		['savgol(4,2,0)', /odd integer/],
		['savgol(11,2,3)', /derivative/],
		['blur', /unknown step "blur"/],
		['snv(2)', /takes 0 arguments/],
		['snv,range(1000,1600)', /out of order/],
		['savgol(11,2', /unbalanced/]
	])('refuses "%s"', (text, msg) => {
		expect(() => parseRecipe(text)).toThrow(msg);
	});
});

describe('column scaling', () => {
	test('autoscale uses the n − 1 standard deviation; a constant column is divided by the floor 0.1 × median s.d.', () => {
		// column 1: 1, 3, 5 → s = 2 (hand-computed); column 2 constant → floor 0.1 × 2 = 0.2
		const s = fitScaling([Float64Array.from([1, 5]), Float64Array.from([3, 5]), Float64Array.from([5, 5])], 'autoscale');
		expect(Array.from(s.mean)).toEqual([3, 5]);
		expect(Array.from(s.scale)).toEqual([2, 0.2]);
	});
	test('when no column varies, the scale stays 1', () => {
		const s = fitScaling([Float64Array.from([1, 5]), Float64Array.from([1, 5])], 'autoscale');
		expect(Array.from(s.scale)).toEqual([1, 1]);
	});
});
