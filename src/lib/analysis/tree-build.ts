import { AnalysisError } from './errors';
import { fitRowSteps, formatRecipe, parseRecipe, rangesOf, rowSteps, scalingMode, type RecipeStep } from './preprocess/recipe';
import { fitScaling, type ScalingMode } from './preprocess/scaling';
import { fitPlsda } from './plsda';
import { fitKnn } from './knn';
import { pathKey } from './tree';
import type { ModelJson, SplitJson, SplitMethod } from './artefact';

/** Per-node build options, keyed by the node's path ("diluted", "genuine", "suspect/diluted"). */
export interface NodeOptions {
	method?: SplitMethod;
	/** Recipe for the models of this node's children (default: the root recipe). */
	recipe?: string;
	/** One-class children: components per child model; PLS-DA: latent variables. */
	components?: number | 'auto';
	/** kNN: neighbours. */
	k?: number | 'auto';
}

export type ChildFitter = (rows: Float64Array[], ids: string[], groups: (string | null)[] | null, cfg: { name: string; kind: 'genuine' | 'suspect'; components: number | 'auto'; mode: ScalingMode; label: string }) => ModelJson;

export interface SplitBuildInput {
	/** Label path of each training spectrum (level 1 first). */
	paths: string[][];
	/** Resampled, un-preprocessed spectra on the artefact axis. */
	resampled: Float64Array[];
	axisX: Float64Array | number[];
	ids: string[];
	groups: (string | null)[] | null;
	genuine: string | null;
	nodes: Record<string, NodeOptions>;
	rootRecipe: string;
	components: number | 'auto';
	folds: number;
	fit: ChildFitter;
	onNode?: (key: string) => void;
}

function windowOf(steps: RecipeStep[], axisX: ArrayLike<number>, key: string, inherited = false): [number, number] {
	if (steps.some((s) => s.op === 'gaps')) throw new AnalysisError('bad-recipe', `node "${key}": gaps(n) belongs to the root recipe only`);
	const ranges = steps.filter((s) => s.op === 'range');
	// the version's own windows (a node inheriting the version's recipe) already made the model axis
	if (ranges.length > 1) {
		if (inherited) return [0, axisX.length];
		throw new AnalysisError('bad-recipe', `node "${key}": a node recipe takes at most one range window (several windows belong to the version's recipe)`);
	}
	const r = ranges[0];
	if (!r || r.op !== 'range') return [0, axisX.length];
	let start = 0;
	while (start < axisX.length && axisX[start] < r.from - 1e-9) start++;
	let end = start;
	while (end < axisX.length && axisX[end] <= r.to + 1e-9) end++;
	if (end - start < 2) throw new AnalysisError('bad-recipe', `node "${key}": range(${r.from},${r.to}) keeps ${end - start} point(s) of the model axis (${axisX[0]}–${axisX[axisX.length - 1]})`);
	return [start, end];
}

function spectraStats(rows: Float64Array[], idx: number[]): { n: number; mean: number[]; sd: number[] } {
	const p = rows[0].length;
	const mean = new Float64Array(p);
	const sd = new Float64Array(p);
	for (const i of idx) for (let j = 0; j < p; j++) mean[j] += rows[i][j];
	for (let j = 0; j < p; j++) mean[j] /= idx.length;
	for (const i of idx) for (let j = 0; j < p; j++) sd[j] += (rows[i][j] - mean[j]) ** 2;
	for (let j = 0; j < p; j++) sd[j] = idx.length > 1 ? Math.sqrt(sd[j] / (idx.length - 1)) : 0;
	return { n: idx.length, mean: Array.from(mean), sd: Array.from(sd) };
}

/** The nodes below level 1 that have children, parents first (breadth first), with their members. */
export function nodesToSplit(paths: string[][], ids: string[]): { path: string[]; members: number[]; children: string[] }[] {
	const out: { path: string[]; members: number[]; children: string[] }[] = [];
	const maxDepth = Math.max(...paths.map((p) => p.length));
	for (let depth = 1; depth < maxDepth; depth++) {
		const seen = new Map<string, { path: string[]; members: number[]; children: string[] }>();
		paths.forEach((p, i) => {
			if (p.length <= depth) return;
			const node = p.slice(0, depth);
			const key = pathKey(node);
			let e = seen.get(key);
			if (!e) seen.set(key, (e = { path: node, members: [], children: [] }));
			e.members.push(i);
			if (!e.children.includes(p[depth])) e.children.push(p[depth]);
		});
		for (const e of seen.values()) {
			const key = pathKey(e.path);
			const stop = paths.findIndex((p) => p.length === depth && pathKey(p) === key);
			if (stop >= 0)
				throw new AnalysisError(
					'bad-class',
					`training spectrum "${ids[stop]}" is labelled "${key}", but other spectra of "${key}" go deeper (e.g. "${pathKey(paths[e.members[0]])}"): label every spectrum of a node down to one of its children`
				);
			out.push(e);
		}
	}
	return out;
}

