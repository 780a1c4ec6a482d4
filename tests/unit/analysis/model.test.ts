import { beforeAll, describe, expect, test } from 'vitest';
import {
	AnalysisError,
	buildModel,
	parseArtefact,
	prepareArtefact,
	screen,
	serializeArtefact,
	type ModelArtefact
} from '../../../src/lib/analysis';
import { gasoline, gasolineTraining, iris } from './fixtures';

describe('family-only model on gasoline NIR (Kalivas 1997)', () => {
	let a: ModelArtefact;
	beforeAll(() => {
		a = buildModel(gasolineTraining(), { meta: { material: 'gasoline' } });
	});
	test('artefact holds what screening and evidence plots need', () => {
		expect(a.schemaVersion).toBe(3);
		expect(a.splits).toEqual([]);
		expect(a.classes).toEqual([]);
		expect(a.genuine).toBeNull();
		expect(a.axis).toMatchObject({ unit: 'nm', from: 900, to: 1700, points: 401, step: 2 });
		const f = a.family;
		expect(f.eigenvalues.length).toBe(f.maxComponents);
		expect(f.cvPress.length).toBe(f.maxComponents + 1);
		expect(f.components).toBe(f.suggestedComponents);
		expect(f.loadings.length).toBe(f.components);
		expect(f.training.ids.length).toBe(60);
		expect(f.training.cv.c.length).toBe(60);
		expect(f.cvFalseRejectRate).toBeGreaterThanOrEqual(0);
		for (const k of ['jackson-mudholkar', 'box', 'moments'] as const) expect(f.limits.spe[k]).toBeGreaterThan(0);
		expect(f.limits.speLimit).toBe(f.limits.spe.moments);
	});
	test('cross-validated distances are larger than fitted ones (why CV limits are the default)', () => {
		const sum = (x: number[]) => x.reduce((s, v) => s + v, 0);
		expect(sum(a.family.training.cv.v)).toBeGreaterThan(sum(a.family.training.fitted.v));
		expect(sum(a.family.training.cv.h)).toBeGreaterThan(sum(a.family.training.fitted.h));
	});
	test('serialisation is deterministic and round-trips to identical screening', () => {
		const s1 = serializeArtefact(a);
		const s2 = serializeArtefact(buildModel(gasolineTraining(), { meta: { material: 'gasoline' } }));
		expect(s1).toBe(s2);
		const b = parseArtefact(s1);
		expect(serializeArtefact(b)).toBe(s1);
		const g = gasoline();
		const spec = { id: 'x', axis: g.axis, values: g.X[7], unit: 'nm' as const };
		expect(screen(b, spec)).toEqual(screen(a, spec));
	});
	test('training spectra screen as genuine at about the nominal rate; a foreign spectrum is not-this-material', () => {
		const g = gasoline();
		const verdicts = g.X.map((x, i) => screen(a, { id: g.ids[i], axis: g.axis, values: x, unit: 'nm' }).verdict);
		expect(verdicts.filter((v) => v === 'genuine').length).toBeGreaterThanOrEqual(57);
		const alien = g.X[0].map((v, j) => v + 0.05 * Math.sin(j / 9));
		expect(screen(a, { id: 'alien', axis: g.axis, values: alien, unit: 'nm' }).verdict).toBe('not-this-material');
	});
	test('screening in cm⁻¹, descending, gives the same statistics as in nm', () => {
		const g = gasoline();
		const wn = g.axis.map((x) => 1e7 / x);
		const r1 = screen(a, { id: 'a', axis: g.axis, values: g.X[3], unit: 'nm' });
		const r2 = screen(a, { id: 'a', axis: wn, values: g.X[3], unit: 'cm-1' });
		expect(r2.family!.c).toBeCloseTo(r1.family!.c, 6);
	});
	test('bad spectra are unusable with the reason, never an exception', () => {
		const g = gasoline();
		const short = screen(a, { id: 's', axis: g.axis.slice(0, 300), values: g.X[0].slice(0, 300), unit: 'nm' });
		expect(short).toMatchObject({ verdict: 'unusable', family: null });
		expect(short.reason).toContain('missing 1498–1700 nm');
		const nan = [...g.X[0]];
		nan[10] = Number.NaN;
		expect(screen(a, { id: 'n', axis: g.axis, values: nan, unit: 'nm' }).reason).toMatch(/1 non-finite value at position 10 \(920 nm\)/);
		expect(screen(a, { id: 'z', axis: [1, 2], values: [1], unit: 'nm' }).verdict).toBe('unusable');
		expect(screen(a, { id: 'u', axis: g.axis, values: g.X[0], unit: 'eV' as never }).verdict).toBe('unusable');
	});
	test('contributions sum to T² and SPE (Westerhuis et al. 2000; Miller et al. 1998)', () => {
		const g = gasoline();
		const r = screen(a, { id: 'c', axis: g.axis, values: g.X[5], unit: 'nm' }, { contributions: true });
		const f = r.family!;
		const sum = (x: number[]) => x.reduce((s, v) => s + v, 0);
		expect(sum(f.contributions!.t2)).toBeCloseTo(f.t2, 9);
		expect(sum(f.contributions!.spe)).toBeCloseTo(f.spe, 12);
	});
	test('parseArtefact refuses a wrong schemaVersion and a broken shape', () => {
		const o = JSON.parse(serializeArtefact(a));
		expect(() => parseArtefact(JSON.stringify({ ...o, schemaVersion: 99 }))).toThrow(/schemaVersion 99/);
		o.family.mean = o.family.mean.slice(1);
		expect(() => parseArtefact(JSON.stringify(o))).toThrow(/family.mean has 400 values, expected 401/);
		expect(() => parseArtefact('{')).toThrow(AnalysisError);
	});
	test('training-size rule max(10, A + 3): clear message', () => {
		const t = gasolineTraining((i) => (i < 7 ? 'genuine' : 'other'));
		expect(() => buildModel(t)).toThrow('class "genuine" has 7 training spectra, needs at least 10 (max(10, A + 3))');
		expect(() => buildModel(gasolineTraining().slice(0, 12), { familyComponents: 10 })).toThrow(/needs at least 13/);
	});
	test('options: training limits, recipe with row steps, fixed A, progress reports', () => {
		const seen: string[] = [];
		const b = buildModel(gasolineTraining(), {
			recipe: 'snv,savgol(11,2,1),center',
			familyComponents: 4,
			limits: 'training',
			onProgress: (p) => seen.push(p.stage)
		});
		expect(b.recipe).toBe('snv,savgol(11,2,1),center');
		expect(b.family.components).toBe(4);
		expect(b.family.limitsFrom).toBe('training');
		expect(seen[0]).toBe('preprocess');
		expect(seen.at(-1)).toBe('done');
		const m = buildModel(gasolineTraining(), { recipe: 'msc,autoscale', familyComponents: 3, folds: 5 });
		expect(m.preprocess.fitted[0].reference!.length).toBe(401);
		expect(m.family.folds).toBe(5);
	});
});

