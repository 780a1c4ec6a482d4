import { describe, expect, test } from 'vitest';
import { Matrix, SVD } from 'ml-matrix';
import { pca, residualMoments } from '../../../src/lib/analysis/pca';
import { tridiagonalEigen, topEigen } from '../../../src/lib/analysis/eigen';
import { centred, gasoline, iris, prcomp, relErr } from './fixtures';

describe('PCA against R prcomp on the gasoline NIR data (Kalivas 1997; R 4.2.2 stats::prcomp)', () => {
	const g = gasoline();
	const X = centred(g.X);
	const ref = prcomp();
	const fit = pca(X, 10);
	test('standard deviations √λ_a (n − 1 divisor) agree to 1e-9 relative', () => {
		for (let a = 0; a < 10; a++) expect(relErr(Math.sqrt(fit.eigenvalues[a]), ref.sdev[a])).toBeLessThan(1e-9);
	});
	test('proportion of variance λ_a / Σλ agrees to 1e-9 relative', () => {
		for (let a = 0; a < 10; a++) expect(relErr(fit.eigenvalues[a] / fit.totalVariance, ref.proportion_of_variance[a])).toBeLessThan(1e-9);
	});
	test('scores on PC1–PC3 agree up to sign (column sign is arbitrary) to 1e-9 of the column scale', () => {
		for (let a = 0; a < 3; a++) {
			const col = ref.scores_pc1_pc3.map((r) => r[a]);
			const scale = Math.max(...col.map(Math.abs));
			const sign = Math.sign(fit.scores[0 * 10 + a]) === Math.sign(col[0]) ? 1 : -1;
			for (let i = 0; i < 60; i++) expect(Math.abs(sign * fit.scores[i * 10 + a] - col[i]) / scale).toBeLessThan(1e-9);
		}
	});
});

function svdOf(X: { data: Float64Array; rows: number; cols: number }) {
	const M = new Matrix(X.rows, X.cols);
	for (let i = 0; i < X.rows; i++) for (let j = 0; j < X.cols; j++) M.set(i, j, X.data[i * X.cols + j]);
	return new SVD(M, { autoTranspose: true });
}

describe('PCA against a full SVD (ml-matrix) to 1e-8 relative', () => {
	test.each([
		['gasoline (n < p, Gram path)', centred(gasoline().X), 12],
		['iris (n > p, covariance path)', centred(iris().map((s) => Array.from(s.values))), 3]
	])('%s', (_name, X, k) => {
		const fit = pca(X, k);
		const svd = svdOf(X);
		const s = svd.diagonal;
		const V = svd.rightSingularVectors;
		for (let a = 0; a < k; a++) {
			expect(relErr(fit.eigenvalues[a], s[a] ** 2 / (X.rows - 1))).toBeLessThan(1e-8);
			let dot = 0;
			for (let j = 0; j < X.cols; j++) dot += fit.loadings[a * X.cols + j] * V.get(j, a);
			expect(1 - Math.abs(dot)).toBeLessThan(1e-8);
		}
		// residual eigenvalue sums θ₁, θ₂ from the deflated cross-product equal the SVD's tail
		const A = 2;
		const th = residualMoments(fit, A);
		const tail = s.slice(A).map((x) => x ** 2 / (X.rows - 1));
		expect(relErr(th.theta1, tail.reduce((x, y) => x + y, 0))).toBeLessThan(1e-8);
		expect(relErr(th.theta2, tail.reduce((x, y) => x + y * y, 0))).toBeLessThan(1e-8);
		expect(relErr(th.theta3, tail.reduce((x, y) => x + y ** 3, 0))).toBeLessThan(1e-6);
	});

	test('loadings are orthonormal and scores are X·P', () => {
		const X = centred(gasoline().X);
		const fit = pca(X, 5);
		const p = X.cols;
		for (let a = 0; a < 5; a++)
			for (let b = 0; b <= a; b++) {
				let d = 0;
				for (let j = 0; j < p; j++) d += fit.loadings[a * p + j] * fit.loadings[b * p + j];
				expect(Math.abs(d - (a === b ? 1 : 0))).toBeLessThan(1e-12);
			}
		let t = 0;
		for (let j = 0; j < p; j++) t += X.data[7 * p + j] * fit.loadings[2 * p + j];
		expect(relErr(fit.scores[7 * 5 + 2], t)).toBeLessThan(1e-10);
	});

	test('same input gives identical output (deterministic start vector, fixed signs)', () => {
		const X = centred(gasoline().X);
		expect(Array.from(pca(X, 4).loadings)).toEqual(Array.from(pca(X, 4).loadings));
	});

	test('refuses more components than the rank allows', () => {
		const X = centred(gasoline().X.slice(0, 5));
		expect(() => pca(X, 5)).toThrow(/at most 4/);
	});
});

describe('eigen-solvers', () => {
	test('tridiagonal QL: [[2,1],[1,2]] has eigenvalues 1 and 3 (hand computation)', () => {
		const r = tridiagonalEigen([2, 2], [1]);
		expect(r.values[0]).toBeCloseTo(1, 14);
		expect(r.values[1]).toBeCloseTo(3, 14);
	});
	test('Lanczos top-k of a matrix with a repeated eigenvalue (breakdown path) matches the known spectrum', () => {
		// diag(5, 5, 5, 1, 0.5, …) rotated by nothing: exact eigenvalues are known by construction
		const m = 30;
		const A = new Float64Array(m * m);
		const d = Array.from({ length: m }, (_, i) => (i < 3 ? 5 : 1 / (i - 1)));
		d.forEach((v, i) => (A[i * m + i] = v));
		const r = topEigen(A, m, 4);
		expect(Array.from(r.values).map((x) => Number(x.toFixed(12)))).toEqual([5, 5, 5, 0.5]);
	});
});
