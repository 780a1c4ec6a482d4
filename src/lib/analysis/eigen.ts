import { AnalysisError } from './errors';

/**
 * Eigen-decomposition of a symmetric tridiagonal matrix by the implicit QL method (tql2 of
 * EISPACK, as in JAMA). d: diagonal (n), e: sub-diagonal with e[i] = T[i+1][i], e[n−1] ignored.
 * Returns eigenvalues ascending and the eigenvectors as columns of V (row-major n×n).
 */
export function tridiagonalEigen(
	dIn: ArrayLike<number>,
	eIn: ArrayLike<number>,
	options: { lastRowOnly?: boolean } = {}
): { values: Float64Array; vectors: Float64Array } {
	const n = dIn.length;
	const d = Float64Array.from(dIn);
	const e = new Float64Array(n);
	for (let i = 0; i < n - 1; i++) e[i] = eIn[i];
	// rows of V rotate independently, so the Lanczos residual check can track the last row alone
	const rows = options.lastRowOnly ? 1 : n;
	const V = new Float64Array(rows * n);
	if (options.lastRowOnly) V[n - 1] = 1;
	else for (let i = 0; i < n; i++) V[i * n + i] = 1;
	const eps = 2 ** -52;
	let f = 0;
	let tst1 = 0;
	for (let l = 0; l < n; l++) {
		tst1 = Math.max(tst1, Math.abs(d[l]) + Math.abs(e[l]));
		let m = l;
		while (m < n) {
			if (Math.abs(e[m]) <= eps * tst1) break;
			m++;
		}
		if (m === n) m = n - 1;
		if (m > l) {
			let iter = 0;
			do {
				if (++iter > 60) throw new AnalysisError('no-convergence', 'tridiagonal QL did not converge');
				let g = d[l];
				let p = (d[l + 1] - g) / (2 * e[l]);
				let r = Math.hypot(p, 1);
				if (p < 0) r = -r;
				d[l] = e[l] / (p + r);
				d[l + 1] = e[l] * (p + r);
				const dl1 = d[l + 1];
				let h = g - d[l];
				for (let i = l + 2; i < n; i++) d[i] -= h;
				f += h;
				p = d[m];
				let c = 1;
				let c2 = c;
				let c3 = c;
				const el1 = e[l + 1];
				let s = 0;
				let s2 = 0;
				for (let i = m - 1; i >= l; i--) {
					c3 = c2;
					c2 = c;
					s2 = s;
					g = c * e[i];
					h = c * p;
					r = Math.hypot(p, e[i]);
					e[i + 1] = s * r;
					s = e[i] / r;
					c = p / r;
					p = c * d[i] - s * g;
					d[i + 1] = h + s * (c * g + s * d[i]);
					for (let k = 0; k < rows; k++) {
						const row = k * n;
						h = V[row + i + 1];
						V[row + i + 1] = s * V[row + i] + c * h;
						V[row + i] = c * V[row + i] - s * h;
					}
				}
				p = (-s * s2 * c3 * el1 * e[l]) / dl1;
				e[l] = s * p;
				d[l] = c * p;
			} while (Math.abs(e[l]) > eps * tst1);
		}
		d[l] = d[l] + f;
		e[l] = 0;
	}
	// selection sort ascending, carrying the vectors
	for (let i = 0; i < n - 1; i++) {
		let k = i;
		let p = d[i];
		for (let j = i + 1; j < n; j++)
			if (d[j] < p) {
				k = j;
				p = d[j];
			}
		if (k !== i) {
			d[k] = d[i];
			d[i] = p;
			for (let j = 0; j < rows; j++) {
				const t = V[j * n + i];
				V[j * n + i] = V[j * n + k];
				V[j * n + k] = t;
			}
		}
	}
	return { values: d, vectors: V };
}

/** Deterministic start vectors: results must not depend on Math.random. */
function lcg(seed: number): () => number {
	let s = seed >>> 0;
	return () => {
		s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
		return s / 4294967296 - 0.5;
	};
}

function symMatVec(A: Float64Array, m: number, x: Float64Array, out: Float64Array): void {
	for (let i = 0; i < m; i++) {
		const row = i * m;
		let s0 = 0;
		let s1 = 0;
		let j = 0;
		for (; j + 1 < m; j += 2) {
			s0 += A[row + j] * x[j];
			s1 += A[row + j + 1] * x[j + 1];
		}
		if (j < m) s0 += A[row + j] * x[j];
		out[i] = s0 + s1;
	}
}

export interface TopEigen {
	/** Largest eigenvalues, descending. */
	values: Float64Array;
	/** Eigenvectors, row a = vector a (k×m). */
	vectors: Float64Array;
	steps: number;
	/** Largest explicit residual ‖A u − θ u‖ relative to the largest |eigenvalue|. */
	residual: number;
}

