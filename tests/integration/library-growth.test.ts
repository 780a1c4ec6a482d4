// A library that grows under change control (issue 14 §4): a released lot's genuine scans join the genuine class
// only through a new draft the chemometrician builds for them; the diff compares it with the approved version on
// the same validation set; until QA approves it, no other build includes the added spectra.
import { QueryTypes } from 'sequelize';
import { beforeAll, describe, expect, it } from 'vitest';
import { writeJcampAffn } from '../../src/lib/demo/jcamp-writer';
import { sequelize } from '../../src/lib/server/db';
import * as audit from '../../src/lib/server/services/audit';
import * as growth from '../../src/lib/server/services/library-growth';
import * as lots from '../../src/lib/server/services/lots';
import * as materials from '../../src/lib/server/services/materials';
import * as versions from '../../src/lib/server/services/model-versions';
import { planMemberships } from '../../src/lib/server/services/model-versions/build';
import * as scans from '../../src/lib/server/services/scans';
import * as suppliers from '../../src/lib/server/services/suppliers';
import { makeUser, rootActor, unique } from '../support/factories';
import { axis, insertLibrary, rng, spectrum, standardRows } from '../support/library-fixtures';

let materialId: number;
let code: string;
let v1: number;
let lotId: number;
let chemist: Awaited<ReturnType<typeof makeUser>>;

function scanFile(seed: number, title: string) {
	const x = axis();
	const y = spectrum('genuine', x, rng(seed));
	const yFactor = 1e-6;
	return new TextEncoder().encode(
		writeJcampAffn({ title, axis: Float64Array.from(x), values: y.map((v) => Math.round(v / yFactor) * yFactor), xUnits: 'NANOMETERS', yUnits: 'ABSORBANCE', yFactor, dataType: 'NEAR INFRARED SPECTRUM', origin: 'Lotgate tests', owner: 'Lotgate tests (synthetic)' })
	);
}

beforeAll(async () => {
	chemist = await makeUser(['chemometrician']);
	const qa = await makeUser(['qa']);
	const tech = await makeUser(['technician']);
	code = unique('GR').toUpperCase();
	const m = await materials.create(rootActor, { code, name: `Growth test ${code}`, technique: 'NIR' });
	materialId = m.id;
	await materials.addClass(rootActor, m.id, { name: 'genuine', kind: 'genuine' });
	await materials.addClass(rootActor, m.id, { name: 'diluted', kind: 'suspect' });
	await materials.addClass(rootActor, m.id, { name: 'substituted', kind: 'suspect' });
	await insertLibrary(m.id, standardRows(14), 5151);
	v1 = (await versions.createBuild(chemist.actor, m.id, { recipe: 'snv,center', folds: 5, components: 3, familyComponents: 3 }, { inline: true })).id;
	await versions.approve(qa.actor, v1, { password: qa.password, meaning: versions.APPROVAL_MEANING, reason: 'validation reviewed' });
	const supplier = await suppliers.create(rootActor, { code: unique('GS').toUpperCase(), name: 'Growth supplier', status: 'qualified' });
	const lot = await lots.create(tech.actor, { material: code, supplier: supplier.code, supplierLot: unique('GL'), containers: 4, receivedAt: new Date().toISOString().slice(0, 10) });
	lotId = lot.id;
	for (let c = 1; c <= 4; c++) await scans.add(tech.actor, lot.id, { bytes: scanFile(9000 + c, `${lot.internalLot} c${c}`), fileName: `c${c}.jdx`, container: c });
	// fixture: the lot's disposition is not what this test is about (the disposition workflow has its own tests)
	await sequelize().query("UPDATE lots SET status = 'released' WHERE id = :id", { replacements: { id: lot.id } });
}, 240_000);

describe('library growth', () => {
	it('lists the released lot as a candidate with the distances, builds a draft only on request, and the diff shows the validation change', async () => {
		const view = await growth.candidates(code);
		const lot = view.lots.find((l) => l.lotId === lotId);
		expect(lot).toBeDefined();
		expect(lot!.scans).toBeGreaterThan(0);
		expect(lot!.preselect).toBe(true);
		expect(lot!.drift).toBeNull();
		expect(view.training.n).toBe(14);
		expect(lot!.distances.n).toBe(lot!.scans);

		// nothing entered the library by itself
		const before = await sequelize().query<{ n: string }>('SELECT count(*) AS n FROM library_entries WHERE material_id = :m AND source_scan_id IS NOT NULL', { replacements: { m: materialId }, type: QueryTypes.SELECT });
		expect(Number(before[0].n)).toBe(0);

		const tech = await makeUser(['technician']);
		await expect(growth.propose(tech.actor, code, { lotIds: [lotId], reason: 'more genuine lots' })).rejects.toMatchObject({ status: 403 });
		await expect(growth.propose(chemist.actor, code, { lotIds: [lotId + 100000], reason: 'more genuine lots' })).rejects.toMatchObject({ status: 400, field: 'lotIds' });
		await expect(growth.propose(chemist.actor, code, { lotIds: [lotId], reason: '' })).rejects.toThrow(/Write why/);

		const draft = await growth.propose(chemist.actor, code, { lotIds: [lotId], reason: 'a new genuine lot from a qualified supplier' }, { inline: true });
		expect(draft.added).toBe(lot!.scans);
		const v2 = await versions.get(draft.id);
		expect(v2.state).toBe('draft');
		expect(v2.parentId).toBe(v1);

		// the added spectra train only in that draft while it is not approved
		const planned = await planMemberships(materialId, v1, { exclude: [], include: [] });
		const added = await sequelize().query<{ id: number }>('SELECT id FROM library_entries WHERE proposed_in = :v', { replacements: { v: draft.id }, type: QueryTypes.SELECT });
		expect(added).toHaveLength(draft.added);
		expect(planned.some((p) => added.some((a) => Number(a.id) === p.entryId))).toBe(false);

		const d = await versions.diff(v1, draft.id);
		expect(d.training.added.map((a) => a.entryId).sort()).toEqual(added.map((a) => Number(a.id)).sort());
		expect(d.validationChange).not.toBeNull();
		expect(d.validationChange!.spectra).toBe(12 + 5 + 5 + 5); // standardRows: 12 genuine tests, 5 per suspect, 5 challenge
		expect(d.validationChange!.genuineTests).toBe(12);
		expect(d.validationChange!.sensitivityFrom).not.toBeNull();
		expect(d.validationChange!.sensitivityTo).not.toBeNull();

		// no longer a candidate; the approved version carries the revalidation trigger; audited
		expect((await growth.candidates(code)).lots.find((l) => l.lotId === lotId)).toBeUndefined();
		const [row] = await sequelize().query<{ revalidation: { kind: string }[] }>('SELECT revalidation FROM model_versions WHERE id = :id', { replacements: { id: v1 }, type: QueryTypes.SELECT });
		expect(row.revalidation.map((r) => r.kind)).toContain('library-change');
		const events = await audit.list({ entity: 'material', action: 'library.growth-proposed' });
		expect(events.rows.some((e) => e.entityId === String(materialId))).toBe(true);
	});
});
