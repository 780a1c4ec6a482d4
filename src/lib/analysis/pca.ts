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

/** XXᵀ (n×n), in 4×4 register blocks so each loaded value serves four products. */
export function gramRows(X: Mat): Float64Array {
  const { data, rows: n, cols: p } = X;
  const G = new Float64Array(n*n);
  const nb = n - (n % 4);
  for (let i = 0; i < nb; i += 4) {
    const a0=i*p, a1=a0+p, a2=a1+p, a3=a2+p;
    for (let j = 0; j <= i; j += 4) {
      const b0=j*p, b1=b0+p, b2=b1+p, b3=b2+p;
      let s00=0,s01=0,s02=0,s03=0,s10=0,s11=0,s12=0,s13=0,s20=0,s21=0,s22=0,s23=0,s30=0,s31=0,s32=0,s33=0;
      for (let l=0;l<p;l++){
        const x0=data[a0+l],x1=data[a1+l],x2=data[a2+l],x3=data[a3+l];
        const y0=data[b0+l],y1=data[b1+l],y2=data[b2+l],y3=data[b3+l];
        s00+=x0*y0;s01+=x0*y1;s02+=x0*y2;s03+=x0*y3;
        s10+=x1*y0;s11+=x1*y1;s12+=x1*y2;s13+=x1*y3;
        s20+=x2*y0;s21+=x2*y1;s22+=x2*y2;s23+=x2*y3;
        s30+=x3*y0;s31+=x3*y1;s32+=x3*y2;s33+=x3*y3;
      }
      const r0=i*n+j, r1=r0+n, r2=r1+n, r3=r2+n;
      G[r0]=s00;G[r0+1]=s01;G[r0+2]=s02;G[r0+3]=s03;
      G[r1]=s10;G[r1+1]=s11;G[r1+2]=s12;G[r1+3]=s13;
      G[r2]=s20;G[r2+1]=s21;G[r2+2]=s22;G[r2+3]=s23;
      G[r3]=s30;G[r3+1]=s31;G[r3+2]=s32;G[r3+3]=s33;
    }
  }
  for (let i = nb; i < n; i++) for (let j = 0; j <= i; j++) { let s=0; for (let l=0;l<p;l++) s+=data[i*p+l]*data[j*p+l]; G[i*n+j]=s; }
  for (let r=0;r<n;r++) for (let c=r+1;c<n;c++) G[r*n+c]=G[c*n+r];
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
		const u = eig.vectors.subarray(a * dim, (a + 1) * dim);
		if (useRows) {
			// p_a = Xᵀu_a/s_a and t_a = s_a·u_a, with s_a = √μ_a
			const s = Math.sqrt(mu);
			if (!(s > 0)) throw new AnalysisError('rank-deficient', `component ${a + 1} has zero variance: the data have rank below ${k}`);
			const pa = loadings.subarray(a * p, (a + 1) * p);
			for (let i = 0; i < n; i++) {
				const ui = u[i];
				const base = i * p;
				for (let j = 0; j < p; j++) pa[j] += ui * data[base + j];
			}
			let nn = 0;
			for (let j = 0; j < p; j++) nn += pa[j] * pa[j];
			const inv = 1 / Math.sqrt(nn);
			for (let j = 0; j < p; j++) pa[j] *= inv;
			for (let i = 0; i < n; i++) scores[i * k + a] = s * u[i];
		} else {
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
	// tr(R³) = Σ_ij (R²)_ij R_ij, with (R²)_ij = R_i·R_j for symmetric R
	let t3 = 0;
	for (let i = 0; i < dim; i++) {
		const ri = i * dim;
		for (let j = 0; j <= i; j++) {
			const rij = R[ri + j];
			if (rij === 0) continue;
			const rj = j * dim;
			let s = 0;
			for (let l = 0; l < dim; l++) s += R[ri + l] * R[rj + l];
			t3 += (i === j ? 1 : 2) * s * rij;
		}
	}
	const d = fit.n - 1;
	return { theta1: Math.max(t1, 0) / d, theta2: Math.max(t2, 0) / d ** 2, theta3: t3 / d ** 3 };
}
