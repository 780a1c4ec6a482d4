// The performance rewrites (blocked kernels, the SPE identity, precomputed ekf margins) must give
// the same numbers as the plain formulas they replace.
import { describe, expect, test } from 'vitest';
import { Matrix, EigenvalueDecomposition } from 'ml-matrix';
import { buildModel, prepareArtefact } from '../../../src/lib/analysis';
import { makeProjectionModel, project, scoresInto } from '../../../src/lib/analysis/projection';
import { gramRows, pca } from '../../../src/lib/analysis/pca';
import { topEigen } from '../../../src/lib/analysis/eigen';
import { cumulativeLeverage, ekfAccumulate, ekfAccumulateWith, ekfMargins } from '../../../src/lib/analysis/ekf';
import { mulberry32 } from '../../../src/lib/analysis/prng';
import { centred, gasoline, gasolineTraining, relErr } from './fixtures';

/** Uniform on [−0.5, 0.5) from the project's one seeded generator. */
function centredUniform(seed: number): () => number {
	const u = mulberry32(seed);
	return () => u() - 0.5;
}

describe('projection fast path (SPE = ‖z‖² − Σt², methods §6)', () => {
	const g = gasoline();
	const a = buildModel(gasolineTraining((i) => (i < 30 ? 'genuine' : 'other')), { components: 3, genuine: 'genuine' });
	const prep = prepareArtefact(a);
	const models = [prep.family, ...prep.classes];
	test('SPE, T² and scores from the fast path equal the explicit residual path to 1e-9 relative', () => {
		let fastUsed = 0;
		for (const m of models)
			for (let i = 0; i < g.X.length; i += 3) {
				const x = Float64Array.from(g.X[i]);
				const fast = project(m, x);
				const slow = project(m, x, { explicitResidual: true });
				const zz = m.mean.reduce((s, mu, j) => s + (x[j] - mu) ** 2, 0);
				const tt = fast.scores.reduce((s, t) => s + t * t, 0);
				if (zz - tt >= 1e-6 * zz) fastUsed++;
				expect(relErr(fast.spe, slow.spe)).toBeLessThan(1e-9);
				expect(fast.t2).toBe(slow.t2);
				expect(fast.scores).toEqual(slow.scores);
			}
		// the comparison is only meaningful if the identity was actually taken
		expect(fastUsed).toBeGreaterThan(20);
	});
	test('scores from the blocked kernel (8, 4, 2, 1 components per sweep) equal plain dot products, with and without scaling', () => {
		const p = 37;
		const r = centredUniform(11);
		for (const A of [1, 2, 3, 4, 5, 7, 8, 9, 12, 13, 17]) {
			const L = Float64Array.from({ length: A * p }, r);
			const mean = Float64Array.from({ length: p }, r);
			for (const scaled of [false, true]) {
				const scale = Float64Array.from({ length: p }, () => (scaled ? 0.5 + Math.abs(r()) : 1));
				const m = makeProjectionModel({
					name: 'm', kind: 'family', A, mean, scale, loadings: L, eigenvalues: Array.from({ length: A }, (_, k) => k + 1),
					h0: 1, v0: 1, nh: 1, nq: 1, t2Limit: 1, speLimit: 1, cCrit: 1, cOutlier: 2
				});
				expect(m.unitScale).toBe(!scaled);
				const x = Float64Array.from({ length: p }, r);
				const s = project(m, x);
				for (let a = 0; a < A; a++) {
					let t = 0;
					for (let j = 0; j < p; j++) t += L[a * p + j] * ((x[j] - mean[j]) / scale[j]);
					expect(Math.abs(s.scores[a] - t)).toBeLessThan(1e-13);
				}
				const t = new Float64Array(A);
				scoresInto(L, m.z, A, p, t);
				expect(Array.from(t)).toEqual(s.scores);
			}
		}
	});
});

