import { AnalysisError } from '../errors';

/**
 * Orthonormal polynomial basis (order+1 columns) on the axis, scaled to [−1, 1] for conditioning;
 * detrending subtracts the least-squares polynomial, i.e. the projection on this basis.
 */
export function detrendBasis(axis: ArrayLike<number>, order: number): Float64Array[] {
	const p = axis.length;
	if (!Number.isInteger(order) || order < 0) throw new AnalysisError('bad-recipe', `detrend order must be a non-negative integer, got ${order}`);
	if (order + 1 >= p) throw new AnalysisError('bad-recipe', `detrend(${order}) needs more than ${order + 1} points`);
	const lo = axis[0];
	const hi = axis[p - 1];
	const mid = (lo + hi) / 2;
	const half = (hi - lo) / 2 || 1;
	const basis: Float64Array[] = [];
	for (let k = 0; k <= order; k++) {
		const v = new Float64Array(p);
		for (let j = 0; j < p; j++) v[j] = ((axis[j] - mid) / half) ** k;
		// modified Gram–Schmidt, twice for orthogonality to rounding
		for (let pass = 0; pass < 2; pass++)
			for (const q of basis) {
				let d = 0;
				for (let j = 0; j < p; j++) d += q[j] * v[j];
				for (let j = 0; j < p; j++) v[j] -= d * q[j];
			}
		let nn = 0;
		for (let j = 0; j < p; j++) nn += v[j] * v[j];
		const s = Math.sqrt(nn);
		for (let j = 0; j < p; j++) v[j] /= s;
		basis.push(v);
	}
	return basis;
}

/** Subtracts the least-squares polynomial of the basis' order in the axis variable (Barnes et al. 1989). */
export function detrend(x: Float64Array, basis: Float64Array[]): Float64Array {
	const p = x.length;
	const out = Float64Array.from(x);
	for (const q of basis) {
		let d = 0;
		for (let j = 0; j < p; j++) d += q[j] * out[j];
		for (let j = 0; j < p; j++) out[j] -= d * q[j];
	}
	return out;
}
