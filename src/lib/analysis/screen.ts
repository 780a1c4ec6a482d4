import { AnalysisError } from './errors';
import { axisFromJson, resampleOnto, type ModelAxis } from './axis';
import { maxGapOf, parseRecipe, rowPipeline, rowSteps, type RowPipeline } from './preprocess/recipe';
import { makeProjectionModel, project, type ModelStats, type ProjectionModel } from './projection';
import { decide, type Verdict } from './classify';
import { validateArtefact, type ModelArtefact, type ModelJson } from './artefact';
import type { SpectrumInput } from './build';

export interface ScreenResult {
	id: string;
	verdict: Verdict;
	profile: string | null;
	ambiguous: boolean;
	reason: string | null;
	family: ModelStats | null;
	classes: Record<string, ModelStats>;
}

/** An artefact turned into typed arrays and closures once, so screening a spectrum does no parsing. */
export interface PreparedArtefact {
	artefact: ModelArtefact;
	axis: ModelAxis;
	maxGap: number;
	pipeline: RowPipeline;
	family: ProjectionModel;
	classes: ProjectionModel[];
}

const cache = new WeakMap<ModelArtefact, PreparedArtefact>();

function toProjection(m: ModelJson): ProjectionModel {
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
		pipeline: rowPipeline(rowSteps(steps), artefact.preprocess.fitted, axis.x),
		family: toProjection(artefact.family),
		classes: artefact.classes.map((c) => toProjection(artefact.models[c]))
	};
	cache.set(artefact, prepared);
	return prepared;
}

function unusable(id: string, reason: string): ScreenResult {
	return { id, verdict: 'unusable', profile: null, ambiguous: false, reason, family: null, classes: {} };
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
	return { id, ...d, family, classes };
}
