// The evidence of a model version, computed once at build time: per-model figures (false-reject rates over an α grid
// from the χ² acceptance limit), every library spectrum's projection and verdict, a decimated overview of the spectra,
// and the validation of the held-out test and challenge spectra (evaluate()). Pure: no database.
import { AnalysisError } from './errors';
import { evaluate, type ValidationReport } from './metrics';
import { prepareArtefact, screen } from './screen';
import type { ModelArtefact } from './artefact';
import { chi2Inv } from './quantiles';
import { resampleOnto } from './axis';
import { compareDiscriminants, treeConfusions, type DiscriminantComparison, type TreeValidation } from './tree-validation';
import type { ScreenResult } from './screen';

export interface ModelFigure {
	name: string;
	kind: 'family' | 'genuine' | 'suspect';
	n: number;
	components: number;
	componentsRule: 'auto' | 'fixed';
	suggested: number;
	alpha: number;
	cCrit: number;
	cvFalseRejectRate: number;
	trainingFalseRejectRate: number;
	/** CV false-reject rate at other α, from the cross-validated c of the training objects. */
	frrByAlpha: { alpha: number; cv: number; training: number }[];
	explained: number;
	/** Engine guards: A at the cap, N_h or N_q below 3 (issue 12 §4). */
	warnings?: string[];
	parsimonious?: number | null;
}

export interface Figures {
	trainingCount: number;
	excludedCount: number;
	classes: { name: string; kind: 'genuine' | 'suspect'; n: number }[];
	models: ModelFigure[];
	/** Every library spectrum of the material (training, test, challenge) screened through this version: id → stats. */
	projections: Record<string, Projection>;
	/** Every library spectrum resampled onto every k-th point of the model axis (about 150 points), for overview plots. */
	overview: { axis: number[]; spectra: Record<string, number[]> };
	buildMs: number;
	/** Set by the server's build: the material's declared axis, and the training spectra left out for not covering it. */
	axis?: { declared: { unit: string; from: number; to: number; step: number | null }; excluded: { entryId: number; reason: string }[] } | null;
}

export interface Projection {
	role: string;
	label: string;
	verdict: string;
	profile: string | null;
	/** model name ('family' for stage 1) → distances */
	models: Record<string, { h: number; v: number; c: number; accepted: boolean; scores?: number[] }>;
}

export interface Validation {
	tested: number;
	testCount: number;
	challengeCount: number;
	/** engine's evaluate() result without the per-spectrum results: confusion K×(K+2), per-class metrics with Clopper–Pearson 95 % intervals */
	report: Omit<ValidationReport, 'results'> | null;
	verdicts: { entryId: number; label: string; role: string; verdict: string; profile: string | null; reason: string | null }[];
	/** One confusion matrix per node with children and one for the whole path (versions built before trees: absent). */
	tree?: TreeValidation | null;
	/** PLS-DA and kNN trained on the same training set and recipe, on the same test and challenge spectra. */
	discriminants?: DiscriminantComparison | null;
}

/** How the build placed library labels in the tree, and its training rows (for the classifier comparison). */
export interface EvidenceTree {
	classOf: Record<string, string>;
	training: { id: string; axis: number[]; values: number[]; unit: 'nm' | 'cm-1' | 'um'; className: string; group: string | null }[];
}

function withoutResults(r: ValidationReport): Omit<ValidationReport, 'results'> {
	const { results: _omit, ...rest } = r;
	return JSON.parse(JSON.stringify(rest, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? null : v)));
}

/** The α values at which the version page shows false-reject rates, besides the model's own α. */
export const ALPHA_GRID = [0.01, 0.025, 0.05, 0.1, 0.2];

/**
 * Share of acceptance distances c above the χ² quantile at 1 − α with df = N_h + N_q degrees of freedom: the false-reject
 * rate of training objects at that α (docs/methods.md, DD-SIMCA acceptance area). 0 for no objects.
 */
export function falseRejectRate(cs: ArrayLike<number>, alpha: number, df: number): number {
	if (!(alpha > 0 && alpha < 1)) throw new AnalysisError('bad-alpha', `α must lie strictly between 0 and 1, got ${alpha}`);
	if (!(df > 0) || !Number.isFinite(df)) throw new AnalysisError('bad-df', `Degrees of freedom must be a positive number, got ${df}`);
	if (!cs.length) return 0;
	const limit = chi2Inv(1 - alpha, df);
	let above = 0;
	for (let i = 0; i < cs.length; i++) if (cs[i] > limit) above++;
	return above / cs.length;
}

