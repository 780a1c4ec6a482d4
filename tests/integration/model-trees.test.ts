// Model trees through the server (issue 13): a three-level tree version screens a lot, the API and the lot view carry
// the path and the evidence of each level, and a wrong-material container names the material it resembles.
// The tree artefact is engine-built and inserted as approved, as the other lot fixtures do; the spectra are the
// invented demo generator's (wiring, not a formula).
import { createHash } from 'node:crypto';
import { QueryTypes } from 'sequelize';
import { beforeAll, describe, expect, it } from 'vitest';
import { buildModel, serializeArtefact } from '../../src/lib/analysis';
import { treeLibrary, writeJcampAffn, type TreeLibraryRow } from '../../src/lib/demo';
import { sequelize } from '../../src/lib/server/db';
import * as lots from '../../src/lib/server/services/lots';
import * as scans from '../../src/lib/server/services/scans';
import { GET as lotApi } from '../../src/routes/api/v1/lots/[id]/+server';
import { makeUser, rootActor, unique } from '../support/factories';
import { call } from '../support/http';
import { demoMaterial } from '../support/lot-fixtures';
import type { Actor } from '../../src/lib/server/services/actor';

const today = () => new Date().toISOString().slice(0, 10);
const file = (r: TreeLibraryRow, container: number) => ({
	bytes: new TextEncoder().encode(
		writeJcampAffn({ title: r.id, axis: r.axis, values: Array.from(r.values), xUnits: 'NANOMETERS', yUnits: 'ABSORBANCE', yFactor: 1e-6, dataType: 'NEAR INFRARED SPECTRUM', origin: 'Lotgate tests', owner: 'Lotgate tests (synthetic)' })
	),
	fileName: `${r.id}.jdx`,
	container
});

let tech: Actor;
let materialCode: string;
let treeVersion: { text: string; builtBy: number };
let supplierCode: string;
const lib = treeLibrary();

beforeAll(async () => {
	tech = (await makeUser(['technician'])).actor;
	await demoMaterial('MCC-100'); // another material of the site, with an approved family model
	const materials = await import('../../src/lib/server/services/materials');
	const suppliers = await import('../../src/lib/server/services/suppliers');
	const users = await import('../../src/lib/server/services/users');
	materialCode = unique('LTREE').toUpperCase();
	const material = await materials.create(rootActor, { code: materialCode, name: 'Lactose, three-level tree (test)', technique: 'NIR', samplingPolicy: 'every-container' });
	for (const [name, kind] of [['genuine', 'genuine'], ['diluted', 'suspect'], ['substituted', 'suspect']] as const) await materials.addClass(rootActor, material.id, { name, kind });
	const artefact = buildModel(
		lib.filter((r) => r.role === 'training'),
		{ recipe: 'snv, savgol(5,2,1), center', genuine: 'genuine', meta: { version: `${materialCode} v1`, material: materialCode } }
	);
	const text = serializeArtefact(artefact);
	const builder = await users.create(rootActor, { email: `${unique('builder')}@test.example`, name: 'Tree builder', password: 'correct-horse-battery', roles: ['chemometrician'] });
	await sequelize().query(
		`INSERT INTO model_versions (material_id, version, state, params, artefact, artefact_sha256, engine_version, built_by, finished_at, approved_at)
		 VALUES (:m, 1, 'approved', :params, :artefact, :sha, :engine, :builtBy, now(), now())`,
		{ replacements: { m: material.id, params: JSON.stringify({ recipe: artefact.recipe }), artefact: text, sha: createHash('sha256').update(text).digest('hex'), engine: artefact.engineVersion, builtBy: builder.id }, type: QueryTypes.INSERT }
	);
	treeVersion = { text, builtBy: builder.id };
	supplierCode = (await suppliers.create(rootActor, { code: unique('TSUP').toUpperCase(), name: 'Tree supplier', status: 'qualified' })).code;
}, 180_000);

