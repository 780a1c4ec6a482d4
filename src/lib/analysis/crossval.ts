import { AnalysisError } from './errors';
import { pca, type Mat } from './pca';
import { fitScaling, type ScalingMode } from './preprocess/scaling';
import { cumulativeLeverage, ekfAccumulateWith, ekfMargins } from './ekf';
import { blockedPressAccumulate, blockFactors, DEFAULT_VARIABLE_BLOCKS, variableBlocks } from './ekf-blocked';

export interface FoldLayout {
	K: number;
	fold: Int32Array;
	grouped: boolean;
}

/**
 * Contiguous folds: object i goes to fold ⌊iK/n⌋, so replicate scans stored next to each other stay
 * together (venetian blinds would split them and make PRESS optimistic). With groups, every
 * group (e.g. supplier lot) lies in one fold; groups are taken in order of first appearance
 * and spread contiguously over min(K, number of groups) folds.
 */
export function foldLayout(n: number, K: number, groups?: (string | null | undefined)[] | null): FoldLayout {
	if (!Number.isInteger(K) || K < 2) throw new AnalysisError('bad-folds', `folds must be an integer ≥ 2, got ${K}`);
	const fold = new Int32Array(n);
	if (groups && groups.some((g) => g !== null && g !== undefined && g !== '')) {
		const order: string[] = [];
		const index = new Map<string, number>();
		const keys = groups.map((g, i) => (g === null || g === undefined || g === '' ? `\u0000row${i}` : String(g)));
		for (const k of keys) if (!index.has(k)) index.set(k, order.push(k) - 1);
		const G = order.length;
		if (G < 2) throw new AnalysisError('bad-folds', 'grouped cross-validation needs at least 2 groups');
		const Kg = Math.min(K, G);
		for (let i = 0; i < n; i++) fold[i] = Math.floor((index.get(keys[i])! * Kg) / G);
		return { K: Kg, fold, grouped: true };
	}
	const Kc = Math.min(K, n);
	for (let i = 0; i < n; i++) fold[i] = Math.floor((i * Kc) / n);
	return { K: Kc, fold, grouped: false };
}

export interface CvResult {
	Amax: number;
	/** PRESS(A), A = 0..Amax (A = 0: deviations from the fold mean), variables left out in contiguous blocks. */
	press: Float64Array;
	/** The same with one variable left out at a time (for comparison: optimistic on densely sampled spectra). */
	pressElementwise: Float64Array;
	/** Number of contiguous variable blocks used for `press`. */
	variableBlocks: number;
	/** Cross-validated h and v of each object for A = 0..Amax, row-major n×(Amax+1). */
	h: Float64Array;
	v: Float64Array;
}

/** Smallest training-fold size, which caps the number of components a fold model can have. */
export function smallestFold(layout: FoldLayout, n: number): number {
	const counts = new Array<number>(layout.K).fill(0);
	for (let i = 0; i < n; i++) counts[layout.fold[i]]++;
	return n - Math.max(...counts);
}

/**
 * Refits the column scaling and PCA without each fold, then scores the fold's objects on it:
 * their h and v for every A, and the ekf PRESS. `Z` holds the rows scaled by the full-model
 * scaling; with centring only and n ≤ p, each fold's Gram matrix is a re-centred block of
 * the full one, so no fold recomputes the n²p product.
 */
