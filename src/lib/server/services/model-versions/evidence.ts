// Model versions: the figures and validation computed once at build time from the artefact and the library.
import { evaluate, prepareArtefact, screen, type ModelArtefact, type ValidationReport } from '../../../analysis';
import { chi2Inv } from '../../../analysis/quantiles';
import { resampleOnto } from '../../../analysis/axis';
import * as library from '../library';
import { type ModelFigure, type Figures, type Projection, type Validation, type MembershipRow } from './types';

function withoutResults(r: ValidationReport): Omit<ValidationReport, 'results'> {
	const { results: _omit, ...rest } = r;
	return JSON.parse(JSON.stringify(rest, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? null : v)));
}

const ALPHA_GRID = [0.01, 0.025, 0.05, 0.1, 0.2];

/** Figures for the version page and the validation report, computed once at build time. */
export function evidence(withData: library.EntrySpectrum[], artefact: ModelArtefact, members: MembershipRow[], classes: { name: string; kind: 'genuine' | 'suspect' }[], started: number) {
	const step = Math.max(1, Math.ceil(artefact.axis.x.length / 150));
	const plotX = artefact.axis.x.filter((_, i) => i % step === 0);
	const plotAxis = { unit: artefact.axis.unit, from: plotX[0], to: plotX[plotX.length - 1], points: plotX.length, step: null, x: plotX };
	const overview: Figures['overview'] = { axis: plotX, spectra: {} };
	const projections: Record<string, Projection> = {};
	const verdicts: Validation['verdicts'] = [];
	const tests: { id: string; axis: number[]; values: number[]; unit: 'nm' | 'cm-1' | 'um'; expected: string }[] = [];
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
			tests.push({ id: String(e.id), axis: e.axis, values: e.values, unit: e.unit, expected: e.label });
			verdicts.push({ entryId: e.id, label: e.label, role: e.role, verdict: result.verdict, profile: result.profile, reason: result.reason });
		}
	}
	const modelFigure = (m: ModelArtefact['family']): ModelFigure => {
		const df = m.nh + m.nq;
		const frr = (cs: number[], a: number) => (cs.length ? cs.filter((c) => c > chi2Inv(1 - a, df)).length / cs.length : 0);
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
	};
	const included = new Set(members.map((m) => String(m.entryId)));
	const figures: Figures = {
		trainingCount: members.length,
		excludedCount: withData.filter((e) => e.role === 'training' && !included.has(String(e.id))).length,
		classes: classes.map((c) => ({ name: c.name, kind: c.kind, n: artefact.models[c.name]?.n ?? 0 })),
		models: [modelFigure(artefact.family), ...artefact.classes.map((c) => modelFigure(artefact.models[c]))],
		projections,
		overview,
		buildMs: Math.round(performance.now() - started)
	};
	const validation: Validation = {
		tested: tests.length,
		testCount: withData.filter((e) => e.role === 'test').length,
		challengeCount: withData.filter((e) => e.role === 'challenge').length,
		report: tests.length ? withoutResults(evaluate(artefact, tests)) : null,
		verdicts
	};
	return { figures, validation };
}
