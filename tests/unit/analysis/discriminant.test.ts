// PLS-DA and kNN against scikit-learn 1.2.1 (Debian python3-sklearn) on Fisher's iris: PLSRegression(scale=False)
// and KNeighborsClassifier(algorithm='brute'). Reference values made by scripts/reference/discriminant.py and
// committed in fixtures/reference/discriminant.json; this test needs no Python.
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { describe, expect, test } from 'vitest';
import { PLS } from 'ml-pls';
import KNN from 'ml-knn';
import { fitKnn, fitPlsda, plsFit, plsPredict, plsTransform, predictKnn, predictPlsda } from '../../../src/lib/analysis';
import { iris, root } from './fixtures';

interface PlsRef {
	x_weights: number[][];
	x_loadings: number[][];
	y_loadings: number[][];
	x_rotations: number[][];
	x_scores: number[][];
	predict: number[][];
	predicted_class: string[];
}
const ref = JSON.parse(readFileSync(resolve(root, 'fixtures/reference/discriminant.json'), 'utf8')) as {
	classes: string[];
	pls: Record<string, PlsRef>;
	knn: Record<string, { train: number[]; test: number[]; predict: string[]; proba: number[][] }>;
};
const data = iris();
const X = data.map((s) => Array.from(s.values));
const labels = data.map((s) => s.className as string);
const Y = labels.map((l) => ref.classes.map((c) => (c === l ? 1 : 0)));
const maxAbsDiff = (a: number[][], b: number[][]) => Math.max(...a.flatMap((r, i) => r.map((v, j) => Math.abs(v - b[i][j]))));

describe('PLS2 (NIPALS, regression mode) against scikit-learn PLSRegression(scale=False) on iris', () => {
	test.each(['1', '2', '3'])('%s component(s): weights, loadings, rotations, scores and predictions agree to 1e-6', (key) => {
		const A = Number(key);
		const r = ref.pls[key];
		const fit = plsFit(X, Y, A);
		expect(fit.components).toBe(A);
		expect(maxAbsDiff(fit.weights, r.x_weights)).toBeLessThan(1e-6);
		expect(maxAbsDiff(fit.xLoadings, r.x_loadings)).toBeLessThan(1e-6);
		expect(maxAbsDiff(fit.yLoadings, r.y_loadings)).toBeLessThan(1e-6);
		expect(maxAbsDiff(fit.rotations, r.x_rotations)).toBeLessThan(1e-6);
		expect(maxAbsDiff(X.map((x) => plsTransform(fit, x)), r.x_scores)).toBeLessThan(1e-6);
		expect(maxAbsDiff(X.map((x) => plsPredict(fit, x)), r.predict)).toBeLessThan(1e-6);
	});
	test('PLS-DA with a fixed count picks the class scikit-learn\'s argmax picks, for every flower', () => {
		for (const A of [1, 2, 3]) {
			const m = fitPlsda(X, labels, { components: A });
			expect(X.map((x) => predictPlsda(m, x).chosen)).toEqual(ref.pls[String(A)].predicted_class);
		}
	});
	test('ml-pls 4.4.1 disagrees beyond one component, which is why the engine has its own PLS', () => {
		// ml-pls predicts with the X loadings P·B·Qᵀ instead of the rotations W(PᵀW)⁻¹; scale:false also skips centring,
		// so it is given centred data here and its ȳ added back.
		const xm = X[0].map((_, j) => X.reduce((s, r) => s + r[j], 0) / X.length);
		const ym = Y[0].map((_, j) => Y.reduce((s, r) => s + r[j], 0) / Y.length);
		const Xc = X.map((r) => r.map((v, j) => v - xm[j]));
		const Yc = Y.map((r) => r.map((v, j) => v - ym[j]));
		const diff = (A: number) => {
			const pls = new PLS({ latentVectors: A, scale: false }, {});
			pls.train(Xc, Yc);
			const yhat = (pls.predict(Xc) as { to2DArray(): number[][] }).to2DArray().map((r) => r.map((v, j) => v + ym[j]));
			return maxAbsDiff(yhat, ref.pls[String(A)].predict);
		};
		expect(diff(2)).toBeGreaterThan(1e-3);
		expect(diff(3)).toBeGreaterThan(1e-3);
	});
	test('cross-validated component choice is one of the candidates and refits with that count', () => {
		const m = fitPlsda(X, labels, { folds: 5 });
		expect(m.componentsRule).toBe('cv');
		expect(m.cvError).toHaveLength(4); // A ≤ min(10, p = 4, smallest training fold − 1)
		expect(m.cvError[m.components - 1]).toBe(Math.min(...m.cvError));
		expect(m.fit.components).toBe(m.components);
	});
	test('bad input is refused with a reason', () => {
		expect(() => plsFit(X, Y.slice(1), 2)).toThrow(/X has 150 rows but Y has 149/);
		expect(() => plsFit(X, Y, 5)).toThrow(/5 components need more data/);
		expect(() => fitPlsda(X, labels.map(() => 'one'))).toThrow(/at least two classes/);
	});
});