export function crossValidate(
	raw: Float64Array[],
	Z: Mat,
	gram: Float64Array | null,
	mode: ScalingMode,
	layout: FoldLayout,
	Amax: number,
	onFold?: (fold: number, folds: number) => void,
	blockCount = DEFAULT_VARIABLE_BLOCKS
): CvResult {
	const n = Z.rows;
	const p = Z.cols;
	const W = Amax + 1;
	const press = new Float64Array(W);
	const pressElementwise = new Float64Array(W);
	const blocks = variableBlocks(p, blockCount);
	const h = new Float64Array(n * W);
	const v = new Float64Array(n * W);
	for (let f = 0; f < layout.K; f++) {
		const train: number[] = [];
		const test: number[] = [];
		for (let i = 0; i < n; i++) (layout.fold[i] === f ? test : train).push(i);
		if (test.length === 0) continue;
		const m = train.length;
		if (Amax > m - 1) throw new AnalysisError('too-few', `fold ${f + 1} leaves ${m} training objects, too few for ${Amax} components`);
		const Zf = new Float64Array(m * p);
		let shift: Float64Array;
		let scale: Float64Array | null = null;
		let foldGram: Float64Array | undefined;
		if (mode === 'autoscale') {
			const sc = fitScaling(train.map((i) => raw[i]), 'autoscale');
			shift = sc.mean;
			scale = sc.scale;
			for (let r = 0; r < m; r++) {
				const x = raw[train[r]];
				for (let j = 0; j < p; j++) Zf[r * p + j] = (x[j] - shift[j]) / scale[j];
			}
		} else {
			shift = new Float64Array(p);
			if (mode === 'center') {
				for (const i of train) for (let j = 0; j < p; j++) shift[j] += Z.data[i * p + j];
				for (let j = 0; j < p; j++) shift[j] /= m;
			}
			for (let r = 0; r < m; r++) {
				const base = train[r] * p;
				for (let j = 0; j < p; j++) Zf[r * p + j] = Z.data[base + j] - shift[j];
			}
			if (gram && m <= p) {
				foldGram = new Float64Array(m * m);
				const rowMean = new Float64Array(m);
				for (let a = 0; a < m; a++) {
					let s = 0;
					const ga = train[a] * n;
					for (let b = 0; b < m; b++) {
						const g = gram[ga + train[b]];
						foldGram[a * m + b] = g;
						s += g;
					}
					rowMean[a] = s / m;
				}
				if (mode === 'center') {
					let all = 0;
					for (let a = 0; a < m; a++) all += rowMean[a];
					all /= m;
					for (let a = 0; a < m; a++) for (let b = 0; b < m; b++) foldGram[a * m + b] += all - rowMean[a] - rowMean[b];
				}
			}
		}
		// fold models feed PRESS and CV distances only, which need far fewer digits than the stored model
		const fit = pca({ data: Zf, rows: m, cols: p }, Amax, { gram: foldGram, tol: 1e-8 });
		const margin = ekfMargins(cumulativeLeverage(fit.loadings, Amax, p), Amax, p);
		const factors = blockFactors(fit.loadings, Amax, p, blocks);
		const z = new Float64Array(p);
		const e = new Float64Array(p);
		const t = new Float64Array(Amax);
		for (const i of test) {
			if (mode === 'autoscale') {
				const x = raw[i];
				for (let j = 0; j < p; j++) z[j] = (x[j] - shift[j]) / scale![j];
			} else {
				const base = i * p;
				for (let j = 0; j < p; j++) z[j] = Z.data[base + j] - shift[j];
			}
			ekfAccumulateWith(z, fit.loadings, fit.eigenvalues, Amax, p, margin, pressElementwise, v.subarray(i * W, (i + 1) * W), h.subarray(i * W, (i + 1) * W), e, t);
			// t now holds the row's scores on the fold model
			blockedPressAccumulate(z, fit.loadings, t, p, factors, press);
		}
		onFold?.(f + 1, layout.K);
	}
	press[0] = pressElementwise[0];
	return { Amax, press, pressElementwise, variableBlocks: blocks.start.length, h, v };
}

/**
 * Suggested number of components: the smallest A ≥ 1 whose PRESS is within `tolerance` (1 %) of
 * the minimum PRESS over A = 1..Amax; extra components must earn more than 1 % of prediction error.
 */
export function suggestComponents(press: ArrayLike<number>, tolerance = 0.01): number {
	let min = Infinity;
	for (let a = 1; a < press.length; a++) if (press[a] < min) min = press[a];
	if (!Number.isFinite(min)) return 1;
	for (let a = 1; a < press.length; a++) if (press[a] <= (1 + tolerance) * min) return a;
	return 1;
}
