// Peak positions of a reference standard by a local quadratic fit (instrument wavelength/wavenumber check).
//
// For each expected band position e (the standard's certificate value):
//   1. take the points with |x − e| ≤ window and find the largest value there (a band maximum; for a reflectance
//      standard use absorbance, log 1/R, so bands are maxima);
//   2. fit y = a + b·u + c·u² by least squares to the 2k + 1 points centred on that maximum (u = x − x_max, so the
//      normal equations stay well conditioned);
//   3. the peak position is the vertex x_max − b/(2c); refuse it when c ≥ 0 (no maximum), when the maximum lies on
//      the window's edge (the band is outside the window), or when the vertex leaves the fitted points.
// A parabola through the top of a symmetric band is exact for a parabola and, for a Gaussian band sampled at a
// small fraction of its width, biased by far less than the sampling step (the unit test states by how much).
// Common practice in instrument software (e.g. centre-of-gravity or polynomial peak picking); not from a standard.
import { AnalysisError } from './errors';

export interface PeakFound {
	expected: number;
	position: number;
	/** position − expected */
	error: number;
	height: number;
}

export function quadraticVertex(x: readonly number[], y: readonly number[]): { position: number; height: number; curvature: number } {
	const n = x.length;
	if (n < 3 || y.length !== n) throw new AnalysisError('peak-input', 'a quadratic fit needs at least 3 points with x and y of equal length');
	const x0 = x[Math.floor(n / 2)];
	// Normal equations for [a, b, c] with u = x − x0.
	let s0 = 0, s1 = 0, s2 = 0, s3 = 0, s4 = 0, t0 = 0, t1 = 0, t2 = 0;
	for (let i = 0; i < n; i++) {
		const u = x[i] - x0;
		const u2 = u * u;
		s0 += 1; s1 += u; s2 += u2; s3 += u2 * u; s4 += u2 * u2;
		t0 += y[i]; t1 += u * y[i]; t2 += u2 * y[i];
	}
	// Solve the 3×3 normal equations by Gaussian elimination with partial pivoting.
	const M = [
		[s0, s1, s2, t0],
		[s1, s2, s3, t1],
		[s2, s3, s4, t2]
	];
	for (let col = 0; col < 3; col++) {
		let piv = col;
		for (let r = col + 1; r < 3; r++) if (Math.abs(M[r][col]) > Math.abs(M[piv][col])) piv = r;
		if (!(Math.abs(M[piv][col]) > 1e-300)) throw new AnalysisError('peak-fit', 'the points do not determine a quadratic');
		[M[col], M[piv]] = [M[piv], M[col]];
		for (let r = 0; r < 3; r++) {
			if (r === col) continue;
			const f = M[r][col] / M[col][col];
			for (let j = col; j < 4; j++) M[r][j] -= f * M[col][j];
		}
	}
	const a = M[0][3] / M[0][0];
	const b = M[1][3] / M[1][1];
	const c = M[2][3] / M[2][2];
	const u = -b / (2 * c);
	return { position: x0 + u, height: a + b * u + c * u * u, curvature: c };
}

/**
 * Peak positions near each expected band. `window` is the search half-width in axis units; `halfPoints` (k) the
 * number of points each side of the maximum used in the fit (default 2: five points).
 */
export function peakPositions(axis: ArrayLike<number>, values: ArrayLike<number>, expected: readonly number[], options: { window: number; halfPoints?: number }): PeakFound[] {
	const n = axis.length;
	if (n < 5 || values.length !== n) throw new AnalysisError('peak-input', 'the spectrum needs at least 5 points and as many values as axis points');
	for (let i = 0; i < n; i++) if (!Number.isFinite(axis[i]) || !Number.isFinite(values[i])) throw new AnalysisError('peak-input', `point ${i + 1} is not finite`);
	const k = options.halfPoints ?? 2;
	if (!Number.isInteger(k) || k < 1) throw new AnalysisError('peak-input', 'halfPoints must be a whole number ≥ 1');
	if (!(options.window > 0)) throw new AnalysisError('peak-input', 'the search window must be positive');
	if (!expected.length) throw new AnalysisError('peak-input', 'name at least one expected band');
	return expected.map((e) => {
		let best = -1;
		let first = -1;
		let last = -1;
		for (let i = 0; i < n; i++) {
			if (Math.abs(axis[i] - e) > options.window) continue;
			if (first < 0) first = i;
			last = i;
			if (best < 0 || values[i] > values[best]) best = i;
		}
		if (best < 0) throw new AnalysisError('peak-not-covered', `the spectrum does not cover the band expected at ${e}`);
		const lo = Math.min(first, last);
		const hi = Math.max(first, last);
		if (best === lo || best === hi) throw new AnalysisError('peak-not-found', `no band maximum within ±${options.window} of ${e}: the largest value lies on the edge of the window`);
		if (best - k < 0 || best + k >= n) throw new AnalysisError('peak-not-found', `the band near ${e} is too close to the end of the spectrum for the fit`);
		const xs: number[] = [];
		const ys: number[] = [];
		for (let i = best - k; i <= best + k; i++) {
			xs.push(axis[i]);
			ys.push(values[i]);
		}
		const fit = quadraticVertex(xs, ys);
		const lowX = Math.min(xs[0], xs[xs.length - 1]);
		const highX = Math.max(xs[0], xs[xs.length - 1]);
		if (!(fit.curvature < 0) || fit.position < lowX || fit.position > highX) throw new AnalysisError('peak-not-found', `the points near ${e} do not form a band maximum`);
		return { expected: e, position: fit.position, error: fit.position - e, height: fit.height };
	});
}
