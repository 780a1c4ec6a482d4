// Model transfer to a second instrument (issue 14 §3): a version screens only the instruments it was built on and
// those with a transfer check approved by QA; scans from any other instrument are stored and `unusable`.
import { createHash } from 'node:crypto';
import { QueryTypes } from 'sequelize';
import { beforeAll, describe, expect, it } from 'vitest';
import { sequelize } from '../../src/lib/server/db';
import type { Actor } from '../../src/lib/server/services/actor';
import * as audit from '../../src/lib/server/services/audit';
import * as instruments from '../../src/lib/server/services/instruments';
import * as library from '../../src/lib/server/services/library';
import * as lots from '../../src/lib/server/services/lots';
import * as scans from '../../src/lib/server/services/scans';
import * as transfers from '../../src/lib/server/services/transfers';
import { makeUser, rootActor, unique } from '../support/factories';
import { approvedMaterial, jcamp, synth, type LotFixture } from '../support/lot-fixtures';

let fx: LotFixture;
let tech: Actor;
let chemist: Actor;
let qa: { actor: Actor; password: string };
let home: { id: number; name: string };
let newcomer: { id: number; name: string };
const today = () => new Date().toISOString().slice(0, 10);
let seed = 51_000;

const instrument = async (prefix: string) => instruments.create(rootActor, { name: unique(prefix), technique: 'NIR', serial: 'SN-T', axisUnit: 'nm', qualificationDue: '2099-12-31' });

/** The fixture version's training membership, as a build records it: 20 genuine spectra measured on `home`. */
async function homeMembership(versionId: number, materialId: number, instrumentId: number) {
	const [cls] = await sequelize().query<{ id: number }>("SELECT id FROM material_classes WHERE material_id = :m AND name = 'genuine'", { replacements: { m: materialId }, type: QueryTypes.SELECT });
	for (let i = 0; i < 20; i++) {
		const y = synth('genuine', fx.axis, 1000 + i);
		const raw = Buffer.from(`training ${i} ${versionId}`);
		const [sp] = await sequelize().query<{ id: number }>(
			`INSERT INTO spectra (sha256, raw, file_name, format, points, axis, intensities, unit, context, context_id, instrument_id)
			 VALUES (:sha, :raw, :file, 'csv', :n, :axis, :y, 'nm', 'library', :m, :i) RETURNING id`,
			{ replacements: { sha: createHash('sha256').update(raw).digest('hex'), raw, file: `train-${i}.csv`, n: fx.axis.length, axis: `{${Array.from(fx.axis).join(',')}}`, y: `{${Array.from(y).join(',')}}`, m: materialId, i: instrumentId }, type: QueryTypes.SELECT }
		);
		const [e] = await sequelize().query<{ id: number }>(
			`INSERT INTO library_entries (material_id, spectrum_id, class_id, label, role, supplier_lot, instrument_id) VALUES (:m, :sp, :c, 'genuine', 'training', :lot, :i) RETURNING id`,
			{ replacements: { m: materialId, sp: sp.id, c: cls.id, lot: `TR-${i % 4}`, i: instrumentId }, type: QueryTypes.SELECT }
		);
		await sequelize().query('INSERT INTO model_memberships (model_version_id, library_entry_id, included) VALUES (:v, :e, true)', { replacements: { v: versionId, e: e.id } });
	}
}

async function scanOn(instrumentId: number | null) {
	const lot = await lots.create(tech, { material: fx.materialCode, supplier: fx.supplierCode, supplierLot: unique('TX'), containers: 1, receivedAt: today() });
	return scans.add(tech, lot.id, { bytes: jcamp('genuine', fx.axis, seed++, unique('c')), fileName: `${unique('c1')}.jdx`, container: 1, instrumentId });
}

/** Genuine-class transfer spectra measured on an instrument: `perLot` files in each of the given supplier lots. */
async function transferSpectra(instrumentName: string, lotsOf: string[], perLot: number, kind: 'genuine' | 'diluted-starch' = 'genuine') {
	for (const supplierLot of lotsOf) {
		const files = Array.from({ length: perLot }, (_, i) => ({ name: `${supplierLot}-${i}.jdx`, bytes: jcamp(kind, fx.axis, seed++, `${supplierLot} ${i}`) }));
		await library.addFiles(chemist, fx.materialId, files, { class: 'genuine', role: 'transfer', supplierLot, instrument: instrumentName });
	}
}

beforeAll(async () => {
	fx = await approvedMaterial();
	tech = (await makeUser(['technician'])).actor;
	chemist = (await makeUser(['chemometrician'])).actor;
	qa = await makeUser(['qa']);
	home = await instrument('HOME');
	newcomer = await instrument('NEW');
	await homeMembership(fx.versionId, fx.materialId, home.id);
});