describe('blocked kernels', () => {
	test('gramRows equals the plain XXᵀ for every remainder of the 3×3 blocking', () => {
		const r = centredUniform(5);
		for (const n of [1, 2, 3, 4, 5, 6, 7, 11]) {
			const p = 9;
			const data = Float64Array.from({ length: n * p }, r);
			const G = gramRows({ data, rows: n, cols: p });
			for (let i = 0; i < n; i++)
				for (let j = 0; j < n; j++) {
					let s = 0;
					for (let l = 0; l < p; l++) s += data[i * p + l] * data[j * p + l];
					expect(Math.abs(G[i * n + j] - s)).toBeLessThan(1e-14);
					expect(G[i * n + j]).toBe(G[j * n + i]);
				}
		}
	});
	test('ekf with precomputed margins equals the direct form, including an unpredictable variable (∞)', () => {
		const X = centred(gasoline().X.slice(0, 30));
		const p = X.cols;
		const fit = pca(X, 5);
		const lev = cumulativeLeverage(fit.loadings, 5, p);
		const z = Float64Array.from(X.data.subarray(3 * p, 4 * p));
		const run = (f: (press: Float64Array, v: Float64Array, h: Float64Array) => void) => {
			const out = [new Float64Array(6), new Float64Array(6), new Float64Array(6)];
			f(out[0], out[1], out[2]);
			return out;
		};
		const a = run((pr, v, h) => ekfAccumulate(z, fit.loadings, fit.eigenvalues, 5, p, lev, pr, v, h));
		const m = ekfMargins(lev, 5, p);
		const b = run((pr, v, h) => ekfAccumulateWith(z, fit.loadings, fit.eigenvalues, 5, p, m, pr, v, h, new Float64Array(p), new Float64Array(5)));
		for (let k = 0; k < 3; k++) for (let A = 0; A <= 5; A++) expect(relErr(b[k][A], a[k][A])).toBeLessThan(1e-12);
		// reference: (e_j/(1 − d_j))² summed literally
		const e = Float64Array.from(z);
		for (let A = 1; A <= 5; A++) {
			let t = 0;
			for (let j = 0; j < p; j++) t += fit.loadings[(A - 1) * p + j] * z[j];
			let pr = 0;
			for (let j = 0; j < p; j++) {
				e[j] -= t * fit.loadings[(A - 1) * p + j];
				pr += (e[j] / (1 - lev[(A - 1) * p + j])) ** 2;
			}
			expect(relErr(b[0][A], pr)).toBeLessThan(1e-12);
		}
		const bad = Float64Array.from(lev);
		bad[2 * p + 7] = 1;
		const inf = run((pr, v, h) => ekfAccumulateWith(z, fit.loadings, fit.eigenvalues, 5, p, ekfMargins(bad, 5, p), pr, v, h, new Float64Array(p), new Float64Array(5)));
		expect(inf[0][3]).toBe(Infinity);
		expect(Number.isFinite(inf[0][2])).toBe(true);
	});
});

describe('Lanczos on a cluster of near-equal eigenvalues', () => {
	test('top-10 of a Gram matrix whose 8th–12th eigenvalues agree to 1e-4: explicit residual ≤ 1e-10‖G‖ and eigenvalues match a full EVD', () => {
		// X = U diag(s) Vᵀ with a tight cluster in s, then G = XXᵀ (the case that needs many Lanczos steps)
		const n = 80;
		const p = 120;
		const r = centredUniform(3);
		const s = Array.from({ length: n }, (_, i) => (i < 7 ? 10 / (i + 1) : i < 12 ? 0.5 * (1 + 1e-4 * i) : 0.3 / (1 + 0.05 * i)));
		const B = Matrix.from1DArray(n, p, Array.from({ length: n * p }, r));
		const data = new Float64Array(n * p);
		// rows scaled by s after orthonormalising the rows of a random matrix
		const Q = new Float64Array(n * p);
		for (let i = 0; i < n; i++) {
			const q = Q.subarray(i * p, (i + 1) * p);
			for (let j = 0; j < p; j++) q[j] = B.get(i, j);
			for (let pass = 0; pass < 2; pass++)
				for (let k = 0; k < i; k++) {
					let d = 0;
					for (let j = 0; j < p; j++) d += Q[k * p + j] * q[j];
					for (let j = 0; j < p; j++) q[j] -= d * Q[k * p + j];
				}
			let nn = 0;
			for (let j = 0; j < p; j++) nn += q[j] * q[j];
			nn = Math.sqrt(nn);
			for (let j = 0; j < p; j++) {
				q[j] /= nn;
				data[i * p + j] = s[i] * q[j];
			}
		}
		const G = gramRows({ data, rows: n, cols: p });
		let gnorm = 0;
		for (let i = 0; i < n * n; i++) gnorm += G[i] * G[i];
		gnorm = Math.sqrt(gnorm);
		const eig = topEigen(G, n, 10);
		const ref = new EigenvalueDecomposition(Matrix.from1DArray(n, n, Array.from(G)), { assumeSymmetric: true }).realEigenvalues.sort((a, b) => b - a);
		for (let a = 0; a < 10; a++) {
			expect(relErr(eig.values[a], ref[a])).toBeLessThan(1e-10);
			const u = eig.vectors.subarray(a * n, (a + 1) * n);
			let res = 0;
			for (let i = 0; i < n; i++) {
				let gu = 0;
				for (let j = 0; j < n; j++) gu += G[i * n + j] * u[j];
				res += (gu - eig.values[a] * u[i]) ** 2;
			}
			expect(Math.sqrt(res)).toBeLessThan(1e-10 * gnorm);
		}
	});
});
