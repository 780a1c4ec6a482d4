// SNV, MSC, detrend and Savitzky–Golay on the open gasoline NIR data (Kalivas 1997), against values computed outside
// this code base by NumPy and SciPy: tests/unit/analysis/reference/preprocess_numpy.py wrote preprocess_numpy.json
// (the generator and its versions are recorded in the JSON). The suite reads the JSON only.
import { readFileSync } from 'node:fs';
import { describe, expect, test } from 'vitest';
import { snv } from '../../../src/lib/analysis/preprocess/snv';
import { msc, mscReference } from '../../../src/lib/analysis/preprocess/msc';
import { detrend, detrendBasis } from '../../../src/lib/analysis/preprocess/detrend';
import { savgol, savgolPlan } from '../../../src/lib/analysis/preprocess/savgol';
import { gasoline, root } from './fixtures';

interface Reference {
	generator: string;
	points: number[];
	spectra: number[];
	snv: Record<string, number[]>;
	msc: Record<string, number[]>;
	detrend2: Record<string, number[]>;
	savgol: Record<string, Record<string, number[]>>;
}
const ref: Reference = JSON.parse(readFileSync(`${root}/tests/unit/analysis/reference/preprocess_numpy.json`, 'utf8'));
const g = gasoline();
const X = g.X.map((x) => Float64Array.from(x));

function expectClose(ours: Float64Array, expected: number[], tol: number) {
	ref.points.forEach((j, k) => {
		const scale = Math.max(1, Math.abs(expected[k]));
		expect(Math.abs(ours[j] - expected[k]) / scale, `point ${j}: ${ours[j]} vs ${expected[k]}`).toBeLessThan(tol);
	});
}

describe(`preprocessing against NumPy/SciPy (${ref.generator})`, () => {
	test('SNV equals (x − mean)/std(ddof=1) from NumPy', () => {
		for (const i of ref.spectra) expectClose(snv(X[i]), ref.snv[i], 1e-12);
	});
	test('MSC against the mean spectrum equals the numpy.polyfit correction', () => {
		const m = mscReference(X);
		for (const i of ref.spectra) expectClose(msc(X[i], m), ref.msc[i], 1e-9);
	});
	test('detrend(2) equals x minus its least-squares quadratic (numpy Polynomial.fit)', () => {
		const basis = detrendBasis(g.axis, 2);
		for (const i of ref.spectra) expectClose(detrend(X[i], basis), ref.detrend2[i], 1e-9);
	});
	for (const key of Object.keys(ref.savgol)) {
		const [window, polyorder, deriv] = key.split(',').map(Number);
		test(`Savitzky–Golay window ${window}, order ${polyorder}, derivative ${deriv}: interior and edges equal scipy savgol_filter(mode='interp')`, () => {
			const plan = savgolPlan({ window, polyorder, deriv }, g.axis);
			for (const i of ref.spectra) expectClose(savgol(X[i], plan), ref.savgol[key][i], deriv === 0 ? 1e-9 : 1e-11);
		});
	}
});
