import { Matrix, solve } from 'ml-matrix';
import { scoresInto } from './projection';

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
	const margin = ekfMargins(leverage, Amax, p);
	ekfAccumulateWith(z, loadings, lambda, Amax, p, margin, press, spe, h, new Float64Array(p), new Float64Array(Amax));
}

/**
 * 1/(1 − d_j(A)) for every A (Amax×p), computed once per fold model so the per-object loop
 * multiplies instead of dividing; `unpredictable[a]` marks an A where some 1 − d_j ≤ 10⁻¹⁰.
 */
export interface EkfMargins {
	inverse: Float64Array;
	unpredictable: Uint8Array;
}

export function ekfMargins(leverage: Float64Array, Amax: number, p: number): EkfMargins {
	const inverse = new Float64Array(Amax * p);
	const unpredictable = new Uint8Array(Amax);
	for (let a = 0; a < Amax; a++)
		for (let j = 0; j < p; j++) {
			const q = 1 - leverage[a * p + j];
			// a variable the model reproduces exactly cannot be predicted from the others
			if (q > 1e-10) inverse[a * p + j] = 1 / q;
			else unpredictable[a] = 1;
		}
	return { inverse, unpredictable };
}

/** ekfAccumulate with precomputed margins and caller-owned scratch (e: p, t: Amax), for the fold loop. */
export function ekfAccumulateWith(
	z: Float64Array,
	loadings: Float64Array,
	lambda: Float64Array,
	Amax: number,
	p: number,
	margin: EkfMargins,
	press: Float64Array,
	spe: Float64Array,
	h: Float64Array,
	e: Float64Array,
	t: Float64Array
): void {
	let ss = 0;
	for (let j = 0; j < p; j++) {
		const v = z[j];
		e[j] = v;
		ss += v * v;
	}
	press[0] += ss;
	spe[0] = ss;
	h[0] = 0;
	// P orthonormal, so p_a·z equals p_a·e after deflating the earlier components: all scores in one sweep
	scoresInto(loadings, z, Amax, p, t);
	const inv = margin.inverse;
	let hh = 0;
	for (let a = 0; a < Amax; a++) {
		const base = a * p;
		const ta = t[a];
		hh += (ta * ta) / lambda[a];
		let s = 0;
		let pr = 0;
		for (let j = 0; j < p; j++) {
			const ej = e[j] - ta * loadings[base + j];
			e[j] = ej;
			s += ej * ej;
			const r = ej * inv[base + j];
			pr += r * r;
		}
		press[a + 1] += margin.unpredictable[a] ? Infinity : pr;
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
