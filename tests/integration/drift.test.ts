// Supplier drift: a generated series in which the genuine lactose slowly takes up starch. Every container stays
// `genuine` while the lot statistic (mean c/c_crit of the genuine class model) moves; the chart must signal on the
// first lot that clearly leaves the supplier's own history, and on no earlier lot.
import { QueryTypes } from 'sequelize';
import { beforeAll, describe, expect, it } from 'vitest';
import { addBands, NIR } from '../../src/lib/demo/bands';
import { writeJcampAffn } from '../../src/lib/demo/jcamp-writer';
import { createRng } from '../../src/lib/demo/prng';
import { sequelize } from '../../src/lib/server/db';
import type { Actor } from '../../src/lib/server/services/actor';
import * as audit from '../../src/lib/server/services/audit';
import * as drift from '../../src/lib/server/services/drift';
import * as lots from '../../src/lib/server/services/lots';
import * as scans from '../../src/lib/server/services/scans';
import { makeUser, unique } from '../support/factories';
import { approvedMaterial, type LotFixture } from '../support/lot-fixtures';

/** A genuine-like spectrum with a fraction `f` of the lactose replaced by starch (same noise model as lot-fixtures). */
export function blend(axis: Float64Array, f: number, seed: number): Uint8Array {
	const rng = createRng(seed);
	const y = new Float64Array(axis.length);
	const scale = rng.gauss(1, 0.02);
	const shift = rng.gauss(0, 0.3);
	addBands(y, axis, NIR.lactose, scale * (1 - f), shift);
	addBands(y, axis, NIR.crystalWater, scale * (1 - f), shift);
	if (f > 0) addBands(y, axis, NIR.starch, scale * f, shift);
	const offset = rng.gauss(0.2, 0.01);
	for (let i = 0; i < y.length; i++) y[i] += offset + rng.gauss(0, 0.0005);
	const yFactor = 1e-6;
	const text = writeJcampAffn({ title: `blend ${f}`, axis, values: Array.from(y, (v) => Math.round(v / yFactor) * yFactor), xUnits: 'NANOMETERS', yUnits: 'ABSORBANCE', yFactor, dataType: 'NEAR INFRARED SPECTRUM', origin: 'Lotgate tests', owner: 'Lotgate tests (synthetic)' });
	return new TextEncoder().encode(text);
}

// Starch fraction per lot, in received order: 8 lots of the supplier's usual material, then a slow uptake of starch
// (0.1 % more per lot). Five containers a lot. The seeds are fixed, so the series is the same bytes on every run.
export const FRACTIONS = [0, 0, 0, 0, 0, 0, 0, 0, 0.001, 0.002, 0.003, 0.004, 0.005, 0.006];
export const STABLE = 8;
export const CONTAINERS = 5;
export const seedOf = (k: number, c: number) => ((k + 1) * 2654435761 + c * 40503 + 5 * 7777777) % 2147483647;

let fx: LotFixture;
let tech: Actor;
let procurementEmail: string;
let chemometrician: Actor;
const lotIds: number[] = [];

beforeAll(async () => {
	fx = await approvedMaterial();
	tech = (await makeUser(['technician'])).actor;
	procurementEmail = (await makeUser(['procurement'])).email;
	chemometrician = (await makeUser(['chemometrician'])).actor;
	for (let k = 0; k < FRACTIONS.length; k++) {
		const day = `2026-03-${String(k + 1).padStart(2, '0')}`;
		const lot = await lots.create(tech, { material: fx.materialCode, supplier: fx.supplierCode, supplierLot: unique('DR'), containers: CONTAINERS, receivedAt: day });
		lotIds.push(lot.id);
		for (let c = 1; c <= CONTAINERS; c++) await scans.add(tech, lot.id, { bytes: blend(fx.axis, FRACTIONS[k], seedOf(k, c)), fileName: `drift-${k}-${c}.jdx`, container: c });
	}
}, 300_000);

