import { AnalysisError } from '../errors';

/** MSC reference: the mean of the training spectra at this point of the recipe (Geladi et al. 1985). */
export function mscReference(rows: Float64Array[]): Float64Array {
	if (rows.length === 0) throw new AnalysisError('no-training', 'MSC needs training spectra for its reference');
	const p = rows[0].length;
	const m = new Float64Array(p);
	for (const r of rows) for (let j = 0; j < p; j++) m[j] += r[j];
	for (let j = 0; j < p; j++) m[j] /= rows.length;
	return m;
}

/** Fits x = a + b·m by ordinary least squares, returns (x − a)/b. */
export function msc(x: Float64Array, reference: ArrayLike<number>): Float64Array {
	const p = x.length;
	if (reference.length !== p) throw new AnalysisError('bad-shape', `MSC reference has ${reference.length} points, spectrum ${p}`);
	let mx = 0;
	let mm = 0;
	for (let j = 0; j < p; j++) {
		mx += x[j];
		mm += reference[j];
	}
	mx /= p;
	mm /= p;
	let sxm = 0;
	let smm = 0;
	for (let j = 0; j < p; j++) {
		const dm = reference[j] - mm;
		sxm += (x[j] - mx) * dm;
		smm += dm * dm;
	}
	if (!(smm > 0)) throw new AnalysisError('flat-reference', 'MSC reference spectrum is flat');
	const b = sxm / smm;
	const a = mx - b * mm;
	if (!(Math.abs(b) > 1e-12)) throw new AnalysisError('flat-spectrum', 'MSC slope is zero: the spectrum does not resemble the reference');
	const out = new Float64Array(p);
	for (let j = 0; j < p; j++) out[j] = (x[j] - a) / b;
	return out;
}
