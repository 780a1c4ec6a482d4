// Several `range` windows in one recipe (issue 12 §3). The model axis keeps the points inside any window; every row
// step sees only those points; Savitzky–Golay runs within each window and never across the gap between two windows.
// Outside reference: SciPy's savgol_filter(mode='interp') on the open gasoline NIR spectra (Kalivas 1997), stored in
// reference/preprocess_numpy.json by reference/preprocess_numpy.py. Two windows are made of two copies of the gasoline
// axis, the second shifted by 5000 nm, holding two different spectra: each half must equal SciPy's result for its own
// spectrum, which a filter spanning the gap would not give at the window edges.
import { readFileSync } from 'node:fs';
import { describe, expect, test } from 'vitest';
import { buildModel, parseRecipe, formatRecipe, screen } from '../../../src/lib/analysis';
import { rangesOf, rowPipeline, segmentsOf } from '../../../src/lib/analysis/preprocess/recipe';
import { gasoline, gasolineTraining, root } from './fixtures';

const ref: { points: number[]; spectra: number[]; savgol: Record<string, Record<string, number[]>> } = JSON.parse(readFileSync(`${root}/tests/unit/analysis/reference/preprocess_numpy.json`, 'utf8'));
const g = gasoline();

describe('recipe text with several windows', () => {
	test('parses, keeps every window, and writes the same text back; windows are ordered by their start', () => {
		const steps = parseRecipe('range(1400,1700), range(900,1300), snv, savgol(11,2,1), center');
		expect(formatRecipe(steps)).toBe('range(1400,1700),range(900,1300),snv,savgol(11,2,1),center');
		expect(parseRecipe(formatRecipe(steps))).toEqual(steps);
		expect(rangesOf(steps)).toEqual([
			{ from: 900, to: 1300 },
			{ from: 1400, to: 1700 }
		]);
	});
	test.each([
		['range(900,1300),range(1250,1700),snv', /windows range\(900,1300\) and range\(1250,1700\) overlap/],
		['range(900,1300),range(1300,1700),snv', /overlap/],
		['range(900,1300),snv,range(1400,1700)', /out of order/],
		['gaps(2),gaps(3)', /"gaps" twice/]
	])('refuses "%s"', (text, message) => {
		expect(() => parseRecipe(text)).toThrow(message);
	});
	test('segments: one run per window in axis order; without windows, or with one, the whole axis', () => {
		const x = [1, 2, 3, 10, 11, 12, 13];
		expect(segmentsOf([], x)).toEqual([[0, 7]]);
		expect(segmentsOf([{ from: 1, to: 13 }], x)).toEqual([[0, 7]]);
		expect(segmentsOf([{ from: 1, to: 3 }, { from: 10, to: 13 }], x)).toEqual([
			[0, 3],
			[3, 7]
		]);
	});
});

describe('Savitzky–Golay never spans the gap between two windows (against SciPy savgol_filter, mode interp)', () => {
	const shift = 5000;
	const axis2 = [...g.axis, ...g.axis.map((v) => v + shift)];
	const windows = [
		{ from: g.axis[0], to: g.axis[g.axis.length - 1] },
		{ from: g.axis[0] + shift, to: g.axis[g.axis.length - 1] + shift }
	];
	const p = g.axis.length;
	const [i, j] = ref.spectra;
	const joined = Float64Array.from([...g.X[i], ...g.X[j]]);
	for (const key of Object.keys(ref.savgol)) {
		const [window, polyorder, deriv] = key.split(',').map(Number);
		test(`savgol(${key}): each window equals SciPy on its own spectrum; one filter over both would not`, () => {
			const step = { op: 'savgol' as const, window, polyorder, deriv };
			const out = rowPipeline([step], [{ op: 'savgol' }], axis2, windows).apply(joined);
			const tol = deriv === 0 ? 1e-9 : 1e-11;
			ref.points.forEach((pt, k) => {
				const a = ref.savgol[key][i][k];
				const b = ref.savgol[key][j][k];
				expect(Math.abs(out[pt] - a) / Math.max(1, Math.abs(a)), `window 1, point ${pt}`).toBeLessThan(tol);
				expect(Math.abs(out[p + pt] - b) / Math.max(1, Math.abs(b)), `window 2, point ${pt}`).toBeLessThan(tol);
			});
			// the same filter across the gap (the axis as one run) changes the last point of window 1
			const spanning = rowPipeline([step], [{ op: 'savgol' }], axis2, []).apply(joined);
			const last = ref.points.indexOf(p - 1);
			expect(last, 'the reference holds the last point').toBeGreaterThanOrEqual(0);
			expect(Math.abs(spanning[p - 1] - ref.savgol[key][i][last])).toBeGreaterThan(1e-6);
		});
	}
	test('a window shorter than the savgol window is refused, naming the window', () => {
		const x = [...g.axis.slice(0, 50), ...g.axis.slice(300, 306)];
		expect(() => rowPipeline([{ op: 'savgol', window: 11, polyorder: 2, deriv: 1 }], [{ op: 'savgol' }], x, [{ from: x[0], to: x[49] }, { from: x[50], to: x[55] }])).toThrow(
			/savgol window 11 is longer than the 6-point window 1500–1510 of the model axis/
		);
	});
});

describe('a model built on two windows', () => {
	const recipe = 'range(900,1300),range(1400,1700),snv,savgol(11,2,1),center';
	const a = buildModel(gasolineTraining(), { recipe, familyComponents: 3, folds: 5 });
	test('its axis holds only the points inside the windows, and it records the recipe with both', () => {
		const inside = g.axis.filter((v) => (v >= 900 && v <= 1300) || (v >= 1400 && v <= 1700));
		expect(a.axis.x).toEqual(inside);
		expect(a.axis.step).toBeNull();
		expect(a.axis.x.some((v) => v > 1300 && v < 1400)).toBe(false);
		expect(a.recipe).toBe(recipe);
	});
	test('screening a training spectrum applies the same windows and gives its own training distances', () => {
		const k = 3;
		const r = screen(a, { id: 'again', axis: g.axis, values: g.X[k], unit: 'nm' });
		const idx = a.family.training.ids.indexOf(g.ids[k]);
		expect(r.family!.h).toBeCloseTo(a.family.training.fitted.h[idx], 9);
		expect(r.family!.v).toBeCloseTo(a.family.training.fitted.v[idx], 9);
	});
	test('a spectrum that changes only in the gap between windows screens exactly as before', () => {
		const moved = g.X[5].map((v, n) => (g.axis[n] > 1310 && g.axis[n] < 1390 ? v + 1 : v));
		const before = screen(a, { id: 'before', axis: g.axis, values: g.X[5], unit: 'nm' });
		const after = screen(a, { id: 'after', axis: g.axis, values: moved, unit: 'nm' });
		expect(after.family!.c).toBe(before.family!.c);
	});
});
