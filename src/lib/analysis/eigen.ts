import { AnalysisError } from './errors';
import { mulberry32 } from './prng';

/** √(a² + b²) without the cost of Math.hypot; falls back to it only where squaring could over- or underflow. */
function hypot2(a: number, b: number): number {
	const r = Math.sqrt(a * a + b * b);
	return r < 1e150 && r > 1e-150 ? r : Math.hypot(a, b);
}

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
				let r = hypot2(p, 1);
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
					r = hypot2(p, e[i]);
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

/** out = A·x for symmetric row-major A, four rows per sweep so each x_j is loaded once for four products. */
function symMatVec(A: Float64Array, m: number, x: Float64Array, out: Float64Array): void {
	let i = 0;
	for (; i + 3 < m; i += 4) {
		const r0 = i * m;
		const r1 = r0 + m;
		const r2 = r1 + m;
		const r3 = r2 + m;
		let s0 = 0;
		let s1 = 0;
		let s2 = 0;
		let s3 = 0;
		for (let j = 0; j < m; j++) {
			const xj = x[j];
			s0 += A[r0 + j] * xj;
			s1 += A[r1 + j] * xj;
			s2 += A[r2 + j] * xj;
			s3 += A[r3 + j] * xj;
		}
		out[i] = s0;
		out[i + 1] = s1;
		out[i + 2] = s2;
		out[i + 3] = s3;
	}
	for (; i < m; i++) {
		const row = i * m;
		let s0 = 0;
		for (let j = 0; j < m; j++) s0 += A[row + j] * x[j];
		out[i] = s0;
	}
}

/**
 * One classical Gram–Schmidt pass of w against rows 0..count−1 of Q: h = Qw, then w −= Qᵀh.
 * Done twice by the caller (CGS2, "twice is enough"); four basis vectors per sweep, so w is read once per four.
 */
function orthogonalise(Q: Float64Array, m: number, count: number, w: Float64Array, h: Float64Array): void {
	let i = 0;
	for (; i + 3 < count; i += 4) {
		const b0 = i * m;
		const b1 = b0 + m;
		const b2 = b1 + m;
		const b3 = b2 + m;
		let s0 = 0;
		let s1 = 0;
		let s2 = 0;
		let s3 = 0;
		for (let l = 0; l < m; l++) {
			const wl = w[l];
			s0 += Q[b0 + l] * wl;
			s1 += Q[b1 + l] * wl;
			s2 += Q[b2 + l] * wl;
			s3 += Q[b3 + l] * wl;
		}
		h[i] = s0;
		h[i + 1] = s1;
		h[i + 2] = s2;
		h[i + 3] = s3;
	}
	for (; i < count; i++) {
		const b0 = i * m;
		let s0 = 0;
		for (let l = 0; l < m; l++) s0 += Q[b0 + l] * w[l];
		h[i] = s0;
	}
	i = 0;
	for (; i + 3 < count; i += 4) {
		const b0 = i * m;
		const b1 = b0 + m;
		const b2 = b1 + m;
		const b3 = b2 + m;
		const h0 = h[i];
		const h1 = h[i + 1];
		const h2 = h[i + 2];
		const h3 = h[i + 3];
		for (let l = 0; l < m; l++) w[l] -= h0 * Q[b0 + l] + h1 * Q[b1 + l] + h2 * Q[b2 + l] + h3 * Q[b3 + l];
	}
	for (; i < count; i++) {
		const b0 = i * m;
		const h0 = h[i];
		for (let l = 0; l < m; l++) w[l] -= h0 * Q[b0 + l];
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
	// Deterministic start vectors (results must not depend on Math.random), centred on 0.
	const uniform = mulberry32(20240917 + m);
	const rand = () => uniform() - 0.5;
	const Q = new Float64Array(m * m);
	const alpha: number[] = [];
	const beta: number[] = [];
	const w = new Float64Array(m);
	const h = new Float64Array(m);
	const q = new Float64Array(m);
	const fresh = (count: number): boolean => {
		for (let i = 0; i < m; i++) q[i] = rand();
		for (let pass = 0; pass < 2; pass++) orthogonalise(Q, m, count, q, h);
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
		const bPrev = j > 0 ? beta[j - 1] : 0;
		const prev = (j > 0 ? j - 1 : 0) * m;
		for (let l = 0; l < m; l++) w[l] -= a * q[l] + bPrev * Q[prev + l];
		// full re-orthogonalisation, twice ("twice is enough")
		for (let pass = 0; pass < 2; pass++) orthogonalise(Q, m, j + 1, w, h);
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
			const inv = 1 / b;
			for (let l = 0; l < m; l++) q[l] = w[l] * inv;
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
			// a check costs O(steps²) rotations against O(m²) per step: check less often when m is small
			nextCheck = steps + Math.max(4, Math.ceil(k / 2), Math.ceil((steps * steps) / (4 * m)));
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
	const Au = w;
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
