import { AnalysisError } from './errors';
import { stratifiedFolds, type DiscriminantOutcome } from './plsda';

/**
 * k-nearest-neighbour classification (Fix & Hodges 1951, USAF School of Aviation Medicine rep. 4;
 * Cover & Hart 1967, IEEE Trans. Inf. Theory 13:21–27): Euclidean distance, each of the k nearest training
 * rows votes once; a tie between classes goes to the class that sorts first, as scikit-learn's
 * KNeighborsClassifier (weights='uniform') breaks it. Brute force: the training sets are a few hundred rows.
 *
 * ml-knn 3.0.0 gives the reference's predictions on iris, but on a vote tie the class that first reaches the
 * largest count in its kd-tree's neighbour order wins (for three classes at 0, 1, 2 and x = 0.1 it answers the
 * farthest class, scikit-learn the first); it also reports no neighbour shares, which the evidence shows. So the
 * engine votes itself (tests/unit/analysis/discriminant.test.ts shows both).
 */

export interface KnnModel {
	method: 'knn';
	classes: string[];
	k: number;
	kRule: 'cv' | 'fixed';
	/** Candidate k values and their cross-validated misclassification rate (empty when fixed). */
	cvK: number[];
	cvError: number[];
	rows: number[][];
	labels: string[];
}

function checkRows(X: ArrayLike<number>[]): number {
	if (!Array.isArray(X) || X.length === 0) throw new AnalysisError('bad-input', 'kNN needs a non-empty training set');
	const p = X[0].length;
	X.forEach((r, i) => {
		if (r.length !== p) throw new AnalysisError('bad-input', `kNN training row ${i} has ${r.length} values, expected ${p}`);
		for (let j = 0; j < p; j++) if (!Number.isFinite(r[j])) throw new AnalysisError('bad-input', `kNN training row ${i}, value ${j} is not finite`);
	});
	return p;
}

/** The k nearest training rows to x (stable: equal distances keep training order, as a stable sort would). */
function vote(rows: ArrayLike<number>[], labels: string[], classes: string[], x: ArrayLike<number>, k: number, skip?: Set<number>): DiscriminantOutcome {
	const d: { i: number; d: number }[] = [];
	for (let i = 0; i < rows.length; i++) {
		if (skip?.has(i)) continue;
		const r = rows[i];
		let s = 0;
		for (let j = 0; j < r.length; j++) s += (r[j] - x[j]) ** 2;
		d.push({ i, d: s });
	}
	d.sort((a, b) => a.d - b.d || a.i - b.i);
	const counts = new Map(classes.map((c) => [c, 0]));
	const kk = Math.min(k, d.length);
	for (let m = 0; m < kk; m++) counts.set(labels[d[m].i], counts.get(labels[d[m].i])! + 1);
	let chosen = classes[0];
	for (const c of classes) if (counts.get(c)! > counts.get(chosen)!) chosen = c;
	return { chosen, scores: Object.fromEntries(classes.map((c) => [c, counts.get(c)! / kk])) };
}

export function fitKnn(
	X: ArrayLike<number>[],
	labels: string[],
	options: { k?: number | 'auto'; maxK?: number; folds?: number; groups?: (string | null)[] | null } = {}
): KnnModel {
	const { k = 'auto', maxK = 15, folds = 7, groups = null } = options;
	checkRows(X);
	if (labels.length !== X.length) throw new AnalysisError('bad-input', `${labels.length} labels for ${X.length} rows`);
	const classes = [...new Set(labels)].sort();
	if (classes.length < 2) throw new AnalysisError('too-few', 'kNN needs at least two classes');
	const rows = X.map((r) => Array.from(r));
	if (k !== 'auto') {
		if (!Number.isInteger(k) || k < 1 || k > X.length) throw new AnalysisError('bad-option', `k must be an integer in 1..${X.length}, got ${k}`);
		return { method: 'knn', classes, k, kRule: 'fixed', cvK: [], cvError: [], rows, labels: [...labels] };
	}
	const fold = stratifiedFolds(labels, folds, groups);
	const K = Math.max(...fold) + 1;
	const smallest = Math.min(...Array.from({ length: K }, (_, f) => fold.filter((x) => x !== f).length));
	// odd k only, so two classes cannot tie
	const cvK: number[] = [];
	for (let kk = 1; kk <= Math.min(maxK, smallest); kk += 2) cvK.push(kk);
	const wrong = cvK.map(() => 0);
	for (let f = 0; f < K; f++) {
		const skip = new Set(fold.flatMap((x, i) => (x === f ? [i] : [])));
		for (const i of skip) cvK.forEach((kk, m) => (wrong[m] += vote(rows, labels, classes, rows[i], kk, skip).chosen !== labels[i] ? 1 : 0));
	}
	const best = Math.min(...wrong);
	const chosenK = cvK[wrong.indexOf(best)];
	return { method: 'knn', classes, k: chosenK, kRule: 'cv', cvK, cvError: wrong.map((w) => w / X.length), rows, labels: [...labels] };
}

export function predictKnn(model: KnnModel, x: ArrayLike<number>): DiscriminantOutcome {
	if (x.length !== model.rows[0].length) throw new AnalysisError('bad-input', `row has ${x.length} values, the kNN model ${model.rows[0].length}`);
	return vote(model.rows, model.labels, model.classes, x, model.k);
}
