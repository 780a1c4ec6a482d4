// Photometric figures of an instrument performance check.
// - Photometric linearity: ordinary least squares of the observed responses on the standards' certified values,
//   slope and intercept (USP <1119> before 2008, as quoted by an instrument manual: "The slope must be 1.0 ± 0.05.
//   The zero intercept must be 0.0 ± 0.05"; the current <856> criteria are from memory and editable).
// - Noise: root mean square of the residuals after removing a least-squares straight line from a flat (100 % line
//   or reference) spectrum, so a slow baseline slope does not count as noise. Common practice.
import { AnalysisError } from './errors';

export function linearity(certified: readonly number[], observed: readonly number[]) {
	const n = certified.length;
	if (n < 3 || observed.length !== n) throw new AnalysisError('linearity-input', 'linearity needs at least 3 standards, each with a certified and an observed value');
	for (let i = 0; i < n; i++) if (!Number.isFinite(certified[i]) || !Number.isFinite(observed[i])) throw new AnalysisError('linearity-input', `standard ${i + 1} has a value that is not a number`);
	const mx = certified.reduce((a, b) => a + b, 0) / n;
	const my = observed.reduce((a, b) => a + b, 0) / n;
	let sxx = 0;
	let sxy = 0;
	for (let i = 0; i < n; i++) {
		sxx += (certified[i] - mx) ** 2;
		sxy += (certified[i] - mx) * (observed[i] - my);
	}
	if (!(sxx > 0)) throw new AnalysisError('linearity-input', 'the certified values must not all be equal');
	const slope = sxy / sxx;
	return { slope, intercept: my - slope * mx, n };
}

export function rmsNoise(axis: ArrayLike<number>, values: ArrayLike<number>) {
	const n = values.length;
	if (n < 3 || axis.length !== n) throw new AnalysisError('noise-input', 'noise needs at least 3 points');
	let mx = 0;
	let my = 0;
	for (let i = 0; i < n; i++) {
		if (!Number.isFinite(axis[i]) || !Number.isFinite(values[i])) throw new AnalysisError('noise-input', `point ${i + 1} is not finite`);
		mx += axis[i];
		my += values[i];
	}
	mx /= n;
	my /= n;
	let sxx = 0;
	let sxy = 0;
	for (let i = 0; i < n; i++) {
		sxx += (axis[i] - mx) ** 2;
		sxy += (axis[i] - mx) * (values[i] - my);
	}
	const slope = sxx > 0 ? sxy / sxx : 0;
	let ss = 0;
	for (let i = 0; i < n; i++) ss += (values[i] - my - slope * (axis[i] - mx)) ** 2;
	return Math.sqrt(ss / n);
}