describe('kNN against scikit-learn KNeighborsClassifier(algorithm="brute") on iris (even rows train, odd rows test)', () => {
	// Where the k-th and (k+1)-th nearest distances are equal (iris has repeated values), which neighbour is "k-th"
	// is undefined and depends on rounding (scikit-learn computes ‖x‖² − 2x·y + ‖y‖²): neighbour shares may differ
	// only on such rows, and the predicted class never.
	test.each(['1', '3', '5', '7', '15'])('k = %s: every prediction agrees; neighbour shares agree on every row without a tie at the k-th distance', (key) => {
		const r = ref.knn[key];
		const k = Number(key);
		const m = fitKnn(
			r.train.map((i) => X[i]),
			r.train.map((i) => labels[i]),
			{ k }
		);
		const out = r.test.map((i) => predictKnn(m, X[i]));
		expect(out.map((o) => o.chosen)).toEqual(r.predict);
		const tied = r.test.map((i) => {
			const d = r.train.map((t) => X[t].reduce((s, v, j) => s + (v - X[i][j]) ** 2, 0)).sort((a, b) => a - b);
			return Math.abs(d[k - 1] - d[k]) <= 1e-9 * Math.max(d[k], 1e-12);
		});
		const differs = out.map((o, n) => Math.max(...ref.classes.map((c, j) => Math.abs(o.scores[c] - r.proba[n][j]))) > 1e-12);
		expect(differs.filter((d, n) => d && !tied[n])).toEqual([]);
		expect(differs.filter(Boolean).length).toBeLessThanOrEqual(1);
	});
	test('a three-way vote tie goes to the class that sorts first, as in scikit-learn', () => {
		const t = (ref as unknown as { knn_tie: { train: number[][]; labels: string[]; x: number[]; k: number; predict: string } }).knn_tie;
		expect(predictKnn(fitKnn(t.train, t.labels, { k: t.k }), t.x).chosen).toBe(t.predict);
		// ml-knn 3.0.0 lets the class that first reaches the largest count in its neighbour order win instead
		expect(new KNN(t.train, t.labels, { k: t.k }).predict(t.x)).not.toBe(t.predict);
	});
	test('ml-knn 3.0.0 gives the reference predictions on this split (no vote ties here)', () => {
		const mismatches: Record<string, number> = {};
		for (const key of Object.keys(ref.knn)) {
			const r = ref.knn[key];
			const knn = new KNN(r.train.map((i) => X[i]), r.train.map((i) => labels[i]), { k: Number(key) });
			const pred = knn.predict(r.test.map((i) => X[i])) as string[];
			mismatches[key] = pred.filter((p, n) => p !== r.predict[n]).length;
		}
		expect(mismatches).toEqual({ '1': 0, '3': 0, '5': 0, '7': 0, '15': 0 });
	});
	test('cross-validated k is odd and has the smallest CV error', () => {
		const m = fitKnn(X, labels, { folds: 5 });
		expect(m.kRule).toBe('cv');
		expect(m.k % 2).toBe(1);
		expect(m.cvError[m.cvK.indexOf(m.k)]).toBe(Math.min(...m.cvError));
	});
});
