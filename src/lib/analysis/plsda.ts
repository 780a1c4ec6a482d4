import { AnalysisError } from './errors';

/**
 * PLS2 by NIPALS in "regression" mode (Wold's algorithm as written out by Wegelin 2000, tech. rep. 371,
 * Dept. of Statistics, Univ. of Washington, §2–3), and PLS-DA on top of it: Y is the one-hot class matrix,
 * the predicted class is the column with the largest ŷ (Barker & Rayens 2003, J. Chemom. 17:166–173).
 *
 * Why not ml-pls: its predict() multiplies the centred X by P·B·Qᵀ (X loadings), while a PLS2 prediction
 * needs the rotations W(PᵀW)⁻¹; beyond one component it disagrees with scikit-learn's PLSRegression and
 * R pls::plsr (shown in tests/unit/analysis/discriminant.test.ts). This module follows the textbook path,
 * which scikit-learn 1.2 also computes (checked against values made by scripts/reference/discriminant.py).
 */

export interface PlsFit {
	/** Components actually fitted (stops early if X or Y is exhausted). */
	components: number;
	p: number;
	q: number;
	xMean: number[];
	yMean: number[];
	/** p × A weights W, row-major per component: weights[a][j]. */
	weights: number[][];
	/** p × A X loadings P. */
	xLoadings: number[][];
	/** q × A Y loadings C. */
	yLoadings: number[][];
	/** p × A rotations R = W(PᵀW)⁻¹, so t = (x − x̄)R. */
	rotations: number[][];
	/** Training scores T, n × A. */
	scores: number[][];
}

const dot = (a: ArrayLike<number>, b: ArrayLike<number>): number => {
	let s = 0;
	for (let i = 0; i < a.length; i++) s += a[i] * b[i];
	return s;
};

function checkMatrix(X: ArrayLike<number>[], name: string): { n: number; p: number } {
	if (!Array.isArray(X) || X.length === 0) throw new AnalysisError('bad-input', `${name} must be a non-empty array of rows`);
	const p = X[0].length;
	if (!(p >= 1)) throw new AnalysisError('bad-input', `${name} rows must have at least one value`);
	X.forEach((r, i) => {
		if (r.length !== p) throw new AnalysisError('bad-input', `${name} row ${i} has ${r.length} values, expected ${p}`);
		for (let j = 0; j < p; j++) if (!Number.isFinite(r[j])) throw new AnalysisError('bad-input', `${name}[${i}][${j}] is not a finite number`);
	});
	return { n: X.length, p };
}

/**
 * Fits PLS2 with `components` latent variables. X and Y are centred here (never scaled: scale the
 * columns beforehand if wanted). Inner loop as scikit-learn's `_nipals_twoblocks_inner_loop`:
 * w = Xᵀu/uᵀu, w/‖w‖, t = Xw, c = Yᵀt/tᵀt, u = Yc/cᵀc, until ‖Δw‖² < tol; sign fixed so the largest |w_j| is positive.
 */
