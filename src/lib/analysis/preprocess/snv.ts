import { AnalysisError } from '../errors';

/** Standard normal variate: (x − mean)/s within one spectrum, s on p − 1 degrees of freedom (Barnes et al. 1989). */
export function snv(x: Float64Array): Float64Array {
	const p = x.length;
	if (p < 2) throw new AnalysisError('bad-shape', 'SNV needs at least 2 points');
	let mean = 0;
	for (let j = 0; j < p; j++) mean += x[j];
	mean /= p;
	let ss = 0;
	for (let j = 0; j < p; j++) ss += (x[j] - mean) ** 2;
	const s = Math.sqrt(ss / (p - 1));
	if (!(s > 0)) throw new AnalysisError('flat-spectrum', 'SNV is undefined for a flat spectrum (standard deviation 0)');
	const out = new Float64Array(p);
	for (let j = 0; j < p; j++) out[j] = (x[j] - mean) / s;
	return out;
}
