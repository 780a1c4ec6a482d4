import { describe, expect, test } from 'vitest';
import { crossValidate, foldLayout, suggestComponents } from '../../../src/lib/analysis/crossval';
import { cumulativeLeverage, ekfAccumulate, ekfPressDirect } from '../../../src/lib/analysis/ekf';
import { pca, gramRows } from '../../../src/lib/analysis/pca';
import { centred, gasoline } from './fixtures';

describe('fold layout', () => {
	test('contiguous folds keep neighbours together: 10 objects, 3 folds', () => {
		expect(Array.from(foldLayout(10, 3).fold)).toEqual([0, 0, 0, 0, 1, 1, 1, 2, 2, 2]);
	});
	test('grouped folds never split a group; fewer groups than folds → one fold per group', () => {
		const g = ['a', 'a', 'b', 'c', 'c', 'b', 'd'];
		const l = foldLayout(7, 7, g);
		expect(l.K).toBe(4);
		expect(l.grouped).toBe(true);
		const byGroup = new Map<string, Set<number>>();
		g.forEach((k, i) => byGroup.set(k, (byGroup.get(k) ?? new Set()).add(l.fold[i])));
		for (const s of byGroup.values()) expect(s.size).toBe(1);
	});
});

describe('ekf PRESS (Bro, Kjeldahl, Smilde & Kiers 2008)', () => {
	const g = gasoline();
	const X = centred(g.X.slice(0, 40));
	const p = X.cols;
	test('the closed form e_j/(1 − d_j) equals the literal element-wise least-squares definition', () => {
		// model without rows 0..4, predict row 0 element by element
		const train = centred(g.X.slice(5, 40));
		const fit = pca(train, 4);
		const mean = new Float64Array(p);
		for (let i = 5; i < 40; i++) for (let j = 0; j < p; j++) mean[j] += g.X[i][j] / 35;
		const z = Float64Array.from(g.X[0], (v, j) => v - mean[j]);
		const press = new Float64Array(5);
		ekfAccumulate(z, fit.loadings, fit.eigenvalues, 4, p, cumulativeLeverage(fit.loadings, 4, p), press, new Float64Array(5), new Float64Array(5));
		for (const A of [1, 2, 4]) expect(Math.abs(press[A] / ekfPressDirect(z, fit.loadings, A, p) - 1)).toBeLessThan(1e-9);
	});
	test('on gasoline, ekf PRESS has an interior minimum, while row-wise leave-out PRESS only falls (the reason it is not used)', () => {
		const rows = g.X.map((x) => Float64Array.from(x));
		const Z = centred(g.X);
		const layout = foldLayout(60, 7);
		const cv = crossValidate(rows, Z, gramRows(Z), 'center', layout, 15);
		const press = Array.from(cv.press);
		const best = press.indexOf(Math.min(...press.slice(1)));
		expect(best).toBeGreaterThan(1);
		expect(best).toBeLessThan(15);
		expect(press[15]).toBeGreaterThan(press[best]);
		// row-wise: Σ‖z − PPᵀz‖² of the left-out rows (the wrong method) decreases monotonically
		const rowwise = Array.from({ length: 16 }, (_, A) => cv.v.filter((_v, k) => k % 16 === A).reduce((s, x) => s + x, 0));
		for (let A = 1; A < 16; A++) expect(rowwise[A]).toBeLessThanOrEqual(rowwise[A - 1] + 1e-15);
	});
	test('the Gram shortcut for folds gives the same CV distances as refitting each fold from scratch', () => {
		const rows = g.X.map((x) => Float64Array.from(x));
		const Z = centred(g.X);
		const layout = foldLayout(60, 7);
		const a = crossValidate(rows, Z, gramRows(Z), 'center', layout, 6);
		const b = crossValidate(rows, Z, null, 'center', layout, 6);
		for (let i = 0; i < a.v.length; i++) expect(Math.abs(a.v[i] - b.v[i]) / (b.v[i] || 1)).toBeLessThan(1e-6);
		for (let A = 0; A <= 6; A++) expect(Math.abs(a.press[A] / b.press[A] - 1)).toBeLessThan(1e-6);
	});
});

describe('component-count rule', () => {
	test('smallest A ≥ 1 whose PRESS is within 1 % of the minimum', () => {
		expect(suggestComponents([10, 5, 3, 2.02, 2.0, 2.1])).toBe(3);
		expect(suggestComponents([10, 5, 3, 2.5, 2.0, 2.1])).toBe(4);
		expect(suggestComponents([10, 1, 2, 3])).toBe(1);
	});
});