export function plsFit(X: ArrayLike<number>[], Y: ArrayLike<number>[], components: number, options: { tolerance?: number; maxIterations?: number } = {}): PlsFit {
	const { tolerance = 1e-6, maxIterations = 500 } = options;
	const { n, p } = checkMatrix(X, 'X');
	const { n: ny, p: q } = checkMatrix(Y, 'Y');
	if (ny !== n) throw new AnalysisError('bad-input', `X has ${n} rows but Y has ${ny}`);
	if (!Number.isInteger(components) || components < 1) throw new AnalysisError('bad-components', `components must be a positive integer, got ${components}`);
	if (components > Math.min(n - 1, p)) throw new AnalysisError('bad-components', `${components} components need more data (at most ${Math.min(n - 1, p)} with ${n} rows and ${p} columns)`);
	const xMean = new Array<number>(p).fill(0);
	const yMean = new Array<number>(q).fill(0);
	for (const r of X) for (let j = 0; j < p; j++) xMean[j] += r[j] / n;
	for (const r of Y) for (let j = 0; j < q; j++) yMean[j] += r[j] / n;
	const Xc = X.map((r) => Float64Array.from({ length: p }, (_, j) => r[j] - xMean[j]));
	const Yc = Y.map((r) => Float64Array.from({ length: q }, (_, j) => r[j] - yMean[j]));
	const W: number[][] = [];
	const P: number[][] = [];
	const C: number[][] = [];
	const T: Float64Array[] = [];
	const eps = Number.EPSILON;
	for (let a = 0; a < components; a++) {
		// first Y column with any non-negligible value starts u
		let col = -1;
		for (let k = 0; k < q && col < 0; k++) if (Yc.some((r) => Math.abs(r[k]) > 10 * eps)) col = k;
		if (col < 0) break;
		let u = Float64Array.from(Yc, (r) => r[col]);
		let w = new Float64Array(p);
		let wOld = new Float64Array(p);
		const t = new Float64Array(n);
		const c = new Float64Array(q);
		for (let it = 0; it < maxIterations; it++) {
			const uu = dot(u, u);
			w = new Float64Array(p);
			for (let i = 0; i < n; i++) for (let j = 0; j < p; j++) w[j] += Xc[i][j] * u[i];
			for (let j = 0; j < p; j++) w[j] /= uu;
			const wn = Math.sqrt(dot(w, w)) + eps;
			for (let j = 0; j < p; j++) w[j] /= wn;
			for (let i = 0; i < n; i++) t[i] = dot(Xc[i], w);
			const tt = dot(t, t);
			c.fill(0);
			for (let i = 0; i < n; i++) for (let k = 0; k < q; k++) c[k] += Yc[i][k] * t[i];
			for (let k = 0; k < q; k++) c[k] /= tt;
			const cc = dot(c, c) + eps;
			u = Float64Array.from(Yc, (r) => dot(r, c) / cc);
			let diff = 0;
			for (let j = 0; j < p; j++) diff += (w[j] - wOld[j]) ** 2;
			if (diff < tolerance || q === 1) break;
			wOld = w;
		}
		// sign convention: the largest |w_j| is positive (scikit-learn's _svd_flip_1d)
		let big = 0;
		for (let j = 1; j < p; j++) if (Math.abs(w[j]) > Math.abs(w[big])) big = j;
		if (w[big] < 0) {
			for (let j = 0; j < p; j++) w[j] = -w[j];
			for (let i = 0; i < n; i++) t[i] = -t[i];
		}
		const tt = dot(t, t);
		if (!(tt > 0)) break;
		const pl = new Float64Array(p);
		for (let i = 0; i < n; i++) for (let j = 0; j < p; j++) pl[j] += Xc[i][j] * t[i];
		for (let j = 0; j < p; j++) pl[j] /= tt;
		const cl = new Float64Array(q);
		for (let i = 0; i < n; i++) for (let k = 0; k < q; k++) cl[k] += Yc[i][k] * t[i];
		for (let k = 0; k < q; k++) cl[k] /= tt;
		for (let i = 0; i < n; i++) {
			for (let j = 0; j < p; j++) Xc[i][j] -= t[i] * pl[j];
			for (let k = 0; k < q; k++) Yc[i][k] -= t[i] * cl[k];
		}
		W.push(Array.from(w));
		P.push(Array.from(pl));
		C.push(Array.from(cl));
		T.push(t);
	}
	const A = W.length;
	if (A === 0) throw new AnalysisError('degenerate', 'PLS: X or Y has no variance to model');
	// R = W (PᵀW)⁻¹, with PᵀW upper triangular with unit diagonal in exact arithmetic; solve it generally
	const PtW = Array.from({ length: A }, (_, a) => Array.from({ length: A }, (_, b) => dot(P[a], W[b])));
	const inv = invert(PtW);
	const rotations = Array.from({ length: A }, (_, b) => {
		const r = new Array<number>(p).fill(0);
		for (let a = 0; a < A; a++) {
			const f = inv[a][b];
			if (f !== 0) for (let j = 0; j < p; j++) r[j] += W[a][j] * f;
		}
		return r;
	});
	const scores = Array.from({ length: n }, (_, i) => T.map((t) => t[i]));
	return { components: A, p, q, xMean, yMean, weights: W, xLoadings: P, yLoadings: C, rotations, scores };
}

function invert(M: number[][]): number[][] {
	const A = M.length;
	const a = M.map((r, i) => [...r, ...Array.from({ length: A }, (_, j) => (i === j ? 1 : 0))]);
	for (let c = 0; c < A; c++) {
		let piv = c;
		for (let r = c + 1; r < A; r++) if (Math.abs(a[r][c]) > Math.abs(a[piv][c])) piv = r;
		if (Math.abs(a[piv][c]) < 1e-300) throw new AnalysisError('degenerate', 'PLS: PᵀW is singular');
		[a[c], a[piv]] = [a[piv], a[c]];
		const d = a[c][c];
		for (let k = 0; k < 2 * A; k++) a[c][k] /= d;
		for (let r = 0; r < A; r++)
			if (r !== c && a[r][c] !== 0) {
				const f = a[r][c];
				for (let k = 0; k < 2 * A; k++) a[r][k] -= f * a[c][k];
			}
	}
	return a.map((r) => r.slice(A));
}

/** Scores t = (x − x̄)R of one row, using the first `components` latent variables (default all). */
export function plsTransform(fit: PlsFit, x: ArrayLike<number>, components = fit.components): number[] {
	if (x.length !== fit.p) throw new AnalysisError('bad-input', `row has ${x.length} values, the PLS model ${fit.p}`);
	const A = Math.min(components, fit.components);
	return Array.from({ length: A }, (_, a) => {
		const r = fit.rotations[a];
		let s = 0;
		for (let j = 0; j < fit.p; j++) s += (x[j] - fit.xMean[j]) * r[j];
		return s;
	});
}

