import { AnalysisError } from './errors';
import { resampleOnto } from './axis';
import { parseRecipe, scalingMode } from './preprocess/recipe';
import { fitScaling } from './preprocess/scaling';
import { fitPlsda, predictPlsda } from './plsda';
import { fitKnn, predictKnn } from './knn';
import { prepareArtefact, screen, type ScreenResult } from './screen';
import { pathKey, treeOf, walkTree } from './tree';
import type { ModelArtefact } from './artefact';
import type { SpectrumInput } from './build';

/**
 * Validation of a model tree (issue 13): one confusion matrix per node and one for the whole path, and the honest
 * comparison with closed-set classifiers (PLS-DA, kNN) trained on the same training set with the same recipe.
 */

export const NONE_OF_THESE = 'none of these';
export const NOT_REACHED = 'stopped above';
export const FROM_ELSEWHERE = 'from elsewhere';

export interface NodeConfusion {
	/** The node whose children are decided ([] = the root: its children are the first level). */
	node: string[];
	method: 'one-class' | 'plsda' | 'knn';
	/** Rows: the children, then FROM_ELSEWHERE (spectra that reached the node but belong elsewhere, aliens included). */
	rows: string[];
	/** Columns: the children, then NONE_OF_THESE (the level answered none, or the root model refused), then NOT_REACHED. */
	columns: string[];
	counts: number[][];
	/** Spectra expected below this node that the level sent to the right child, of those expected below it. */
	correct: number;
	expected: number;
}

export interface PathConfusion {
	/** Expected leaf paths ("genuine/site-b"), then "alien" for test objects of no class. */
	rows: string[];
	/** Predicted: each leaf path, then "partial path" (ended above a leaf), then "no class" (no level-1 class chosen). */
	columns: string[];
	counts: number[][];
}

export interface TreeValidation {
	nodes: NodeConfusion[];
	path: PathConfusion;
}

/** `expected`: the expected label path ("diluted/starch", or a level-1 class), or null for an alien. */
export function treeConfusions(artefact: ModelArtefact, results: (Pick<ScreenResult, 'path' | 'levels'> & { expected: string | null })[]): TreeValidation {
	const tree = treeOf(artefact);
	const all = walkTree(tree);
	const leaves = all.filter((n) => n.children.length === 0 && n.path.length > 0).map((n) => pathKey(n.path));
	const expectedPath = (e: string | null) => (e === null ? null : e.split('/'));
	const nodes: NodeConfusion[] = all
		.filter((n) => n.children.length > 0)
		.map((n) => {
			const children = n.children.map((c) => c.name);
			const rows = [...children, FROM_ELSEWHERE];
			const columns = [...children, NONE_OF_THESE, NOT_REACHED];
			const counts = rows.map(() => new Array<number>(columns.length).fill(0));
			let correct = 0;
			let expected = 0;
			const key = pathKey(n.path);
			const depth = n.path.length;
			for (const r of results) {
				const exp = expectedPath(r.expected);
				const below = exp !== null && exp.length > depth && pathKey(exp.slice(0, depth)) === key;
				const level = r.levels.find((l) => pathKey(l.node) === key);
				// the root is always reached; a deeper node only when the walk chose it
				const reached = depth === 0 || (r.path.length >= depth && pathKey(r.path.slice(0, depth)) === key);
				if (!below && !reached) continue;
				const row = below ? children.indexOf(exp![depth]) : children.length;
				if (row < 0) continue;
				const col = !reached ? columns.length - 1 : level?.chosen ? children.indexOf(level.chosen) : children.length;
				counts[row][col < 0 ? children.length : col]++;
				if (below) {
					expected++;
					if (reached && level?.chosen === exp![depth]) correct++;
				}
			}
			return { node: n.path, method: n.split?.method ?? 'one-class', rows, columns, counts, correct, expected };
		});
	const pathRows = [...leaves, 'alien'];
	const pathColumns = [...leaves, 'partial path', 'no class'];
	const pathCounts = pathRows.map(() => new Array<number>(pathColumns.length).fill(0));
	for (const r of results) {
		const exp = r.expected === null ? 'alien' : r.expected;
		const row = pathRows.indexOf(exp);
		if (row < 0) continue;
		const got = pathKey(r.path);
		const col = r.path.length === 0 ? pathColumns.length - 1 : leaves.includes(got) ? leaves.indexOf(got) : pathColumns.length - 2;
		pathCounts[row][col]++;
	}
	return { nodes, path: { rows: pathRows, columns: pathColumns, counts: pathCounts } };
}

export interface ClassifierComparison {
	method: 'plsda' | 'knn';
	/** Cross-validated choice: PLS-DA latent variables, or kNN k (odd, 1..15). */
	chosen: number;
	rule: 'cv';
	/** Cross-validated misclassification rate per candidate (PLS-DA: A = 1..; kNN: the candidate ks). */
	cvError: number[];
	candidates: number[];
	/** Rows: the first-level nodes, then "alien"; columns: the first-level nodes (a closed set has no "none"). */
	rows: string[];
	columns: string[];
	counts: number[][];
	/** Challenge (alien) spectra it assigns to the genuine class: a closed-set classifier must assign them somewhere. */
	aliensCalledGenuine: number;
	aliens: number;
	/** Test spectra of a level-1 class it assigns to that class. */
	correct: number;
	known: number;
	unusable: number;
}

