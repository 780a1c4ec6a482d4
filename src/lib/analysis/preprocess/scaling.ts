import { AnalysisError } from '../errors';

export type ScalingMode = 'center' | 'autoscale' | 'none';

export interface ColumnScaling {
	mode: ScalingMode;
	mean: Float64Array;
	scale: Float64Array;
}

/**
 * Column scaling fitted on one model's own training rows (class modelling needs each class
 * scaled on itself). autoscale uses the n − 1 standard deviation; a constant column keeps scale 1
 * so it contributes nothing instead of dividing by zero.
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
		for (let j = 0; j < p; j++) {
			const s = Math.sqrt(ss[j] / (n - 1));
			scale[j] = s > 0 ? s : 1;
		}
	}
	return { mode, mean, scale };
}

/** Writes (x − mean)/scale into `out`. */
export function applyScaling(x: ArrayLike<number>, s: { mean: ArrayLike<number>; scale: ArrayLike<number> }, out: Float64Array): Float64Array {
	const p = out.length;
	const { mean, scale } = s;
	for (let j = 0; j < p; j++) out[j] = (x[j] - mean[j]) / scale[j];
	return out;
}
