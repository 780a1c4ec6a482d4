// Lot-screening fixtures: a material with genuine + suspect classes, an approved model version built by the engine
// from synthetic band spectra, and JCAMP-DX container files — independent of the demo data, unique per call.
import { createHash } from 'node:crypto';
import { QueryTypes } from 'sequelize';
import { buildModel, serializeArtefact, type ModelArtefact, type TrainingSpectrum } from '../../src/lib/analysis';
import { addBands, NIR } from '../../src/lib/demo/bands';
import { writeJcampAffn } from '../../src/lib/demo/jcamp-writer';
import { createRng } from '../../src/lib/demo/prng';
import { rootActor, unique } from './factories';

export type Kind = 'genuine' | 'diluted-starch' | 'talc-cut' | 'cellulose' | 'raman';

export function makeAxis(points: number, from = 1100, to = 2498): Float64Array {
	const step = (to - from) / (points - 1);
	return Float64Array.from({ length: points }, (_, i) => +(from + i * step).toFixed(4));
}

/** One synthetic spectrum of a kind: band sums with sample-to-sample scale, baseline and noise. */
export function synth(kind: Kind, axis: Float64Array, seed: number): Float64Array {
	const rng = createRng(seed);
	const y = new Float64Array(axis.length);
	const scale = rng.gauss(1, 0.02);
	const shift = rng.gauss(0, 0.3);
	if (kind === 'cellulose') addBands(y, axis, NIR.cellulose, scale, shift);
	else {
		const lactose = kind === 'diluted-starch' ? 0.78 : kind === 'talc-cut' ? 0.75 : 1;
		addBands(y, axis, NIR.lactose, scale * lactose, shift);
		addBands(y, axis, NIR.crystalWater, scale * lactose, shift);
		if (kind === 'diluted-starch') addBands(y, axis, NIR.starch, scale * 0.22, shift);
		if (kind === 'talc-cut') addBands(y, axis, NIR.talc, scale * 0.25, shift);
	}
	const offset = rng.gauss(0.2, 0.01);
	for (let i = 0; i < y.length; i++) y[i] += offset + rng.gauss(0, 0.0005);
	return y;
}

export function jcamp(kind: Kind, axis: Float64Array, seed: number, title: string): Uint8Array {
	const y = synth(kind, axis, seed);
	const yFactor = 1e-6;
	const text = writeJcampAffn({
		title,
		axis,
		values: Array.from(y, (v) => Math.round(v / yFactor) * yFactor),
		xUnits: 'NANOMETERS',
		yUnits: 'ABSORBANCE',
		yFactor,
		dataType: kind === 'raman' ? 'RAMAN SPECTRUM' : 'NEAR INFRARED SPECTRUM',
		origin: 'Lotgate tests',
		owner: 'Lotgate tests (synthetic)'
	});
	return new TextEncoder().encode(text);
}

/** A truncated JCAMP-DX file: the parser refuses it. */
export function corrupt(axis: Float64Array, seed: number): Uint8Array {
	const bytes = jcamp('genuine', axis, seed, 'truncated');
	return bytes.slice(0, Math.floor(bytes.length / 2));
}

export interface LotFixture {
	materialId: number;
	materialCode: string;
	supplierCode: string;
	versionId: number;
	artefact: ModelArtefact;
	artefactText: string;
	axis: Float64Array;
}