/** ŷ = ȳ + t Cᵀ with t from the first `components` latent variables. Note R depends on A: use a fit with exactly A. */
export function plsPredict(fit: PlsFit, x: ArrayLike<number>): number[] {
	const t = plsTransform(fit, x);
	return fit.yMean.map((m, k) => m + t.reduce((s, ta, a) => s + ta * fit.yLoadings[a][k], 0));
}

export interface PlsdaModel {
	method: 'plsda';
	classes: string[];
	components: number;
	/** How the component count was set. */
	componentsRule: 'cv' | 'fixed';
	/** Cross-validated misclassification rate for A = 1..maxComponents (empty when fixed). */
	cvError: number[];
	fit: PlsFit;
}

export interface DiscriminantOutcome {
	chosen: string;
	/** PLS-DA: ŷ per class; kNN: share of the k neighbours per class. */
	scores: Record<string, number>;
}

function oneHot(labels: string[], classes: string[]): number[][] {
	return labels.map((l) => classes.map((c) => (c === l ? 1 : 0)));
}

/** Folds for classifiers: within each class, contiguous blocks (replicates stay together, every class in every training fold). */
export function stratifiedFolds(labels: string[], K: number, groups?: (string | null | undefined)[] | null): number[] {
	if (!Number.isInteger(K) || K < 2) throw new AnalysisError('bad-folds', `folds must be an integer ≥ 2, got ${K}`);
	const fold = new Array<number>(labels.length).fill(0);
	const byClass = new Map<string, number[]>();
	labels.forEach((l, i) => byClass.set(l, [...(byClass.get(l) ?? []), i]));
	for (const idx of byClass.values()) {
		// rows of one group (lot) share a fold
		const keys = idx.map((i) => (groups && groups[i] ? `g:${groups[i]}` : `r:${i}`));
		const order = [...new Set(keys)];
		const Kc = Math.min(K, order.length);
		idx.forEach((i, r) => (fold[i] = Math.floor((order.indexOf(keys[r]) * Kc) / order.length)));
	}
	return fold;
}

const argmax = (y: number[]): number => y.reduce((b, v, i) => (v > y[b] ? i : b), 0);

export function fitPlsda(
	X: ArrayLike<number>[],
	labels: string[],
	options: { components?: number | 'auto'; maxComponents?: number; folds?: number; groups?: (string | null)[] | null } = {}
): PlsdaModel {
	const { components = 'auto', maxComponents = 10, folds = 7, groups = null } = options;
	const { n, p } = checkMatrix(X, 'X');
	if (labels.length !== n) throw new AnalysisError('bad-input', `${labels.length} labels for ${n} rows`);
	const classes = [...new Set(labels)].sort();
	if (classes.length < 2) throw new AnalysisError('too-few', 'PLS-DA needs at least two classes');
	const Y = oneHot(labels, classes);
	if (components !== 'auto') {
		return { method: 'plsda', classes, components, componentsRule: 'fixed', cvError: [], fit: plsFit(X, Y, components) };
	}
	const fold = stratifiedFolds(labels, folds, groups);
	const K = Math.max(...fold) + 1;
	const smallest = Math.min(...Array.from({ length: K }, (_, k) => fold.filter((f) => f !== k).length));
	const Amax = Math.max(1, Math.min(maxComponents, p, smallest - 1));
	const wrong = new Array<number>(Amax).fill(0);
	for (let k = 0; k < K; k++) {
		const tr = fold.flatMap((f, i) => (f !== k ? [i] : []));
		const te = fold.flatMap((f, i) => (f === k ? [i] : []));
		for (let A = 1; A <= Amax; A++) {
			let fit: PlsFit;
			try {
				fit = plsFit(tr.map((i) => X[i]), tr.map((i) => Y[i]), A);
			} catch {
				wrong[A - 1] += te.length;
				continue;
			}
			for (const i of te) if (classes[argmax(plsPredict(fit, X[i]))] !== labels[i]) wrong[A - 1]++;
		}
	}
	const cvError = wrong.map((w) => w / n);
	// fewest components reaching the smallest cross-validated misclassification count
	const best = Math.min(...wrong);
	const A = wrong.findIndex((w) => w <= best) + 1;
	return { method: 'plsda', classes, components: A, componentsRule: 'cv', cvError, fit: plsFit(X, Y, A) };
}

export function predictPlsda(model: PlsdaModel, x: ArrayLike<number>): DiscriminantOutcome {
	const y = plsPredict(model.fit, x);
	return { chosen: model.classes[argmax(y)], scores: Object.fromEntries(model.classes.map((c, k) => [c, y[k]])) };
}
