import { AnalysisError } from './errors';
import { axisFromJson, resampleOnto, type ModelAxis } from './axis';
import { maxGapOf, parseRecipe, rangesOf, rowPipeline, rowSteps, type RowPipeline } from './preprocess/recipe';
import { makeProjectionModel, project, type ModelStats, type ProjectionModel } from './projection';
import { decide, type Verdict } from './classify';
import { validateArtefact, type ModelArtefact, type ModelJson } from './artefact';
import type { SpectrumInput } from './build';
import { prepareSplits, walkSplits, type PreparedSplit } from './tree-screen';
import { DEFAULT_FLAT_RANGE } from './quality-gates';
import type { LevelEvidence } from './tree';

export interface ScreenResult {
	id: string;
	verdict: Verdict;
	profile: string | null;
	ambiguous: boolean;
	reason: string | null;
	family: ModelStats | null;
	classes: Record<string, ModelStats>;
	/** Names from level 1 down, e.g. ["diluted", "starch"]; ends early where a level answered "none of these". */
	path: string[];
	/** Evidence of each level walked: level 1 (the classes) first. */
	levels: LevelEvidence[];
}

/** An artefact turned into typed arrays and closures once, so screening a spectrum does no parsing. */
export interface PreparedArtefact {
	artefact: ModelArtefact;
	axis: ModelAxis;
	maxGap: number;
	pipeline: RowPipeline;
	family: ProjectionModel;
	classes: ProjectionModel[];
	/** Splits below level 1, by node path. */
	splits: Map<string, PreparedSplit>;
}

const cache = new WeakMap<ModelArtefact, PreparedArtefact>();

export function toProjection(m: ModelJson): ProjectionModel {
	const A = m.components;
	const p = m.mean.length;
	const loadings = new Float64Array(A * p);
	for (let a = 0; a < A; a++) loadings.set(m.loadings[a], a * p);
	const nullable = (x: number | null): number => (x === null ? Number.NaN : x);
	return makeProjectionModel({
		name: m.name,
		kind: m.kind,
		A,
		mean: Float64Array.from(m.mean),
		scale: m.scale,
		loadings,
		eigenvalues: m.eigenvalues,
		h0: m.h0,
		v0: m.v0,
		nh: m.nh,
		nq: m.nq,
		t2Limit: m.limits.t2Limit,
		speLimit: nullable(m.limits.speLimit),
		cCrit: m.cCrit,
		cOutlier: m.cOutlier
	});
}

/** Validates (once) and precomputes everything the per-spectrum path needs; cached per artefact object. */
export function prepareArtefact(artefact: ModelArtefact): PreparedArtefact {
	const hit = cache.get(artefact);
	if (hit) return hit;
	validateArtefact(artefact);
	const steps = parseRecipe(artefact.recipe);
	const axis = axisFromJson(artefact.axis);
	const prepared: PreparedArtefact = {
		artefact,
		axis,
		maxGap: maxGapOf(steps),
		pipeline: rowPipeline(rowSteps(steps), artefact.preprocess.fitted, axis.x, rangesOf(steps)),
		family: toProjection(artefact.family),
		classes: artefact.classes.map((c) => toProjection(artefact.models[c])),
		splits: prepareSplits(artefact, axis, toProjection)
	};
	cache.set(artefact, prepared);
	return prepared;
}

function unusable(id: string, reason: string): ScreenResult {
	return { id, verdict: 'unusable', profile: null, ambiguous: false, reason, family: null, classes: {}, path: [], levels: [] };
}

/**
 * Screens one spectrum: resample → row steps → family model → class models → decision.
 * Never throws for a bad spectrum: it is returned as 'unusable' with the reason.
 */
export function screen(artefact: ModelArtefact | PreparedArtefact, spectrum: SpectrumInput, options: { contributions?: boolean } = {}): ScreenResult {
	const prep = 'pipeline' in artefact ? artefact : prepareArtefact(artefact);
	const id = String(spectrum?.id ?? '');
	if (!spectrum || !spectrum.axis || !spectrum.values) return unusable(id, 'spectrum has no axis or values');
	const r = resampleOnto(spectrum, prep.axis, { maxGap: prep.maxGap });
	if (!r.ok) return unusable(id, r.reason);
	// A flat spectrum carries no material information; under `center` it would otherwise be judged far from the
	// family and called not-this-material. Same rule and default as the server's flat gate (docs/methods.md §9, §22).
	let lo = Infinity;
	let hi = -Infinity;
	for (const v of r.values) {
		if (v < lo) lo = v;
		if (v > hi) hi = v;
	}
	if (hi - lo <= DEFAULT_FLAT_RANGE) return unusable(id, `the spectrum is flat on the model axis (max − min = ${(hi - lo).toPrecision(3)}, at most ${DEFAULT_FLAT_RANGE} counts as flat)`);
	let x: Float64Array;
	try {
		x = prep.pipeline.apply(r.values);
	} catch (e) {
		if (e instanceof AnalysisError) return unusable(id, e.message);
		throw e;
	}
	for (let j = 0; j < x.length; j++) if (!Number.isFinite(x[j])) return unusable(id, `preprocessing produced a non-finite value at point ${j}`);
	const family = project(prep.family, x, options);
	const classes: Record<string, ModelStats> = {};
	for (const m of prep.classes) classes[m.name] = project(m, x, options);
	const d = decide(
		family,
		prep.classes.map((m) => ({ name: m.name, kind: m.kind as 'genuine' | 'suspect', stats: classes[m.name] }))
	);
	const a = prep.artefact;
	// level 1: the unchanged decision table; its chosen class starts the walk down the tree
	const top = d.verdict === 'genuine' ? a.genuine : d.verdict === 'suspect' ? d.profile : null;
	const level1: LevelEvidence = {
		node: [],
		method: 'one-class',
		children: [...a.classes],
		stats: { ...classes },
		accepted: a.classes.filter((c) => classes[c].accepted),
		classifier: null,
		chosen: top,
		ambiguous: d.ambiguous,
		reason: d.reason
	};
	const levels = a.classes.length > 0 ? [level1] : [];
	const path = top === null ? [] : [top];
	if (top !== null) walkSplits(prep.splits, r.values, path, levels, options);
	return { id, ...d, family, classes, path, levels };
}