/** A material with an approved model version (engine-built, inserted as approved) and a qualified supplier. */
export async function approvedMaterial(options: { points?: number; withModel?: boolean; policy?: 'every-container' | 'reduced-allowed' } = {}): Promise<LotFixture> {
	const { points = 700, withModel = true, policy = 'reduced-allowed' } = options;
	const { sequelize } = await import('../../src/lib/server/db');
	const materials = await import('../../src/lib/server/services/materials');
	const suppliers = await import('../../src/lib/server/services/suppliers');
	const code = unique('LAC').toUpperCase();
	const material = await materials.create(rootActor, { code, name: `Test lactose ${code}`, technique: 'NIR', samplingPolicy: policy, samplingJustification: policy === 'reduced-allowed' ? 'validated supply chain (test)' : undefined });
	await materials.addClass(rootActor, material.id, { name: 'genuine', kind: 'genuine' });
	await materials.addClass(rootActor, material.id, { name: 'diluted-starch', kind: 'suspect' });
	const supplier = await suppliers.create(rootActor, { code: unique('SUP').toUpperCase(), name: 'Test supplier', status: 'qualified' });
	const axis = makeAxis(points);
	if (!withModel) return { materialId: material.id, materialCode: code, supplierCode: supplier.code, versionId: 0, artefact: null as unknown as ModelArtefact, artefactText: '', axis };
	const training: TrainingSpectrum[] = [];
	for (let i = 0; i < 30; i++) training.push({ id: `g${i}`, axis, values: synth('genuine', axis, 1000 + i), unit: 'nm', className: 'genuine' });
	for (let i = 0; i < 20; i++) training.push({ id: `d${i}`, axis, values: synth('diluted-starch', axis, 2000 + i), unit: 'nm', className: 'diluted-starch' });
	const artefact = buildModel(training, { recipe: 'snv,center', components: 3, familyComponents: 3, genuine: 'genuine', folds: 5, meta: { version: `${code} v1` } });
	const text = serializeArtefact(artefact);
	const users = await import('../../src/lib/server/services/users');
	const builder = await users.create(rootActor, { email: `${unique('builder')}@test.example`, name: 'Fixture builder', password: 'correct-horse-battery', roles: ['chemometrician'] });
	const [row] = await sequelize().query<{ id: number }>(
		`INSERT INTO model_versions (material_id, version, state, params, artefact, artefact_sha256, engine_version, built_by, finished_at, approved_at)
		 VALUES (:m, 1, 'approved', :params, :artefact, :sha, :engine, :builtBy, now(), now()) RETURNING id`,
		{
			replacements: { m: material.id, params: JSON.stringify({ recipe: 'snv,center' }), artefact: text, sha: createHash('sha256').update(text).digest('hex'), engine: artefact.engineVersion, builtBy: builder.id },
			type: QueryTypes.SELECT
		}
	);
	return { materialId: material.id, materialCode: code, supplierCode: supplier.code, versionId: Number(row.id), artefact: JSON.parse(text), artefactText: text, axis };
}

/**
 * A fresh material (unique code) with the classes of a demo material and an approved version built from the demo
 * library's training spectra, so the demo lot files (demoScenario().lots) screen against it. Returns the demo lots.
 */
export async function demoMaterial(demoCode = 'LAC-200', recipe = 'snv,savgol(11,2,1),center') {
	const { demoScenario } = await import('../../src/lib/demo');
	const { sequelize } = await import('../../src/lib/server/db');
	const materials = await import('../../src/lib/server/services/materials');
	const suppliers = await import('../../src/lib/server/services/suppliers');
	const users = await import('../../src/lib/server/services/users');
	const sc = demoScenario();
	const dm = sc.materials.find((m) => m.code === demoCode)!;
	const code = unique(demoCode.split('-')[0]).toUpperCase();
	const material = await materials.create(rootActor, { code, name: `${dm.name} (test copy)`, technique: dm.technique, samplingPolicy: 'every-container' });
	for (const c of dm.classes) await materials.addClass(rootActor, material.id, { name: c.code, kind: c.kind });
	const rows = sc.library.filter((r) => r.material === demoCode && r.role === 'training');
	const artefact = buildModel(
		rows.map((r) => ({ id: r.id, axis: r.axis, values: r.values, unit: r.unit, className: r.class, group: r.supplierLot })),
		{ recipe, genuine: 'genuine', meta: { version: `${code} v1` } }
	);
	const text = serializeArtefact(artefact);
	const builder = await users.create(rootActor, { email: `${unique('builder')}@test.example`, name: 'Fixture builder', password: 'correct-horse-battery', roles: ['chemometrician'] });
	const [row] = await sequelize().query<{ id: number }>(
		`INSERT INTO model_versions (material_id, version, state, params, artefact, artefact_sha256, engine_version, built_by, finished_at, approved_at)
		 VALUES (:m, 1, 'approved', :params, :artefact, :sha, :engine, :builtBy, now(), now()) RETURNING id`,
		{
			replacements: { m: material.id, params: JSON.stringify({ recipe }), artefact: text, sha: createHash('sha256').update(text).digest('hex'), engine: artefact.engineVersion, builtBy: builder.id },
			type: QueryTypes.SELECT
		}
	);
	const supplier = await suppliers.create(rootActor, { code: unique('DSUP').toUpperCase(), name: 'Demo-copy supplier', status: 'qualified' });
	return { materialId: material.id, materialCode: code, supplierCode: supplier.code, versionId: Number(row.id), artefactText: text, lots: sc.lots.filter((l) => l.material === demoCode) };
}
