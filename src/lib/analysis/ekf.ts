import { Matrix, solve } from 'ml-matrix';

/**
 * Element-wise k-fold PCA cross-validation (ekf; Bro, Kjeldahl, Smilde & Kiers 2008). For a left-out
 * row z and loadings P from a model built without that row, element j is predicted from the other
 * elements only: t̂ = z₋ⱼP₋ⱼ(P₋ⱼᵀP₋ⱼ)⁻¹, ẑ_j = t̂·p_j. With orthonormal P, Sherman–Morrison gives
 * z_j − ẑ_j = e_j/(1 − d_j), e = z − PPᵀz, d_j = Σ_a p_aj², so PRESS costs one projection per A.
 */
export function ekfAccumulate(
	z: Float64Array,
	loadings: Float64Array,
	lambda: Float64Array,
	Amax: number,
	p: number,
	leverage: Float64Array,
	press: Float64Array,
	spe: Float64Array,
	h: Float64Array
): void {
	const e = Float64Array.from(z);
	let ss = 0;
	for (let j = 0; j < p; j++) ss += e[j] * e[j];
	press[0] += ss;
	spe[0] = ss;
	h[0] = 0;
	let hh = 0;
	for (let a = 0; a < Amax; a++) {
		const base = a * p;
		let t = 0;
		for (let j = 0; j < p; j++) t += loadings[base + j] * z[j];
		hh += (t * t) / lambda[a];
		let s = 0;
		let pr = 0;
		const lev = leverage.subarray(a * p, (a + 1) * p);
		for (let j = 0; j < p; j++) {
			const ej = e[j] - t * loadings[base + j];
			e[j] = ej;
			s += ej * ej;
			const q = 1 - lev[j];
			// a variable the model reproduces exactly cannot be predicted from the others
			pr += q > 1e-10 ? (ej / q) ** 2 : Infinity;
		}
		press[a + 1] += pr;
		spe[a + 1] = s;
		h[a + 1] = hh;
	}
}

/** Cumulative leverage d_j(A) = Σ_{a≤A} p_aj², stored A-major (Amax×p). */
export function cumulativeLeverage(loadings: Float64Array, Amax: number, p: number): Float64Array {
	const d = new Float64Array(Amax * p);
	for (let a = 0; a < Amax; a++)
		for (let j = 0; j < p; j++) d[a * p + j] = (a > 0 ? d[(a - 1) * p + j] : 0) + loadings[a * p + j] ** 2;
	return d;
}

/** The ekf definition computed literally, one least-squares solve per element (reference for tests). */
export function ekfPressDirect(z: ArrayLike<number>, loadings: Float64Array, A: number, p: number): number {
	let press = 0;
	for (let j = 0; j < p; j++) {
		const rows = p - 1;
		const P = new Matrix(rows, A);
		const x = new Matrix(rows, 1);
		let r = 0;
		for (let l = 0; l < p; l++) {
			if (l === j) continue;
			for (let a = 0; a < A; a++) P.set(r, a, loadings[a * p + l]);
			x.set(r, 0, z[l]);
			r++;
		}
		const tHat = solve(P, x, true);
		let pred = 0;
		for (let a = 0; a < A; a++) pred += tHat.get(a, 0) * loadings[a * p + j];
		press += (z[j] - pred) ** 2;
	}
	return press;
}