export interface DiscriminantComparison {
	/** The first-level nodes: the labels the classifiers choose among. */
	level1: string[];
	genuine: string | null;
	recipe: string;
	/** The one-class tree on the same spectra: aliens it calls genuine, known spectra it names correctly at level 1. */
	oneClass: { aliensCalledGenuine: number; aliens: number; correct: number; known: number };
	classifiers: ClassifierComparison[];
}

/**
 * Trains PLS-DA and kNN on the artefact's training spectra (level-1 labels, the artefact's recipe: its row steps as
 * fitted at build, then its column scaling fitted on the training rows) and classifies the test and challenge spectra
 * that the one-class tree screened. `training[i].className` may be a label path; its first level is the class.
 */
export function compareDiscriminants(
	artefact: ModelArtefact,
	training: (SpectrumInput & { className: string; group?: string | null })[],
	tests: (SpectrumInput & { expected: string | null })[],
	options: { folds?: number; results?: ScreenResult[] } = {}
): DiscriminantComparison | null {
	const K = treeOf(artefact).children.map((c) => c.name);
	if (K.length < 2) return null;
	const folds = options.folds ?? artefact.options.folds;
	const prep = prepareArtefact(artefact);
	const rowOf = (s: SpectrumInput): Float64Array | null => {
		const r = resampleOnto(s, prep.axis, { maxGap: prep.maxGap });
		if (!r.ok) return null;
		try {
			const x = prep.pipeline.apply(r.values);
			return x.every((v) => Number.isFinite(v)) ? x : null;
		} catch (e) {
			if (e instanceof AnalysisError) return null;
			throw e;
		}
	};
	const top = (label: string) => label.split('/')[0];
	const trainRows: Float64Array[] = [];
	const trainLabels: string[] = [];
	const trainGroups: (string | null)[] = [];
	for (const t of training) {
		const x = rowOf(t);
		if (!x) throw new AnalysisError('bad-input', `training spectrum "${t.id}" cannot be preprocessed with the version's recipe`);
		if (!K.includes(top(t.className))) throw new AnalysisError('bad-class', `training spectrum "${t.id}" is labelled "${t.className}", not a class of the version (${K.join(', ')})`);
		trainRows.push(x);
		trainLabels.push(top(t.className));
		trainGroups.push(t.group ?? null);
	}
	const mode = scalingMode(parseRecipe(artefact.recipe));
	const sc = fitScaling(trainRows, mode);
	const z = (x: Float64Array) => Float64Array.from(x, (v, j) => (v - sc.mean[j]) / sc.scale[j]);
	const Z = trainRows.map(z);
	const groups = trainGroups.some((g) => g !== null) ? trainGroups : null;
	const testRows = tests.map((t) => {
		const x = rowOf(t);
		return x ? z(x) : null;
	});
	const expectedTop = tests.map((t) => (t.expected !== null && K.includes(top(t.expected)) ? top(t.expected) : null));
	const rows = [...K, 'alien'];

	const classifiers: ClassifierComparison[] = (['plsda', 'knn'] as const).map((method) => {
		const model = method === 'plsda' ? fitPlsda(Z, trainLabels, { components: 'auto', folds, groups }) : fitKnn(Z, trainLabels, { k: 'auto', folds, groups });
		const counts = rows.map(() => new Array<number>(K.length).fill(0));
		let aliens = 0;
		let aliensCalledGenuine = 0;
		let correct = 0;
		let known = 0;
		let unusable = 0;
		testRows.forEach((x, i) => {
			if (!x) {
				unusable++;
				return;
			}
			const chosen = (model.method === 'plsda' ? predictPlsda(model, x) : predictKnn(model, x)).chosen;
			const exp = expectedTop[i];
			counts[exp === null ? K.length : K.indexOf(exp)][K.indexOf(chosen)]++;
			if (exp === null) {
				aliens++;
				if (chosen === artefact.genuine) aliensCalledGenuine++;
			} else {
				known++;
				if (chosen === exp) correct++;
			}
		});
		const candidates = model.method === 'plsda' ? model.cvError.map((_, a) => a + 1) : model.cvK;
		return {
			method,
			chosen: model.method === 'plsda' ? model.components : model.k,
			rule: 'cv' as const,
			cvError: model.cvError,
			candidates,
			rows,
			columns: [...K],
			counts,
			aliensCalledGenuine,
			aliens,
			correct,
			known,
			unusable
		};
	});
	const results = options.results ?? tests.map((t) => screen(prep, t));
	const oneClass = { aliensCalledGenuine: 0, aliens: 0, correct: 0, known: 0 };
	results.forEach((r, i) => {
		const exp = expectedTop[i];
		if (exp === null) {
			oneClass.aliens++;
			if (r.verdict === 'genuine') oneClass.aliensCalledGenuine++;
		} else {
			oneClass.known++;
			if (r.path[0] === exp) oneClass.correct++;
		}
	});
	return { level1: K, genuine: artefact.genuine, recipe: artefact.recipe, oneClass, classifiers };
}
