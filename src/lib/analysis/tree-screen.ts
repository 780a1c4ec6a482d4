import { AnalysisError } from './errors';
import { parseRecipe, rangesOf, rowPipeline, rowSteps, type RowPipeline } from './preprocess/recipe';
import { project, type ModelStats, type ProjectionModel } from './projection';
import { predictPlsda } from './plsda';
import { predictKnn } from './knn';
import { decideOneClassLevel, pathKey, splitsOf, type LevelEvidence } from './tree';
import type { ModelArtefact, ModelJson, SplitJson } from './artefact';
import type { ModelAxis } from './axis';

/** A split turned into closures and typed arrays once per artefact. */
export interface PreparedSplit {
	split: SplitJson;
	pipeline: RowPipeline;
	models: ProjectionModel[];
	invScale: Float64Array | null;
	mean: Float64Array | null;
}

export function prepareSplits(a: ModelArtefact, axis: ModelAxis, toProjection: (m: ModelJson) => ProjectionModel): Map<string, PreparedSplit> {
	const out = new Map<string, PreparedSplit>();
	// the version's windows: a node's savgol never spans the gap between two of them
	const windows = rangesOf(parseRecipe(a.recipe));
	for (const s of splitsOf(a)) {
		const x = Array.prototype.slice.call(axis.x, s.window[0], s.window[1]) as number[];
		out.set(pathKey(s.path), {
			split: s,
			pipeline: rowPipeline(rowSteps(parseRecipe(s.recipe)), s.preprocess.fitted, x, windows),
			models: s.method === 'one-class' ? s.children.map((c) => toProjection(s.models[c])) : [],
			mean: s.scaling ? Float64Array.from(s.scaling.mean) : null,
			invScale: s.scaling ? Float64Array.from(s.scaling.scale, (v) => 1 / v) : null
		});
	}
	return out;
}

/**
 * Walks down from the level-1 node in `path` (mutated: names appended) and appends one LevelEvidence per
 * split. `resampled` is the spectrum on the artefact axis before any recipe step: each split applies its own.
 * A preprocessing failure at a deeper level ends the walk with that reason (the top-level verdict stands).
 */
export function walkSplits(
	splits: Map<string, PreparedSplit>,
	resampled: Float64Array,
	path: string[],
	levels: LevelEvidence[],
	options: { contributions?: boolean } = {}
): void {
	for (let s = splits.get(pathKey(path)); s; s = splits.get(pathKey(path))) {
		const sp = s.split;
		const node = [...path];
		let x: Float64Array;
		try {
			x = s.pipeline.apply(resampled.slice(sp.window[0], sp.window[1]));
			for (let j = 0; j < x.length; j++) if (!Number.isFinite(x[j])) throw new AnalysisError('non-finite', `non-finite value at point ${j}`);
		} catch (e) {
			if (!(e instanceof AnalysisError)) throw e;
			levels.push({ node, method: sp.method, children: [...sp.children], stats: {}, accepted: [], classifier: null, chosen: null, ambiguous: false, reason: `recipe of node ${node.join(' › ')} failed: ${e.message}` });
			return;
		}
		let level: LevelEvidence;
		if (sp.method === 'one-class') {
			const children = s.models.map((m) => ({ name: m.name, stats: project(m, x, options) as ModelStats }));
			level = { method: 'one-class', classifier: null, ...decideOneClassLevel(node, children) };
		} else {
			// a discriminant split runs only on a node a one-class model accepted (checked at build and load)
			const parent = levels[levels.length - 1];
			if (!parent || !parent.accepted.includes(node[node.length - 1])) {
				levels.push({ node, method: sp.method, children: [...sp.children], stats: {}, accepted: [], classifier: null, chosen: null, ambiguous: false, reason: `node ${node.join(' › ')} was not accepted by a one-class model, so its ${sp.method} split does not run` });
				return;
			}
			const z = new Float64Array(x.length);
			for (let j = 0; j < x.length; j++) z[j] = (x[j] - s.mean![j]) * s.invScale![j];
			const cl = sp.classifier!;
			const out = cl.method === 'plsda' ? predictPlsda(cl, z) : predictKnn(cl, z);
			level = {
				node,
				method: sp.method,
				children: [...sp.children],
				stats: {},
				accepted: [],
				classifier: { method: cl.method, scores: out.scores, ...(cl.method === 'plsda' ? { components: cl.components } : { k: cl.k }) },
				chosen: out.chosen,
				ambiguous: false,
				reason: null
			};
		}
		levels.push(level);
		if (level.chosen === null) return;
		path.push(level.chosen);
	}
}
