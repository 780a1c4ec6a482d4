import { AnalysisError } from './errors';
import { topEigen } from './eigen';

/** Row-major n×p matrix. */
export interface Mat {
	data: Float64Array;
	rows: number;
	cols: number;
}

export interface PcaFit {
	n: number;
	p: number;
	k: number;
	/** k×p, component a in row a; unit length, orthogonal. */
	loadings: Float64Array;
	/** n×k. */
	scores: Float64Array;
	/** λ_a = t_aᵀt_a/(n − 1), descending. */
	eigenvalues: Float64Array;
	/** Σ of all eigenvalues (trace of XᵀX/(n − 1)). */
	totalVariance: number;
	/** The n×n (n ≤ p) or p×p cross-product the eigenvectors came from, kept for residual moments. */
	cross: Float64Array;
	crossSide: 'rows' | 'cols';
	/** Unit eigenvectors of `cross` (k×dim). */
	vectors: Float64Array;
}

/**
 * XXᵀ (n×n), lower triangle in 3×3 register blocks then mirrored: each loaded value serves three
 * products, and nine accumulators plus six operands still fit the x64 register file (4×4 spilled,
 * measured about 8 % slower).
 */
export function gramRows(X: Mat): Float64Array {
	const { data, rows: n, cols: p } = X;
	const G = new Float64Array(n * n);
	const nb = n - (n % 3);
	for (let i = 0; i < nb; i += 3) {
		const a0 = i * p;
		const a1 = a0 + p;
		const a2 = a1 + p;
		for (let j = 0; j <= i; j += 3) {
			const b0 = j * p;
			const b1 = b0 + p;
			const b2 = b1 + p;
			let s00 = 0;
			let s01 = 0;
			let s02 = 0;
			let s10 = 0;
			let s11 = 0;
			let s12 = 0;
			let s20 = 0;
			let s21 = 0;
			let s22 = 0;
			for (let l = 0; l < p; l++) {
				const y0 = data[b0 + l];
				const y1 = data[b1 + l];
				const y2 = data[b2 + l];
				let x = data[a0 + l];
				s00 += x * y0;
				s01 += x * y1;
				s02 += x * y2;
				x = data[a1 + l];
				s10 += x * y0;
				s11 += x * y1;
				s12 += x * y2;
				x = data[a2 + l];
				s20 += x * y0;
				s21 += x * y1;
				s22 += x * y2;
			}
			const r0 = i * n + j;
			const r1 = r0 + n;
			const r2 = r1 + n;
			G[r0] = s00;
			G[r0 + 1] = s01;
			G[r0 + 2] = s02;
			G[r1] = s10;
			G[r1 + 1] = s11;
			G[r1 + 2] = s12;
			G[r2] = s20;
			G[r2 + 1] = s21;
			G[r2 + 2] = s22;
		}
	}
	for (let i = nb; i < n; i++)
		for (let j = 0; j <= i; j++) {
			let s = 0;
			for (let l = 0; l < p; l++) s += data[i * p + l] * data[j * p + l];
			G[i * n + j] = s;
		}
	for (let r = 0; r < n; r++) for (let c = r + 1; c < n; c++) G[r * n + c] = G[c * n + r];
	return G;
}

/** XᵀX (p×p), for tall matrices. */
export function gramCols(X: Mat): Float64Array {
	const { data, rows: n, cols: p } = X;
	const C = new Float64Array(p * p);
	for (let r = 0; r < n; r++) {
		const base = r * p;
		for (let a = 0; a < p; a++) {
			const xa = data[base + a];
			if (xa === 0) continue;
			const row = a * p;
			for (let b = 0; b <= a; b++) C[row + b] += xa * data[base + b];
		}
	}
	for (let a = 0; a < p; a++) for (let b = a + 1; b < p; b++) C[a * p + b] = C[b * p + a];
	return C;
}

/**
 * L (k×p) = Uᵀ X for U given as k rows of length n: four rows of X per sweep, so X is read once
 * in total instead of once per component (the k-fold re-reading was memory-bound).
 */
function loadingsFromRows(data: Float64Array, n: number, p: number, U: Float64Array, k: number, L: Float64Array): void {
	let i = 0;
	for (; i + 3 < n; i += 4) {
		const x0 = i * p;
		const x1 = x0 + p;
		const x2 = x1 + p;
		const x3 = x2 + p;
		for (let a = 0; a < k; a++) {
			const ua = a * n + i;
			const c0 = U[ua];
			const c1 = U[ua + 1];
			const c2 = U[ua + 2];
			const c3 = U[ua + 3];
			const la = a * p;
			for (let j = 0; j < p; j++) L[la + j] += c0 * data[x0 + j] + c1 * data[x1 + j] + c2 * data[x2 + j] + c3 * data[x3 + j];
		}
	}
	for (; i < n; i++) {
		const x0 = i * p;
		for (let a = 0; a < k; a++) {
			const c0 = U[a * n + i];
			const la = a * p;
			for (let j = 0; j < p; j++) L[la + j] += c0 * data[x0 + j];
		}
	}
}