/** Builds every split below level 1 from the label paths. */
export function buildSplits(input: SplitBuildInput): SplitJson[] {
	const { paths, resampled, axisX, ids, groups, genuine, nodes, rootRecipe, folds, fit } = input;
	const rootWindows = rangesOf(parseRecipe(rootRecipe));
	const todo = nodesToSplit(paths, ids);
	const known = new Set(todo.map((t) => pathKey(t.path)));
	for (const key of Object.keys(nodes)) {
		if (key === '') throw new AnalysisError('bad-node', 'the root always decides with one one-class model per level-1 class (the unchanged decision table)');
		if (!known.has(key)) throw new AnalysisError('bad-node', `node "${key}" has no children in the training labels (nodes with children: ${[...known].join(', ') || 'none'})`);
	}
	const methods = new Map<string, SplitMethod>();
	const splits: SplitJson[] = [];
	for (const t of todo) {
		const key = pathKey(t.path);
		input.onNode?.(key);
		const opt = nodes[key] ?? {};
		const method = opt.method ?? 'one-class';
		if (method !== 'one-class' && method !== 'plsda' && method !== 'knn') throw new AnalysisError('bad-node', `node "${key}": method must be one-class, plsda or knn, got "${String(method)}"`);
		const parentKey = pathKey(t.path.slice(0, -1));
		if (method !== 'one-class' && t.path.length > 1 && methods.get(parentKey) !== 'one-class')
			throw new AnalysisError('bad-node', `node "${key}" cannot be discriminant: it is chosen by a ${methods.get(parentKey)} split, and a closed-set classifier may only work below a node a one-class model accepted`);
		if (method !== 'one-class' && t.children.length < 2) throw new AnalysisError('bad-node', `node "${key}": a discriminant split needs at least two children, found ${t.children.join(', ')}`);
		methods.set(key, method);
		const steps = parseRecipe(opt.recipe ?? rootRecipe);
		const window = windowOf(steps, axisX, key, opt.recipe === undefined);
		const x = Array.prototype.slice.call(axisX, window[0], window[1]) as number[];
		const rows = t.members.map((i) => resampled[i].slice(window[0], window[1]));
		const memberIds = t.members.map((i) => ids[i]);
		const pre = fitRowSteps(rowSteps(steps), rows, x, memberIds, rootWindows);
		const mode = scalingMode(steps);
		const childOf = t.members.map((i) => paths[i][t.path.length]);
		const kind: 'genuine' | 'suspect' = t.path[0] === genuine ? 'genuine' : 'suspect';
		const classSpectra: SplitJson['classSpectra'] = {};
		for (const c of t.children) classSpectra[c] = spectraStats(resampled, t.members.filter((_, m) => childOf[m] === c));
		const memberGroups = groups ? t.members.map((i) => groups[i]) : null;
		const split: SplitJson = {
			path: t.path,
			method,
			recipe: formatRecipe(steps),
			window,
			preprocess: { fitted: pre.fitted },
			children: t.children,
			models: {},
			classifier: null,
			scaling: null,
			classSpectra
		};
		if (method === 'one-class') {
			for (const c of t.children) {
				const m = t.members.flatMap((_, k) => (childOf[k] === c ? [k] : []));
				split.models[c] = fit(
					m.map((k) => pre.rows[k]),
					m.map((k) => memberIds[k]),
					memberGroups ? m.map((k) => memberGroups[k]) : null,
					{ name: c, kind, components: opt.components ?? input.components, mode, label: `class "${key}/${c}"` }
				);
			}
		} else {
			const sc = fitScaling(pre.rows, mode);
			const Z = pre.rows.map((r) => Float64Array.from(r, (v, j) => (v - sc.mean[j]) / sc.scale[j]));
			split.scaling = { mode, mean: Array.from(sc.mean), scale: Array.from(sc.scale) };
			split.classifier =
				method === 'plsda'
					? fitPlsda(Z, childOf, { components: opt.components ?? 'auto', folds, groups: memberGroups })
					: fitKnn(Z, childOf, { k: opt.k ?? 'auto', folds, groups: memberGroups });
		}
		splits.push(split);
	}
	return splits;
}
