// Instruments fit for use: checks recorded with pass/fail, and an overdue or failed instrument cannot screen.
import { QueryTypes } from 'sequelize';
import { beforeAll, describe, expect, it } from 'vitest';
import { writeJcampAffn } from '../../src/lib/demo/jcamp-writer';
import { sequelize } from '../../src/lib/server/db';
import type { Actor } from '../../src/lib/server/services/actor';
import * as audit from '../../src/lib/server/services/audit';
import * as checks from '../../src/lib/server/services/instrument-checks';
import * as instruments from '../../src/lib/server/services/instruments';
import * as lots from '../../src/lib/server/services/lots';
import * as scans from '../../src/lib/server/services/scans';
import { makeUser, rootActor, unique } from '../support/factories';
import { approvedMaterial, jcamp, type LotFixture } from '../support/lot-fixtures';

/** A synthetic rare-earth-oxide-like reflectance standard: Gaussian bands (FWHM 20 nm) at the given centres, 2-nm grid. */
export function standardFile(centres: number[], title = 'wavelength standard', noise = 0) {
	const axis = Array.from({ length: 551 }, (_, i) => 1200 + 2 * i);
	let seed = 7;
	const rnd = () => ((seed = (seed * 16807) % 2147483647) / 2147483647 - 0.5) * 2;
	const values = axis.map((x) => 0.1 + centres.reduce((s, c) => s + 0.5 * Math.exp((-4 * Math.log(2) * (x - c) ** 2) / 400), 0) + noise * rnd());
	const yFactor = 1e-7;
	return new TextEncoder().encode(
		writeJcampAffn({ title, axis: Float64Array.from(axis), values: values.map((v) => Math.round(v / yFactor) * yFactor), xUnits: 'NANOMETERS', yUnits: 'ABSORBANCE', yFactor, dataType: 'NEAR INFRARED SPECTRUM', origin: 'Lotgate tests', owner: 'Lotgate tests (synthetic)' })
	);
}

let fx: LotFixture;
let tech: Actor;
const today = () => new Date().toISOString().slice(0, 10);

async function newInstrument() {
	return instruments.create(rootActor, { name: unique('NIR'), technique: 'NIR', serial: 'SN-1', axisUnit: 'nm', qualificationDue: '2099-12-31' });
}
async function lotWithOne() {
	return lots.create(tech, { material: fx.materialCode, supplier: fx.supplierCode, supplierLot: unique('IC'), containers: 2, receivedAt: today() });
}

beforeAll(async () => {
	fx = await approvedMaterial();
	tech = (await makeUser(['technician'])).actor;
});

describe('recording instrument checks', () => {
	it('a new instrument is qualified during its first-check grace period', async () => {
		const inst = await newInstrument();
		const s = await checks.status(inst.id);
		expect(s.qualified).toBe(true);
		expect(s.kinds.map((k) => k.state)).toEqual(['current', 'current', 'current']);
	});

	it('wavelength: peaks by quadratic fit, pass within tolerance, fail when the axis moved by 2 nm; audited', async () => {
		const inst = await newInstrument();
		const ok = await checks.record(tech, inst.id, { kind: 'wavelength' }, { bytes: standardFile([1261.3, 1680.6, 1935.4]), fileName: 'srm-ok.jdx' });
		expect(ok.passed).toBe(true);
		const bands = (ok.figures as { bands: { expected: number; found: number }[] }).bands;
		expect(bands.map((b) => b.found)).toEqual([expect.closeTo(1261.3, 1), expect.closeTo(1680.6, 1), expect.closeTo(1935.4, 1)]);
		const bad = await checks.record(tech, inst.id, { kind: 'wavelength' }, { bytes: standardFile([1263, 1683, 1937]), fileName: 'srm-shifted.jdx' });
		expect(bad.passed).toBe(false);
		expect(bad.summary).toMatch(/out of tolerance/);
		const s = await checks.status(inst.id);
		expect(s.qualified).toBe(false);
		expect(s.reason).toBe(`instrument not qualified: wavelength check failed on ${today()}`);
		const events = await audit.list({ entity: 'instrument', action: 'instrument.check-recorded' });
		expect(events.rows.filter((e) => e.entityId === String(inst.id))).toHaveLength(2);
	});

	it('linearity from readings and noise from a flat spectrum; bad input is a clear 400; only technicians/admins record', async () => {
		const inst = await newInstrument();
		const lin = await checks.record(tech, inst.id, { kind: 'linearity', readings: '0.02 0.021\n0.10 0.101\n0.50 0.497\n0.99 0.985' });
		expect(lin.passed).toBe(true);
		const linBad = await checks.record(tech, inst.id, { kind: 'linearity', readings: '0.02 0.03\n0.10 0.19\n0.50 0.62\n0.99 1.12' });
		expect(linBad.passed).toBe(false); // slope ≈ 1.10
		await expect(checks.record(tech, inst.id, { kind: 'linearity', readings: '0.1 x' })).rejects.toMatchObject({ status: 400, field: 'readings' });
		await expect(checks.record(tech, inst.id, { kind: 'noise' }, null)).rejects.toMatchObject({ status: 400, field: 'file' });
		const noise = await checks.record(tech, inst.id, { kind: 'noise' }, { bytes: standardFile([], 'flat', 0.0001), fileName: 'flat.jdx' });
		expect(noise.passed).toBe(true);
		const qa = (await makeUser(['qa'])).actor;
		await expect(checks.record(qa, inst.id, { kind: 'noise' }, { bytes: standardFile([], 'flat'), fileName: 'f.jdx' })).rejects.toMatchObject({ status: 403 });
	});
});

