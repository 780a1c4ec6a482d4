import savitzkyGolayImport from 'ml-savitzky-golay';
import { Matrix, inverse } from 'ml-matrix';
import { AnalysisError } from '../errors';

// The package is CommonJS with a `default` export; Node and Vite interoperate differently.
const savitzkyGolay = (typeof savitzkyGolayImport === 'function'
	? savitzkyGolayImport
	: (savitzkyGolayImport as unknown as { default: typeof savitzkyGolayImport }).default);

export interface SavgolParams {
	window: number;
	polyorder: number;
	deriv: number;
}

export function checkSavgol({ window, polyorder, deriv }: SavgolParams): void {
	if (!Number.isInteger(window) || window < 5 || window % 2 === 0)
		throw new AnalysisError('bad-recipe', `savgol window must be an odd integer ≥ 5, got ${window}`);
	if (!Number.isInteger(polyorder) || polyorder < 1 || polyorder >= window)
		throw new AnalysisError('bad-recipe', `savgol polynomial order must be an integer in 1..${window - 1}, got ${polyorder}`);
	if (!Number.isInteger(deriv) || deriv < 0 || deriv > polyorder)
		throw new AnalysisError('bad-recipe', `savgol derivative must be an integer in 0..${polyorder}, got ${deriv}`);
}

/**
 * Least-squares weights that evaluate the `deriv`-th derivative (per point, before dividing by Δx^deriv)
 * of the order-`polyorder` polynomial fitted to `window` equally spaced points, at offset `at`
 * from the window centre. At at = 0 these are the Savitzky–Golay convolution coefficients.
 */
export function savgolWeights(window: number, polyorder: number, deriv: number, at = 0): Float64Array {
	const m = (window - 1) / 2;
	const J = new Matrix(window, polyorder + 1);
	for (let r = 0; r < window; r++) for (let c = 0; c <= polyorder; c++) J.set(r, c, (r - m) ** c);
	const Jt = J.transpose();
	const H = inverse(Jt.mmul(J)).mmul(Jt); // (polyorder+1) × window: coefficients a = H y
	const w = new Float64Array(window);
	for (let c = deriv; c <= polyorder; c++) {
		let f = 1;
		for (let k = 0; k < deriv; k++) f *= c - k;
		const g = f * at ** (c - deriv);
		for (let r = 0; r < window; r++) w[r] += g * H.get(c, r);
	}
	return w;
}

export interface SavgolPlan {
	params: SavgolParams;
	h: number;
	left: Float64Array[];
	right: Float64Array[];
}

/** Precomputes the edge weights; Δx is the mean spacing of the model axis. */
export function savgolPlan(params: SavgolParams, axis: ArrayLike<number>): SavgolPlan {
	checkSavgol(params);
	const p = axis.length;
	if (p < params.window) throw new AnalysisError('bad-recipe', `savgol window ${params.window} is longer than the ${p}-point axis`);
	const h = (axis[p - 1] - axis[0]) / (p - 1);
	const m = (params.window - 1) / 2;
	const left: Float64Array[] = [];
	const right: Float64Array[] = [];
	for (let i = 0; i < m; i++) {
		left.push(savgolWeights(params.window, params.polyorder, params.deriv, i - m));
		right.push(savgolWeights(params.window, params.polyorder, params.deriv, i + 1));
	}
	return { params, h, left, right };
}

/**
 * Interior points: ml-savitzky-golay (checked against the published tables in the tests).
 * Its padding does not fit the edges, so the first and last (window−1)/2 points are the
 * derivative of the polynomial fitted to the first or last full window, evaluated there.
 */
export function savgol(x: Float64Array, plan: SavgolPlan): Float64Array {
	const { window, polyorder, deriv } = plan.params;
	const p = x.length;
	const m = (window - 1) / 2;
	const interior = savitzkyGolay(Array.from(x), plan.h, { windowSize: window, polynomial: polyorder, derivative: deriv, pad: 'none' });
	const out = new Float64Array(p);
	for (let i = 0; i < interior.length; i++) out[i + m] = interior[i];
	const scale = plan.h ** deriv;
	for (let i = 0; i < m; i++) {
		const wl = plan.left[i];
		const wr = plan.right[i];
		let sl = 0;
		let sr = 0;
		for (let r = 0; r < window; r++) {
			sl += wl[r] * x[r];
			sr += wr[r] * x[p - window + r];
		}
		out[i] = sl / scale;
		out[p - m + i] = sr / scale;
	}
	return out;
}