/** Fixes each component's sign: its largest-magnitude loading is positive (deterministic output). */
function fixSigns(loadings: Float64Array, scores: Float64Array, vectors: Float64Array, k: number, p: number, n: number, dim: number): void {
	for (let a = 0; a < k; a++) {
		let best = 0;
		let arg = 0;
		for (let j = 0; j < p; j++) {
			const v = Math.abs(loadings[a * p + j]);
			if (v > best + 1e-12 * best) {
				best = v;
				arg = j;
			}
		}
		if (loadings[a * p + arg] < 0) {
			for (let j = 0; j < p; j++) loadings[a * p + j] = -loadings[a * p + j];
			for (let i = 0; i < n; i++) scores[i * k + a] = -scores[i * k + a];
			for (let l = 0; l < dim; l++) vectors[a * dim + l] = -vectors[a * dim + l];
		}
	}
}

/**
 * Exact top-k PCA of an already centred/scaled matrix X. The eigenproblem is solved on the
 * smaller cross-product (XXᵀ when n ≤ p, else XᵀX), so its cost is n²p for the product plus a
 * Lanczos run on an n×n matrix; `gram` may pass a precomputed XXᵀ.
 */
export function pca(X: Mat, k: number, options: { gram?: Float64Array; tol?: number } = {}): PcaFit {
	const { rows: n, cols: p, data } = X;
	if (n < 2) throw new AnalysisError('too-few', `PCA needs at least 2 rows, got ${n}`);
	const rank = Math.min(n - 1, p);
	if (!Number.isInteger(k) || k < 1 || k > rank)
		throw new AnalysisError('bad-components', `cannot fit ${k} components to ${n} rows × ${p} columns (at most ${rank})`);
	const useRows = n <= p;
	const dim = useRows ? n : p;
	const cross = useRows ? (options.gram ?? gramRows(X)) : gramCols(X);
	let trace = 0;
	for (let i = 0; i < dim; i++) trace += cross[i * dim + i];
	const eig = topEigen(cross, dim, k, { tol: options.tol });
	const loadings = new Float64Array(k * p);
	const scores = new Float64Array(n * k);
	const eigenvalues = new Float64Array(k);
	for (let a = 0; a < k; a++) {
		const mu = Math.max(eig.values[a], 0);
		eigenvalues[a] = mu / (n - 1);
		if (useRows && !(Math.sqrt(mu) > 0))
			throw new AnalysisError('rank-deficient', `the data have rank ${a} after centring, below the ${k} components requested (component ${a + 1} has zero variance)`);
	}
	if (useRows) {
		// p_a = Xᵀu_a/s_a and t_a = s_a·u_a, with s_a = √μ_a
		loadingsFromRows(data, n, p, eig.vectors, k, loadings);
		for (let a = 0; a < k; a++) {
			const pa = loadings.subarray(a * p, (a + 1) * p);
			let nn = 0;
			for (let j = 0; j < p; j++) nn += pa[j] * pa[j];
			const inv = 1 / Math.sqrt(nn);
			for (let j = 0; j < p; j++) pa[j] *= inv;
			const s = Math.sqrt(Math.max(eig.values[a], 0));
			const u = eig.vectors.subarray(a * dim, (a + 1) * dim);
			for (let i = 0; i < n; i++) scores[i * k + a] = s * u[i];
		}
	} else {
		for (let a = 0; a < k; a++) {
			const u = eig.vectors.subarray(a * dim, (a + 1) * dim);
			loadings.set(u, a * p);
			for (let i = 0; i < n; i++) {
				let t = 0;
				const base = i * p;
				for (let j = 0; j < p; j++) t += data[base + j] * u[j];
				scores[i * k + a] = t;
			}
		}
	}
	const vectors = Float64Array.from(eig.vectors);
	fixSigns(loadings, scores, vectors, k, p, n, dim);
	return { n, p, k, loadings, scores, eigenvalues, totalVariance: trace / (n - 1), cross, crossSide: useRows ? 'rows' : 'cols', vectors };
}

/**
 * θ_i = Σ_{a>A} λ_a^i (i = 1, 2, 3) over all residual eigenvalues, computed as traces of the
 * deflated cross-product R = C − Σ_{a≤A} μ_a u_a u_aᵀ, which avoids subtracting large cubes.
 */
export function residualMoments(fit: PcaFit, A: number): { theta1: number; theta2: number; theta3: number } {
	const dim = fit.crossSide === 'rows' ? fit.n : fit.p;
	const R = Float64Array.from(fit.cross);
	for (let a = 0; a < A; a++) {
		const mu = fit.eigenvalues[a] * (fit.n - 1);
		const u = fit.vectors.subarray(a * dim, (a + 1) * dim);
		for (let i = 0; i < dim; i++) {
			const f = mu * u[i];
			const row = i * dim;
			for (let j = 0; j < dim; j++) R[row + j] -= f * u[j];
		}
	}
	let t1 = 0;
	let t2 = 0;
	for (let i = 0; i < dim; i++) t1 += R[i * dim + i];
	for (let i = 0; i < dim * dim; i++) t2 += R[i] * R[i];
	// tr(R³) = Σ_ij (R²)_ij R_ij, with R² = RRᵀ for symmetric R: the blocked Gram kernel does the n³ part
	const R2 = gramRows({ data: R, rows: dim, cols: dim });
	let t3 = 0;
	for (let i = 0; i < dim * dim; i++) t3 += R2[i] * R[i];
	const d = fit.n - 1;
	return { theta1: Math.max(t1, 0) / d, theta2: Math.max(t2, 0) / d ** 2, theta3: t3 / d ** 3 };
}