/** The figures of one model of an artefact, as the version page and the validation report show them. */
export function modelFigure(m: ModelArtefact['family']): ModelFigure {
	const df = m.nh + m.nq;
	const frr = (cs: number[], a: number) => falseRejectRate(cs, a, df);
	return {
		name: m.name,
		kind: m.kind,
		n: m.n,
		components: m.components,
		componentsRule: m.componentsRule,
		suggested: m.suggestedComponents,
		alpha: m.alpha,
		cCrit: m.cCrit,
		cvFalseRejectRate: m.cvFalseRejectRate,
		trainingFalseRejectRate: m.trainingFalseRejectRate,
		frrByAlpha: [...new Set([...ALPHA_GRID, m.alpha])].sort((a, b) => a - b).map((a) => ({ alpha: a, cv: frr(m.training.cv.c, a), training: frr(m.training.fitted.c, a) })),
		explained: m.cumulative[m.components - 1] ?? 0,
		warnings: m.warnings ?? [],
		parsimonious: m.parsimoniousComponents ?? null
	};
}

/** One library spectrum the evidence screens: training, test or challenge. */
export interface EvidenceSpectrum {
	id: number;
	role: string;
	label: string;
	unit: 'nm' | 'cm-1' | 'um';
	axis: number[];
	values: number[];
}

/** Figures for the version page and the validation report, computed once at build time. */
export function modelEvidence(
	withData: EvidenceSpectrum[],
	artefact: ModelArtefact,
	members: { entryId: number }[],
	classes: { name: string; kind: 'genuine' | 'suspect' }[],
	tree: EvidenceTree | null = null
): { figures: Omit<Figures, 'buildMs'>; validation: Validation } {
	if (!artefact?.axis?.x?.length) throw new AnalysisError('bad-artefact', 'The model artefact has no axis');
	if (!Array.isArray(withData)) throw new AnalysisError('bad-input', 'The spectra to screen must be a list');
	const step = Math.max(1, Math.ceil(artefact.axis.x.length / 150));
	const plotX = artefact.axis.x.filter((_, i) => i % step === 0);
	const plotAxis = { unit: artefact.axis.unit, from: plotX[0], to: plotX[plotX.length - 1], points: plotX.length, step: null, x: plotX };
	const overview: Figures['overview'] = { axis: plotX, spectra: {} };
	const projections: Record<string, Projection> = {};
	const verdicts: Validation['verdicts'] = [];
	const tests: { id: string; axis: number[]; values: number[]; unit: 'nm' | 'cm-1' | 'um'; expected: string | null }[] = [];
	const testResults: ScreenResult[] = [];
	// a held-out label the tree places is expected at its node path; any other label keeps its own name (an alien's is in no class)
	const expectedOf = (label: string) => tree?.classOf[label] ?? label;
	const prepared = prepareArtefact(artefact);
	for (const e of withData) {
		const result = screen(prepared, { id: String(e.id), axis: e.axis, values: e.values, unit: e.unit });
		const models: Projection['models'] = {};
		if (result.family) models.family = { h: result.family.h, v: result.family.v, c: result.family.c, accepted: result.family.accepted, scores: Array.from(result.family.scores).slice(0, 10) };
		for (const [name, s] of Object.entries(result.classes)) models[name] = { h: s.h, v: s.v, c: s.c, accepted: s.accepted, scores: Array.from(s.scores).slice(0, 10) };
		projections[String(e.id)] = { role: e.role, label: e.label, verdict: result.verdict, profile: result.profile, models };
		const resampled = resampleOnto(e, plotAxis);
		if (resampled.ok) overview.spectra[String(e.id)] = Array.from(resampled.values, (y) => Number(y.toPrecision(6)));
		if (e.role !== 'training') {
			tests.push({ id: String(e.id), axis: e.axis, values: e.values, unit: e.unit, expected: expectedOf(e.label) });
			testResults.push(result);
			verdicts.push({ entryId: e.id, label: e.label, role: e.role, verdict: result.verdict, profile: result.profile, reason: result.reason });
		}
	}
	const included = new Set(members.map((m) => String(m.entryId)));
	const figures: Omit<Figures, 'buildMs'> = {
		trainingCount: members.length,
		excludedCount: withData.filter((e) => e.role === 'training' && !included.has(String(e.id))).length,
		// the artefact's level-1 classes (a tree may rename them), with the material's kind where it names one
		classes: artefact.classes.map((c) => ({ name: c, kind: classes.find((k) => k.name === c)?.kind ?? (c === artefact.genuine ? 'genuine' : 'suspect'), n: artefact.models[c]?.n ?? 0 })),
		models: [modelFigure(artefact.family), ...artefact.classes.map((c) => modelFigure(artefact.models[c]))],
		projections,
		overview
	};
	const validation: Validation = {
		tested: tests.length,
		testCount: withData.filter((e) => e.role === 'test').length,
		challengeCount: withData.filter((e) => e.role === 'challenge').length,
		report: tests.length ? withoutResults(evaluate(artefact, tests)) : null,
		verdicts
	};
	if (tests.length && tree) {
		const known = (e: string | null) => (e !== null && artefact.classes.includes(e.split('/')[0]) ? e : null);
		validation.tree = treeConfusions(artefact, testResults.map((r, i) => ({ path: r.path, levels: r.levels, expected: known(tests[i].expected) })));
		validation.discriminants = compareDiscriminants(artefact, tree.training, tests.map((t) => ({ ...t, expected: known(t.expected) })), { results: testResults });
	}
	return { figures, validation };
}