describe('a version screens only where it was built or transferred', () => {
	it('home instrument screens; a new instrument is stored and unusable with the reason; no instrument is screened and flagged', async () => {
		expect((await transfers.homeInstruments(fx.versionId)).instruments.map((i) => i.name)).toEqual([home.name]);
		// screened means a material verdict by the version (genuine or not is the model's business, not the gate's)
		const screened = (r: Awaited<ReturnType<typeof scanOn>>) => r.modelVersion?.id === fx.versionId && r.verdict !== 'unusable';
		const onHome = await scanOn(home.id);
		expect(screened(onHome)).toBe(true);
		const onNew = await scanOn(newcomer.id);
		expect(onNew.verdict).toBe('unusable');
		expect(onNew.reason).toBe(`model not transferred to this instrument: ${fx.materialCode} v1 was built on ${home.name} and has no approved transfer to ${newcomer.name}`);
		const stored = await sequelize().query('SELECT id FROM spectra WHERE id = :id', { replacements: { id: onNew.spectrumId }, type: QueryTypes.SELECT });
		expect(stored).toHaveLength(1);
		const unstated = await scanOn(null);
		expect(screened(unstated)).toBe(true);
		expect(unstated.instrumentStated).toBe(false);
	});

	it('a check with too few spectra is stored as failed and cannot be approved', async () => {
		await transferSpectra(newcomer.name, ['NL-1'], 4);
		const first = await transfers.check(chemist, fx.versionId, { instrument: newcomer.name, note: 'bench 2 installed in the warehouse' });
		expect(first.state).toBe('failed');
		expect(first.evaluation.checks.filter((c) => !c.met).map((c) => c.key)).toEqual(['spectra', 'lots']);
		await expect(transfers.decide(qa.actor, first.id, true, { password: qa.password, meaning: transfers.TRANSFER_MEANING, reason: 'looks fine' })).rejects.toMatchObject({ status: 409 });
	});

	it('12 genuine spectra from 3 lots pass; QA (not the checker) approves with a signature; then the instrument screens', async () => {
		await transferSpectra(newcomer.name, ['NL-2', 'NL-3'], 4);
		await expect(transfers.check(tech, fx.versionId, { instrument: newcomer.name, note: 'not mine' })).rejects.toMatchObject({ status: 403 });
		const t = await transfers.check(chemist, fx.versionId, { instrument: newcomer.name, note: 'bench 2 installed in the warehouse' });
		expect(t.state).toBe('proposed');
		expect(t.evaluation.spectra).toBe(12);
		expect(t.evaluation.lots).toEqual(['NL-1', 'NL-2', 'NL-3']);
		expect(t.evaluation.genuine / t.evaluation.spectra).toBeGreaterThanOrEqual(0.9);
		expect(t.evaluation.comparison.new.n).toBe(12);
		// a second open check of the same pair is refused
		await expect(transfers.check(chemist, fx.versionId, { instrument: newcomer.name, note: 'again' })).rejects.toMatchObject({ status: 409 });
		// wrong password, wrong meaning: nothing changes
		await expect(transfers.decide(qa.actor, t.id, true, { password: 'wrong-password-here', meaning: transfers.TRANSFER_MEANING, reason: 'looks fine' })).rejects.toMatchObject({ status: 401 });
		await expect(transfers.decide(qa.actor, t.id, true, { password: qa.password, meaning: 'approved', reason: 'looks fine' })).rejects.toMatchObject({ status: 400, field: 'meaning' });
		expect((await scanOn(newcomer.id)).verdict).toBe('unusable');
		const d = await transfers.decide(qa.actor, t.id, true, { password: qa.password, meaning: transfers.TRANSFER_MEANING, reason: 'transfer evidence reviewed' });
		expect(d.state).toBe('approved');
		expect(d.manifestation.meaning).toBe(transfers.TRANSFER_MEANING);
		const after = await scanOn(newcomer.id);
		expect(after.modelVersion?.id).toBe(fx.versionId);
		expect(after.verdict).not.toBe('unusable');
		const view = await transfers.forVersion(fx.versionId);
		expect(view.approvedFor.map((a) => a.name)).toEqual([home.name, newcomer.name]);
		const events = await audit.list({ entity: 'model_version', action: 'model.transfer-approved' });
		expect(events.rows.some((e) => e.entityId === String(fx.versionId))).toBe(true);
		const [v] = await sequelize().query<{ revalidation: { kind: string }[] }>('SELECT revalidation FROM model_versions WHERE id = :id', { replacements: { id: fx.versionId }, type: QueryTypes.SELECT });
		expect(v.revalidation.map((r) => r.kind)).toContain('new-instrument');
	});

	it('spectra the version does not accept fail the sensitivity criterion', async () => {
		const other = await instrument('ODD');
		await transferSpectra(other.name, ['OL-1', 'OL-2', 'OL-3'], 4, 'diluted-starch');
		const t = await transfers.check(chemist, fx.versionId, { instrument: other.name, note: 'odd bench' });
		expect(t.state).toBe('failed');
		expect(t.evaluation.unmet.join(' ')).toMatch(/sensitivity/);
		expect((await scanOn(other.id)).verdict).toBe('unusable');
	});

	it('a material that requires the instrument: a scan naming none is unusable with that reason; the setting is audited', async () => {
		await expect(transfers.setRequireInstrument(tech, fx.materialId, { required: true, reason: 'site rule' })).rejects.toMatchObject({ status: 403 });
		await transfers.setRequireInstrument(chemist, fx.materialId, { required: true, reason: 'every scan must be traceable to a qualified instrument' });
		const r = await scanOn(null);
		expect(r.verdict).toBe('unusable');
		expect(r.reason).toBe(`instrument not stated: ${fx.materialCode} requires the instrument for every scan`);
		await transfers.setRequireInstrument(chemist, fx.materialId, { required: false, reason: 'back to the default' });
		expect((await scanOn(null)).modelVersion?.id).toBe(fx.versionId);
	});
});