describe('supplier drift chart on a slowly diluting genuine material', () => {
	it('answers the exact API shape, in received order, with state signal', async () => {
		const body = await drift.apiChart(fx.supplierCode, fx.materialCode);
		expect(Object.keys(body).sort()).toEqual(['centre', 'lcl', 'lots', 'material', 'state', 'statistic', 'ucl']);
		expect(body.material).toBe(fx.materialCode);
		expect(body.lots.map((l) => l.lotId)).toEqual(lotIds);
		for (const l of body.lots) expect(Object.keys(l).sort()).toEqual(['lotId', 'receivedAt', 'signal', 'value']);
		expect(body.lots.map((l) => l.receivedAt)).toEqual(FRACTIONS.map((_, k) => `2026-03-${String(k + 1).padStart(2, '0')}`));
		expect(body.state).toBe('signal');
		expect(body.ucl!).toBeGreaterThan(body.centre!);
		expect(body.lcl!).toBeLessThan(body.centre!);
	});

	it('signals on the first lot that clearly leaves the history, no earlier lot, while its containers are all genuine', async () => {
		const c = await drift.chart(fx.supplierCode, fx.materialCode);
		const values = c.lots.map((l) => l.value);
		// Independent yardstick (not the chart's moving-range estimate): the stable lots' mean and sample standard
		// deviation; a lot clearly leaves the history when it lies more than 3 s above that mean.
		const stable = values.slice(0, STABLE);
		const m = stable.reduce((a, b) => a + b, 0) / STABLE;
		const sd = Math.sqrt(stable.reduce((a, b) => a + (b - m) ** 2, 0) / (STABLE - 1));
		const clear = values.findIndex((v, i) => i >= STABLE && v > m + 3 * sd);
		const first = c.lots.findIndex((l) => l.signal);
		expect(clear).toBeGreaterThanOrEqual(STABLE);
		expect(first).toBe(clear);
		expect(c.lots.slice(0, first).every((l) => l.signal === null)).toBe(true);
		// Collecting history until 5 accepted lots are in; the stable phase meets identity throughout.
		expect(c.lots.slice(0, 5).every((l) => l.limits === null)).toBe(true);
		expect(c.lots.slice(0, STABLE).every((l) => l.identity === 'meets')).toBe(true);
		// Several drifting lots before the signal stay genuine while their statistic moves above the stable mean.
		const drifting = c.lots.slice(STABLE, first);
		expect(drifting.length).toBeGreaterThanOrEqual(2);
		expect(drifting.every((l) => l.identity === 'meets')).toBe(true);
		expect(drifting.filter((l) => l.value > m).length).toBeGreaterThanOrEqual(2);
		// Flagged before a container fails: every container of the signalling lot is genuine.
		expect(c.lots[first].identity).toBe('meets');
		expect(c.lots[first].signal!.message).toMatch(/^Rule [1-4]:/);
		// Evidence of which distance moves: with a filler the orthogonal distance grows, not the score distance.
		expect(c.lots[first].meanV!).toBeGreaterThan(c.lots.slice(0, STABLE).reduce((a, l) => a + l.meanV!, 0) / STABLE);
	});

	it('raises one drift alert (kind drift, apart from verdict alerts), audits it and mails procurement and the chemometrician', async () => {
		const c = await drift.chart(fx.supplierCode, fx.materialCode);
		const first = c.lots.find((l) => l.signal)!;
		const signal = await drift.forLot(first.lotId);
		expect(signal).toMatchObject({ rule: first.signal!.rule, supplierCode: fx.supplierCode });
		const alertRows = await sequelize().query<{ id: number; kind: string; lot_id: number; scan_id: number | null }>(
			"SELECT id, kind, lot_id, scan_id FROM alerts WHERE lot_id = :lotId AND kind = 'drift'",
			{ replacements: { lotId: first.lotId }, type: QueryTypes.SELECT }
		);
		expect(alertRows).toHaveLength(1);
		expect(alertRows[0].scan_id).toBeNull();
		expect(signal!.alertId).toBe(Number(alertRows[0].id));
		// Earlier lots raised no drift alert; verdict alerts stay their own kind.
		const earlier = await sequelize().query("SELECT id FROM alerts WHERE kind = 'drift' AND lot_id IN (:ids)", { replacements: { ids: lotIds.slice(0, lotIds.indexOf(first.lotId)) }, type: QueryTypes.SELECT });
		expect(earlier).toHaveLength(0);
		const mails = await sequelize().query<{ recipients: string[]; subject: string; body: string }>('SELECT recipients, subject, body FROM mail_outbox WHERE alert_id = :a', {
			replacements: { a: signal!.alertId },
			type: QueryTypes.SELECT
		});
		expect(mails).toHaveLength(1);
		expect(mails[0].subject).toMatch(/^Drift signal/);
		expect(mails[0].recipients).toContain(procurementEmail.toLowerCase());
		const chem = await sequelize().query<{ email: string }>('SELECT email FROM users WHERE id = :id', { replacements: { id: chemometrician.id }, type: QueryTypes.SELECT });
		expect(mails[0].recipients).toContain(chem[0].email.toLowerCase());
		expect(mails[0].body).toMatch(/does not block a release/);
		const events = await audit.list({ entity: 'lot', action: 'drift.signal' });
		expect(events.rows.some((e) => e.entityId === String(first.lotId))).toBe(true);
	});

	it('refuses a missing material or unknown supplier with a clear 4xx', async () => {
		await expect(drift.apiChart(fx.supplierCode, null)).rejects.toMatchObject({ status: 400, field: 'material' });
		await expect(drift.apiChart('NO-SUCH-SUPPLIER', fx.materialCode)).rejects.toMatchObject({ status: 404 });
		await expect(drift.apiChart(fx.supplierCode, 'NO-SUCH-MAT')).rejects.toMatchObject({ status: 404 });
	});

	it('restarts the baseline only by a chemometrician with a reason; audited; the chart collects 5 new lots again', async () => {
		await expect(drift.restartBaseline(tech, fx.supplierCode, { material: fx.materialCode, reason: 'supplier moved its plant' })).rejects.toMatchObject({ status: 403 });
		await expect(drift.restartBaseline(chemometrician, fx.supplierCode, { material: fx.materialCode, reason: 'short' })).rejects.toThrow();
		const r = await drift.restartBaseline(chemometrician, fx.supplierCode, { material: fx.materialCode, reason: 'Supplier confirmed a new crystallisation line from March' });
		const after = await drift.apiChart(fx.supplierCode, fx.materialCode);
		expect(after.state).toBe('collecting');
		expect(after.centre).toBeNull();
		// The history before the restart keeps its signals.
		expect(after.lots.some((l) => l.signal)).toBe(true);
		const events = await audit.list({ entity: 'supplier', action: 'drift.baseline-restarted' });
		expect(events.rows.some((e) => e.reason?.includes('crystallisation'))).toBe(true);
		expect(r.afterLot).toMatch(/^QL-/);
	});
});
