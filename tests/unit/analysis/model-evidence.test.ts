import { beforeAll, describe, expect, test } from 'vitest';
import { AnalysisError, buildModel, type ModelArtefact } from '../../../src/lib/analysis';
import { ALPHA_GRID, falseRejectRate, modelEvidence, modelFigure, type EvidenceSpectrum } from '../../../src/lib/analysis/model-evidence';
import { gasoline } from './fixtures';

describe('falseRejectRate: share of c above the χ² quantile at 1 − α', () => {
	// Limits from the NIST/SEMATECH e-Handbook of Statistical Methods, §1.3.6.7.4 (upper critical values of the chi-square
	// distribution): χ²(0.95, 2) = 5.991, χ²(0.99, 2) = 9.210, χ²(0.95, 5) = 11.070 (table values, from memory).
	test('counts the objects above the tabulated limit at df = 2', () => {
		const cs = [1, 5.9, 6.0, 9.3];
		expect(falseRejectRate(cs, 0.05, 2)).toBe(0.5); // 6.0 and 9.3 exceed 5.991
		expect(falseRejectRate(cs, 0.01, 2)).toBe(0.25); // only 9.3 exceeds 9.210
	});
	test('the limit moves with the degrees of freedom', () => {
		expect(falseRejectRate([11.0, 11.1], 0.05, 5)).toBe(0.5); // 11.0 < 11.070 < 11.1
		expect(falseRejectRate([11.0, 11.1], 0.05, 2)).toBe(1);
	});
	test('no objects: rate 0; bad α or df: an explicit error', () => {
		expect(falseRejectRate([], 0.05, 3)).toBe(0);
		expect(() => falseRejectRate([1], 0, 3)).toThrow(AnalysisError);
		expect(() => falseRejectRate([1], 1.5, 3)).toThrow('α must lie strictly between 0 and 1');
		expect(() => falseRejectRate([1], 0.05, 0)).toThrow('Degrees of freedom must be a positive number');
	});
});

describe('modelEvidence on the open gasoline NIR data (Kalivas 1997)', () => {
	let artefact: ModelArtefact;
	let spectra: EvidenceSpectrum[];
	beforeAll(() => {
		const g = gasoline();
		spectra = g.X.map((values, i) => ({ id: i + 1, role: 'training', label: 'gasoline', unit: 'nm' as const, axis: g.axis, values }));
		artefact = buildModel(
			spectra.slice(0, 55).map((s) => ({ id: String(s.id), axis: s.axis, values: s.values, unit: s.unit, className: null })),
			{ meta: { material: 'gasoline' } }
		);
	});

	test('projects every spectrum, counts the excluded ones and decimates the overview to at most 150 points', () => {
		const members = spectra.slice(0, 55).map((s) => ({ entryId: s.id }));
		const { figures, validation } = modelEvidence(spectra, artefact, members, []);
		expect(figures.trainingCount).toBe(55);
		expect(figures.excludedCount).toBe(5); // spectra 56–60 are training-role library rows left out of the model
		expect(Object.keys(figures.projections)).toHaveLength(60);
		// 401 points, step ceil(401/150) = 3: points 0, 3, …, 399 → 134 points, starting at 900 nm
		expect(figures.overview.axis).toHaveLength(134);
		expect(figures.overview.axis[0]).toBe(900);
		expect(figures.overview.axis[1]).toBe(906);
		expect(figures.overview.spectra['1']).toHaveLength(134);
		expect(figures.models.map((m) => m.name)).toEqual([artefact.family.name]);
		expect(validation).toMatchObject({ tested: 0, testCount: 0, challengeCount: 0, report: null, verdicts: [] });
	});

	test('figures per model: the α grid plus the model α, each rate from the χ² limit with df = N_h + N_q', () => {
		const m = artefact.family;
		const f = modelFigure(m);
		expect(f.frrByAlpha.map((r) => r.alpha)).toEqual([...new Set([...ALPHA_GRID, m.alpha])].sort((a, b) => a - b));
		for (const r of f.frrByAlpha) {
			expect(r.cv).toBe(falseRejectRate(m.training.cv.c, r.alpha, m.nh + m.nq));
			expect(r.training).toBe(falseRejectRate(m.training.fitted.c, r.alpha, m.nh + m.nq));
		}
		// a wider acceptance area (smaller α) never rejects more training objects
		for (let i = 1; i < f.frrByAlpha.length; i++) expect(f.frrByAlpha[i].cv).toBeGreaterThanOrEqual(f.frrByAlpha[i - 1].cv);
		expect(f.explained).toBe(m.cumulative[m.components - 1]);
	});

	test('held-out spectra are screened into the validation', () => {
		const held = spectra.map((s, i) => (i >= 55 ? { ...s, role: i % 2 ? 'test' : 'challenge' } : s));
		const { figures, validation } = modelEvidence(held, artefact, held.slice(0, 55).map((s) => ({ entryId: s.id })), []);
		expect(figures.excludedCount).toBe(0);
		expect(validation.tested).toBe(5);
		expect(validation.testCount + validation.challengeCount).toBe(5);
		expect(validation.verdicts.map((v) => v.entryId)).toEqual([56, 57, 58, 59, 60]);
	});

	test('refuses an artefact without an axis', () => {
		expect(() => modelEvidence(spectra, { ...artefact, axis: { ...artefact.axis, x: [] } }, [], [])).toThrow('The model artefact has no axis');
	});
});