describe('class models on iris (Fisher 1936) as a sanity check', () => {
	let a: ModelArtefact;
	const data = iris();
	beforeAll(() => {
		// iris variables differ in scale (cm of petals vs sepals), hence autoscale per class model
		a = buildModel(data, { genuine: 'setosa', recipe: 'autoscale', familyAlpha: 0.01, alpha: 0.05 });
	});
	test('three class models, setosa genuine, the others suspect profiles', () => {
		expect(a.classes).toEqual(['setosa', 'versicolor', 'virginica']);
		expect(a.models.setosa.kind).toBe('genuine');
		expect(a.models.virginica.kind).toBe('suspect');
		for (const c of a.classes) expect(a.models[c].components).toBeLessThanOrEqual(3);
	});
	test('each class model accepts most of its own class; setosa rejects every other flower', () => {
		const prep = prepareArtefact(a);
		for (const c of a.classes) {
			const own = data.filter((s) => s.className === c);
			const accepted = own.filter((s) => screen(prep, s).classes[c].accepted).length;
			expect(accepted / own.length, c).toBeGreaterThanOrEqual(0.85);
		}
		const others = data.filter((s) => s.className !== 'setosa');
		expect(others.filter((s) => screen(prep, s).classes.setosa.accepted).length).toBe(0);
		const setosa = data.filter((s) => s.className === 'setosa');
		expect(setosa.filter((s) => screen(prep, s).classes.virginica.accepted).length).toBe(0);
	});
	test('versicolor flowers screen as suspect:versicolor (or ambiguous), never genuine', () => {
		const prep = prepareArtefact(a);
		const v = data.filter((s) => s.className === 'versicolor').map((s) => screen(prep, s));
		expect(v.filter((r) => r.verdict === 'genuine').length).toBe(0);
		expect(v.filter((r) => r.verdict === 'suspect' && r.profile === 'versicolor').length).toBeGreaterThan(30);
	});
});