describe('effect on screening', () => {
	it('an instrument whose checks are overdue: the scan is stored and unusable with the reason; a scan naming no instrument still screens', async () => {
		const inst = await newInstrument();
		await sequelize().query("UPDATE instruments SET checks_due_from = date '2026-01-15' WHERE id = :id", { replacements: { id: inst.id } });
		const lot = await lotWithOne();
		const r = await scans.add(tech, lot.id, { bytes: jcamp('genuine', fx.axis, 91, 'c1'), fileName: 'c1.jdx', container: 1, instrumentId: inst.id });
		expect(r.verdict).toBe('unusable');
		expect(r.reason).toBe('instrument not qualified: wavelength check overdue since 2026-01-15');
		const stored = await sequelize().query('SELECT id FROM spectra WHERE id = :id', { replacements: { id: r.spectrumId }, type: QueryTypes.SELECT });
		expect(stored).toHaveLength(1);
		const plain = await scans.add(tech, lot.id, { bytes: jcamp('genuine', fx.axis, 92, 'c2'), fileName: 'c2.jdx', container: 2 });
		expect(plain.verdict).toBe('genuine');
	});

	it('a failed check blocks screening until a passing check is recorded', async () => {
		const inst = await newInstrument();
		await checks.record(tech, inst.id, { kind: 'wavelength' }, { bytes: standardFile([1264, 1684, 1938]), fileName: 'bad.jdx' });
		const lot = await lotWithOne();
		const r = await scans.add(tech, lot.id, { bytes: jcamp('genuine', fx.axis, 93, 'c1'), fileName: 'c1.jdx', container: 1, instrumentId: inst.id });
		expect(r.verdict).toBe('unusable');
		expect(r.reason).toMatch(/^instrument not qualified: wavelength check failed on \d{4}-\d{2}-\d{2}$/);
		await checks.record(tech, inst.id, { kind: 'wavelength' }, { bytes: standardFile([1261, 1681, 1935]), fileName: 'good.jdx' });
		const again = await scans.add(tech, lot.id, { bytes: jcamp('genuine', fx.axis, 94, 'c1b'), fileName: 'c1b.jdx', container: 1, instrumentId: inst.id });
		expect(again.verdict).toBe('genuine');
	});

	it('an admin edits the plan (tolerance) with a reason; audited; a bad plan is a 400', async () => {
		const inst = await newInstrument();
		const d = await checks.detail(inst.id);
		const plan = structuredClone(d.plan);
		plan.wavelength.bands[0].tolerance = 0.5;
		await expect(checks.updatePlan(tech, inst.id, plan, 'tighter tolerance')).rejects.toMatchObject({ status: 403 });
		await expect(checks.updatePlan(rootActor, inst.id, { ...plan, noise: { maxRms: -1 } }, 'broken plan')).rejects.toMatchObject({ status: 400 });
		await checks.updatePlan(rootActor, inst.id, plan, 'certificate of the new standard');
		expect((await checks.detail(inst.id)).plan.wavelength.bands[0].tolerance).toBe(0.5);
	});
});