/**
 * Exact top-k eigenpairs of a symmetric m×m matrix: Lanczos with full re-orthogonalisation,
 * Rayleigh–Ritz on the tridiagonal, stopped only when every wanted pair passes an explicit
 * residual check ‖A u − θ u‖ ≤ tol·|θ₁|. At m steps the basis spans everything, so it is exact.
 */
export function topEigen(A: Float64Array, m: number, k: number, options: { tol?: number } = {}): TopEigen {
	const { tol = 1e-12 } = options;
	if (k < 1 || k > m) throw new AnalysisError('bad-argument', `cannot take ${k} eigenpairs of a ${m}×${m} matrix`);
	let anorm = 0;
	for (let i = 0; i < m * m; i++) anorm += A[i] * A[i];
	anorm = Math.sqrt(anorm);
	const rand = lcg(20240917 + m);
	const Q = new Float64Array(m * m);
	const alpha: number[] = [];
	const beta: number[] = [];
	const w = new Float64Array(m);
	let q = new Float64Array(m);
	const fresh = (count: number): boolean => {
		for (let i = 0; i < m; i++) q[i] = rand();
		for (let pass = 0; pass < 2; pass++)
			for (let i = 0; i < count; i++) {
				const base = i * m;
				let dd = 0;
				for (let l = 0; l < m; l++) dd += Q[base + l] * q[l];
				for (let l = 0; l < m; l++) q[l] -= dd * Q[base + l];
			}
		let nn = 0;
		for (let l = 0; l < m; l++) nn += q[l] * q[l];
		if (!(Math.sqrt(nn) > 1e-10)) return false;
		const s = 1 / Math.sqrt(nn);
		for (let l = 0; l < m; l++) q[l] *= s;
		return true;
	};
	fresh(0);
	let brokeDown = false;
	let nextCheck = Math.min(m, k + 12);
	for (let j = 0; j < m; j++) {
		Q.set(q, j * m);
		symMatVec(A, m, q, w);
		let a = 0;
		for (let l = 0; l < m; l++) a += q[l] * w[l];
		for (let l = 0; l < m; l++) w[l] -= a * q[l];
		if (j > 0) {
			const b = beta[j - 1];
			const base = (j - 1) * m;
			for (let l = 0; l < m; l++) w[l] -= b * Q[base + l];
		}
		// full re-orthogonalisation, twice ("twice is enough")
		for (let pass = 0; pass < 2; pass++)
			for (let i = 0; i <= j; i++) {
				const base = i * m;
				let dd = 0;
				for (let l = 0; l < m; l++) dd += Q[base + l] * w[l];
				for (let l = 0; l < m; l++) w[l] -= dd * Q[base + l];
			}
		alpha.push(a);
		const steps = j + 1;
		if (steps === m) break;
		let b = 0;
		for (let l = 0; l < m; l++) b += w[l] * w[l];
		b = Math.sqrt(b);
		if (b <= 1e-13 * anorm) {
			// invariant subspace found: continue in the orthogonal complement; run to the end to be exact
			brokeDown = true;
			beta.push(0);
			if (!fresh(steps)) break;
		} else {
			beta.push(b);
			q = new Float64Array(m);
			for (let l = 0; l < m; l++) q[l] = w[l] / b;
		}
		if (!brokeDown && steps >= nextCheck && steps >= k) {
			const T = tridiagonalEigen(alpha, beta, { lastRowOnly: true });
			let ok = true;
			const top = Math.abs(T.values[steps - 1]) || 1;
			for (let i = 0; i < k && ok; i++) {
				const col = steps - 1 - i;
				if (Math.abs(b * T.vectors[col]) > 0.01 * tol * top) ok = false;
			}
			if (ok) break;
			nextCheck = steps + Math.max(4, Math.ceil(k / 2));
		}
	}
	const steps = alpha.length;
	const T = tridiagonalEigen(alpha, beta.slice(0, steps - 1));
	const values = new Float64Array(k);
	const vectors = new Float64Array(k * m);
	for (let i = 0; i < k; i++) {
		const col = steps - 1 - i;
		values[i] = T.values[col];
		const u = vectors.subarray(i * m, (i + 1) * m);
		for (let j = 0; j < steps; j++) {
			const s = T.vectors[j * steps + col];
			if (s === 0) continue;
			const base = j * m;
			for (let l = 0; l < m; l++) u[l] += s * Q[base + l];
		}
	}
	// explicit check: the Lanczos bound is not trusted alone
	const top = Math.abs(values[0]) || 1;
	let residual = 0;
	const Au = new Float64Array(m);
	for (let i = 0; i < k; i++) {
		const u = vectors.subarray(i * m, (i + 1) * m);
		symMatVec(A, m, u, Au);
		let r = 0;
		for (let l = 0; l < m; l++) r += (Au[l] - values[i] * u[l]) ** 2;
		residual = Math.max(residual, Math.sqrt(r) / top);
	}
	if (!(residual <= tol * 100)) throw new AnalysisError('no-convergence', `eigen-solver residual ${residual.toExponential(2)} exceeds tolerance after ${steps} steps`);
	return { values, vectors, steps, residual };
}