describe('a lot screened with a three-level tree', () => {
	it('stores and serves the path and the evidence at each level; a mixed-up container names the material it resembles', async () => {
		const pick = (label: string) => lib.find((r) => r.role === 'test' && r.className === label)!;
		const contents: TreeLibraryRow[] = [pick('genuine/site-b'), pick('diluted/talc'), pick('substituted'), treeLibrary({ step: 2 }).find((r) => r.className === 'mcc')!];
		const lot = await lots.create(tech, { material: materialCode, supplier: supplierCode, supplierLot: unique('SL'), containers: contents.length, receivedAt: today() });
		for (const [i, r] of contents.entries()) await scans.add(tech, lot.id, file(r, i + 1));

		const res = await call(lotApi, new Request(`http://localhost/api/v1/lots/${lot.id}`), { id: String(lot.id) }, tech, '/api/v1/lots/[id]');
		expect(res.status).toBe(200);
		const body = (await res.json()) as { containers: { number: number; scans: lots.ScanView[] }[] };
		const scan = (n: number) => body.containers.find((c) => c.number === n)!.scans[0];

		expect(scan(1)).toMatchObject({ verdict: 'genuine', path: ['genuine', 'site-b'], pathLabel: 'genuine › site-b', identification: null });
		expect(scan(2)).toMatchObject({ verdict: 'suspect', profile: 'diluted', path: ['diluted', 'talc'], pathLabel: 'suspect › diluted › talc' });
		expect(scan(2).levels.map((l) => [l.node.join('/'), l.method, l.chosen])).toEqual([
			['', 'one-class', 'diluted'],
			['diluted', 'one-class', 'talc']
		]);
		const talc = scan(2).levels[1].children.find((c) => c.name === 'talc')!;
		expect(talc.accepted).toBe(true);
		expect(talc.ratio!).toBeLessThanOrEqual(1);
		expect(scan(3)).toMatchObject({ verdict: 'suspect', path: ['substituted'], pathLabel: 'suspect › substituted' });

		const wrong = scan(4);
		expect(wrong.verdict).toBe('not-this-material');
		expect(wrong.path).toEqual([]);
		expect(wrong.identification!.resembles!.material).toMatch(/^MCC/);
		expect(wrong.identification!.resembles!.ratio).toBeLessThanOrEqual(1);
		expect(wrong.identification!.text).toMatch(new RegExp(`^not ${materialCode}; accepted by the family model of MCC\\S* \\(c/c_crit 0\\.\\d\\d\\)$`));
		// evidence only: the verdict is not changed by it
		expect(wrong.identification!.ranking[0].material).toBe(wrong.identification!.resembles!.material);
	});

	it('a container rescreened once a model is approved names the material it resembles, stored with the new scan', async () => {
		const materials = await import('../../src/lib/server/services/materials');
		const code = unique('LTRR').toUpperCase();
		const bare = await materials.create(rootActor, { code, name: 'Lactose, rescreened (test)', technique: 'NIR', samplingPolicy: 'every-container' });
		const mcc = treeLibrary({ step: 2 }).filter((r) => r.className === 'mcc')[3];
		const lot = await lots.create(tech, { material: code, supplier: supplierCode, supplierLot: unique('SL'), containers: 1, receivedAt: today() });
		expect(await scans.add(tech, lot.id, file(mcc, 1))).toMatchObject({ verdict: 'not-screened' });
		await sequelize().query(
			`INSERT INTO model_versions (material_id, version, state, params, artefact, artefact_sha256, engine_version, built_by, finished_at, approved_at)
			 VALUES (:m, 1, 'approved', '{}', :artefact, :sha, '1.0.0', :builtBy, now(), now())`,
			{ replacements: { m: bare.id, artefact: treeVersion.text, sha: createHash('sha256').update(treeVersion.text).digest('hex'), builtBy: treeVersion.builtBy }, type: QueryTypes.INSERT }
		);
		const again = await scans.rescreen(tech, lot.id);
		expect(again.scans[0].verdict).toBe('not-this-material');
		const res = await call(lotApi, new Request(`http://localhost/api/v1/lots/${lot.id}`), { id: String(lot.id) }, tech, '/api/v1/lots/[id]');
		const body = (await res.json()) as { containers: { number: number; scans: lots.ScanView[] }[] };
		const [first, second] = body.containers[0].scans;
		expect(first.verdict).toBe('not-screened');
		expect(first.identification ?? null).toBeNull();
		expect(second.rescreenOf).toBe(first.id);
		expect(second.identification!.resembles!.material).toMatch(/^MCC/);
		expect(second.identification!.text).toMatch(new RegExp(`^not ${code}; accepted by the family model of MCC`));
	});
});

