import { AnalysisError } from '../errors';

export type ScalingMode = 'center' | 'autoscale' | 'none';

export interface ColumnScaling {
	mode: ScalingMode;
	mean: Float64Array;
	scale: Float64Array;
	/** autoscale only: the floor applied (AUTOSCALE_FLOOR × median s.d.) and how many variables it replaced; null otherwise. */
	floor?: { value: number; count: number } | null;
}

/**
 * Autoscale floor, as a fraction of the median training s.d. of the variables. A variable whose training s.d. is
 * below AUTOSCALE_FLOOR × median(s) is divided by that floor instead of its own s.d.: dividing by a near-zero s.d.
 * lets a new spectrum's deviation at that one variable dominate c (issue 12 §4: c/c_crit 566 on iris with a constant
 * column moved, 5·10⁸ with s ≈ 10⁻⁹). 0.1 is our choice (common practice keeps noise-only variables from being
 * blown up to unit variance; no standard fixes the fraction), documented in docs/methods.md §4.
 */
export const AUTOSCALE_FLOOR = 0.1;

/** Median of the positive values (0 when none is positive). */
function medianPositive(xs: Float64Array): number {
	const pos = Array.from(xs).filter((v) => v > 0).sort((a, b) => a - b);
	if (pos.length === 0) return 0;
	const m = pos.length >> 1;
	return pos.length % 2 ? pos[m] : (pos[m - 1] + pos[m]) / 2;
}

/**
 * Column scaling fitted on one model's own training rows (class modelling needs each class
 * scaled on itself). autoscale uses the n − 1 standard deviation, floored at AUTOSCALE_FLOOR × the median
 * s.d. of the variables; when no variable varies at all the scale stays 1.
 */
export function fitScaling(rows: Float64Array[], mode: ScalingMode): ColumnScaling {
	const n = rows.length;
	if (n === 0) throw new AnalysisError('no-training', 'no rows to fit the column scaling on');
	const p = rows[0].length;
	const mean = new Float64Array(p);
	const scale = new Float64Array(p).fill(1);
	if (mode !== 'none') {
		for (const r of rows) for (let j = 0; j < p; j++) mean[j] += r[j];
		for (let j = 0; j < p; j++) mean[j] /= n;
	}
	if (mode === 'autoscale') {
		if (n < 2) throw new AnalysisError('too-few', 'autoscale needs at least 2 rows');
		const ss = new Float64Array(p);
		for (const r of rows)
			for (let j = 0; j < p; j++) {
				const d = r[j] - mean[j];
				ss[j] += d * d;
			}
		const sd = Float64Array.from(ss, (v) => Math.sqrt(v / (n - 1)));
		const med = medianPositive(sd);
		const floor = AUTOSCALE_FLOOR * med;
		let count = 0;
		for (let j = 0; j < p; j++) {
			if (med === 0) scale[j] = 1;
			else if (sd[j] < floor) {
				scale[j] = floor;
				count++;
			} else scale[j] = sd[j];
		}
		return { mode, mean, scale, floor: { value: floor, count } };
	}
	return { mode, mean, scale, floor: null };
}

/** Writes (x − mean)/scale into `out`. */
export function applyScaling(x: ArrayLike<number>, s: { mean: ArrayLike<number>; scale: ArrayLike<number> }, out: Float64Array): Float64Array {
	const p = out.length;
	const { mean, scale } = s;
	for (let j = 0; j < p; j++) out[j] = (x[j] - mean[j]) / scale[j];
	return out;
}
