import { execFileSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { QueryTypes } from 'sequelize';
import { beforeAll, describe, expect, it } from 'vitest';
import { sequelize } from '../../src/lib/server/db';
import * as audit from '../../src/lib/server/services/audit';
import * as instruments from '../../src/lib/server/services/instruments';
import * as lots from '../../src/lib/server/services/lots';
import * as scans from '../../src/lib/server/services/scans';
import { makeUser, rootActor, unique } from '../support/factories';
import { approvedMaterial, corrupt, demoMaterial, jcamp, type LotFixture } from '../support/lot-fixtures';
import { forLot } from '../support/relabel';
import type { Actor } from '../../src/lib/server/services/actor';

const today = () => new Date().toISOString().slice(0, 10);
let fx: LotFixture;
let tech: Actor;

beforeAll(async () => {
	fx = await approvedMaterial();
	tech = (await makeUser(['technician'])).actor;
});

async function receive(containers: number, extra: Partial<lots.LotInput> = {}) {
	return lots.create(tech, { material: fx.materialCode, supplier: fx.supplierCode, supplierLot: unique('SL'), containers, receivedAt: today(), ...extra });
}

describe('receiving a lot', () => {
	it('generates a unique internal lot number, numbers containers 1..N and samples every container by default', async () => {
		const a = await receive(4);
		const b = await receive(4);
		expect(a.internalLot).toMatch(/^QL-\d{4}-\d{5}$/);
		expect(a.internalLot).not.toBe(b.internalLot);
		expect(a.containers.map((c) => c.number)).toEqual([1, 2, 3, 4]);
		expect(a.sampled).toEqual([1, 2, 3, 4]);
		expect(a.plan.kind).toBe('every');
		expect(a.status).toBe('awaiting-scans');
		const events = await audit.list({ entity: 'lot', action: 'lot.received' });
		expect(events.rows.some((e) => e.entityId === String(a.id))).toBe(true);
	});

	it('applies a reduced plan only with policy, qualified supplier and justification; the seed reproduces the choice', async () => {
		const lot = await receive(40, { plan: { kind: 'n', justification: 'qualified supplier, validated chain', seed: 20250601 } });
		expect(lot.sampled).toEqual([2, 4, 6, 15, 32, 33, 38]); // docs/methods.md §15 worked example (n = round(1 + √40) = 7)
		expect(lot.plan.formula).toContain('round(7.325) = 7');
		await expect(receive(40, { plan: { kind: 'n' } })).rejects.toMatchObject({ status: 400, field: 'justification' });
		const strict = await approvedMaterial({ withModel: false, policy: 'every-container' });
		await expect(
			lots.create(tech, { material: strict.materialCode, supplier: strict.supplierCode, supplierLot: 'x', containers: 10, receivedAt: today(), plan: { kind: 'n', justification: 'long enough reason' } })
		).rejects.toMatchObject({ status: 400, message: expect.stringMatching(/sampling policy is every container/) });
	});

	it('flags an on-watch or blocked supplier, and refuses a reduced plan for it', async () => {
		const suppliers = await import('../../src/lib/server/services/suppliers');
		const watch = await suppliers.create(rootActor, { code: unique('W').toUpperCase(), name: 'Watched', status: 'on-watch' });
		await expect(receive(9, { supplier: watch.code, plan: { kind: 'n', justification: 'a long enough reason' } })).rejects.toMatchObject({ status: 400, message: expect.stringMatching(/qualified supplier.*on-watch/) });
		const lot = await receive(3, { supplier: watch.code });
		expect(lot.supplierFlag).toBe('on-watch');
		expect(lot.supplierFlagText).toMatch(/on watch/);
	});

	it('refuses unknown materials and duplicates with clear errors, and lists with filters and paging', async () => {
		await expect(receive(2, { material: 'NOPE-XYZ' })).rejects.toMatchObject({ status: 400, field: 'material' });
		const supplierLot = unique('DUP');
		await receive(2, { supplierLot });
		await expect(receive(2, { supplierLot })).rejects.toMatchObject({ status: 409 });
		const page = await lots.list({ material: fx.materialCode, status: 'awaiting-scans', sort: 'internalLot', pageSize: 2 });
		expect(page.rows.length).toBe(2);
		expect(page.total).toBeGreaterThan(2);
		expect(page.rows[0].internalLot < page.rows[1].internalLot).toBe(true);
		expect((await lots.list({ from: '2999-01-01' })).total).toBe(0);
	});

	it('only technicians and admins receive lots', async () => {
		const qa = (await makeUser(['qa'])).actor;
		await expect(lots.create(qa, { material: fx.materialCode, supplier: fx.supplierCode, supplierLot: 'q', containers: 1, receivedAt: today() })).rejects.toMatchObject({ status: 403 });
	});
});

describe('scanning and verdicts', () => {
	const file = (kind: Parameters<typeof jcamp>[0], seed: number, name = `C${seed}.jdx`) => ({ bytes: jcamp(kind, fx.axis, seed, name), fileName: name });

	it('a genuine lot meets identity; statuses move awaiting-scans → screened', async () => {
		const lot = await receive(3);
		for (const c of [1, 2]) expect((await scans.add(tech, lot.id, { ...file('genuine', 5000 + c), container: c })).status.status).toBe('awaiting-scans');
		const last = await scans.add(tech, lot.id, { ...file('genuine', 5003), container: 3 });
		expect(last.verdict).toBe('genuine');
		expect(last.status).toMatchObject({ status: 'screened', identity: 'meets' });
		const view = await lots.get(lot.id);
		expect(view.outcome.summary).toMatch(/Meets identity/);
		expect(view.scans.every((s) => s.modelVersion?.id === fx.versionId && s.statistics?.family?.t2 != null)).toBe(true);
		expect(view.scans[0].title).toBe('C5001.jdx');
	});

	it('a diluted container fails identity with the right profile; a rescan adds a row and never replaces the failing result', async () => {
		const lot = await receive(2);
		await scans.add(tech, lot.id, { ...file('genuine', 6001), container: 1 });
		const bad = await scans.add(tech, lot.id, { ...file('diluted-starch', 6002), container: 2 });
		expect(bad.verdict).toBe('suspect');
		expect(bad.profile).toBe('diluted-starch');
		let view = await lots.get(lot.id);
		expect(view.identity).toBe('fails');
		expect(view.outcome.summary).toBe('Fails identity, quarantine recommended: C02 suspect (diluted-starch).');
		// Neither an unusable nor a genuine rescan replaces the failing result (issue #11: only an approved invalidation does).
		await scans.add(tech, lot.id, { bytes: corrupt(fx.axis, 6003), fileName: 'C02-broken.jdx', container: 2 });
		view = await lots.get(lot.id);
		expect(view.identity).toBe('fails');
		await scans.add(tech, lot.id, { ...file('genuine', 6004), container: 2 });
		view = await lots.get(lot.id);
		expect(view.scans.filter((s) => s.container === 2)).toHaveLength(3);
		expect(view.identity).toBe('fails');
	});

	it('an unseen adulteration is never genuine; a wrong material is not-this-material', async () => {
		const lot = await receive(2);
		const talc = await scans.add(tech, lot.id, { ...file('talc-cut', 7001), container: 1 });
		expect(['unknown', 'not-this-material']).toContain(talc.verdict);
		const wrong = await scans.add(tech, lot.id, { ...file('cellulose', 7002), container: 2 });
		expect(wrong.verdict).toBe('not-this-material');
		const view = await lots.get(lot.id);
		expect(view.identity).toBe('fails');
		expect(view.outcome.investigation).toBe(true);
		expect(view.outcome.investigationNote).toMatch(/not an automatic rejection/);
	});

	it('a corrupt file is kept as an unusable scan with the parser reason; a duplicate file is refused', async () => {
		const lot = await receive(1);
		const bytes = corrupt(fx.axis, 7101);
		const r = await scans.add(tech, lot.id, { bytes, fileName: 'C01.jdx', container: 1 });
		expect(r.verdict).toBe('unusable');
		expect(r.reason).toMatch(/could not be read/);
		const [sp] = await sequelize().query<{ format: string; points: number; raw: Buffer }>('SELECT format, points, raw FROM spectra WHERE id = :id', { replacements: { id: r.spectrumId }, type: QueryTypes.SELECT });
		expect(sp).toMatchObject({ format: 'unparsed', points: 0 });
		expect(Buffer.compare(sp.raw, Buffer.from(bytes))).toBe(0);
		await expect(scans.add(tech, lot.id, { bytes, fileName: 'again.jdx', container: 1 })).rejects.toMatchObject({ status: 409 });
		expect((await lots.get(lot.id)).status).toBe('awaiting-scans');
	});

	it('a spectrum that does not cover the model range is stored as unusable naming the missing interval', async () => {
		const lot = await receive(1);
		const short = fx.axis.filter((x) => x < 2000);
		const bytes = jcamp('genuine', Float64Array.from(short), 7201, 'short');
		const r = await scans.add(tech, lot.id, { bytes, fileName: 'short.jdx', container: 1 });
		expect(r.verdict).toBe('unusable');
		expect(r.reason).toMatch(/2\d{3}/);
	});

	it('a wrong technique (instrument or file) is unusable with the reason', async () => {
		const raman = await instruments.create(rootActor, { name: unique('RAM'), technique: 'Raman', serial: 'x', axisUnit: 'cm-1', qualificationDue: '2999-01-01' });
		const lot = await receive(2);
		const byInstrument = await scans.add(tech, lot.id, { ...file('genuine', 7301), container: 1, instrumentId: raman.id });
		expect(byInstrument).toMatchObject({ verdict: 'unusable', reason: expect.stringMatching(/wrong technique: .*measures Raman/) });
		const byFile = await scans.add(tech, lot.id, { ...file('raman', 7302), container: 2 });
		expect(byFile).toMatchObject({ verdict: 'unusable', reason: expect.stringMatching(/wrong technique: the file is a Raman spectrum/) });
	});

	it('400 for a container outside the plan naming the plan; 409 for a closed lot', async () => {
		const lot = await receive(40, { plan: { kind: 'n', justification: 'qualified supplier, validated chain', seed: 20250601 } });
		await expect(scans.add(tech, lot.id, { ...file('genuine', 7401), container: 3 })).rejects.toMatchObject({
			status: 400,
			field: 'container',
			message: expect.stringMatching(new RegExp(`Container 3 is not in the sampling plan of ${lot.internalLot} .*containers 2, 4, 6, 15`))
		});
		await expect(scans.add(tech, lot.id, { ...file('genuine', 7402), container: 41 })).rejects.toMatchObject({ status: 400 });
		await sequelize().query("UPDATE lots SET status = 'released' WHERE id = :id", { replacements: { id: lot.id } });
		await expect(scans.add(tech, lot.id, { ...file('genuine', 7403), container: 2 })).rejects.toMatchObject({ status: 409 });
		expect(lots.isClosed({ status: 'quarantined' })).toBe(false);
	});

	it('without an approved model the scan is stored as not screened, and re-screened once one exists', async () => {
		const bare = await approvedMaterial({ withModel: false });
		const lot = await lots.create(tech, { material: bare.materialCode, supplier: bare.supplierCode, supplierLot: 'ns', containers: 1, receivedAt: today() });
		const r = await scans.add(tech, lot.id, { bytes: jcamp('genuine', bare.axis, 7501, 'ns'), fileName: 'ns.jdx', container: 1 });
		expect(r).toMatchObject({ verdict: 'not-screened', reason: `not screened: no approved model for ${bare.materialCode}` });
		expect((await lots.get(lot.id)).identity).toBe('not-screened');
		// Approve the fixture model for this material too, then screen the stored scan again.
		await sequelize().query("UPDATE model_versions SET material_id = :m WHERE id = :id", { replacements: { m: bare.materialId, id: (await approvedMaterial()).versionId } });
		const again = await scans.rescreen(tech, lot.id);
		expect(again.scans[0].verdict).toBe('genuine');
		const view = await lots.get(lot.id);
		expect(view.scans).toHaveLength(2);
		expect(view.scans[1].rescreenOf).toBe(view.scans[0].id);
		expect(view.identity).toBe('meets');
	});

	it('the stored statistics equal `lotgate screen` on the same artefact and file', async () => {
		const lot = await receive(1);
		const bytes = jcamp('diluted-starch', fx.axis, 7601, 'cli-check');
		const r = await scans.add(tech, lot.id, { bytes, fileName: 'cli.jdx', container: 1 });
		const dir = mkdtempSync(join(tmpdir(), 'lotgate-cli-'));
		writeFileSync(join(dir, 'model.json'), fx.artefactText);
		writeFileSync(join(dir, 'cli.jdx'), bytes);
		const out = JSON.parse(execFileSync('node', ['bin/lotgate.js', 'screen', '--model', join(dir, 'model.json'), '--input', join(dir, 'cli.jdx'), '--json'], { encoding: 'utf8' }));
		const cli = out.results[0];
		const [stored] = await sequelize().query<{ result: Record<string, unknown>; verdict: string }>('SELECT result, verdict FROM scans WHERE id = :id', { replacements: { id: r.scanId }, type: QueryTypes.SELECT });
		expect(stored.verdict).toBe(cli.verdict);
		const strip = (s: Record<string, unknown> | null) => (s ? Object.fromEntries(Object.entries(s).filter(([k]) => k !== 'contributions')) : s);
		expect(strip(stored.result.family as Record<string, unknown>)).toEqual(cli.family);
		for (const [name, s] of Object.entries(stored.result.classes as Record<string, Record<string, unknown>>)) expect(strip(s)).toEqual(cli.classes[name]);
	});

	it('every mutation leaves the audit chain valid', async () => {
		expect((await audit.verifyChain()).ok).toBe(true);
	});
});

describe('demo fixtures (demoScenario lots against a model built from the demo library)', () => {
	let demo: Awaited<ReturnType<typeof demoMaterial>>;
	beforeAll(async () => {
		demo = await demoMaterial('LAC-200');
	});
	async function screenDemoLot(lotKey: string) {
		const spec = demo.lots.find((l) => l.lotKey === lotKey)!;
		const supplierLot = unique(spec.supplierLot);
		const lot = await lots.create(tech, { material: demo.materialCode, supplier: demo.supplierCode, supplierLot, containers: spec.files.length, receivedAt: today() });
		const verdicts: Record<number, { verdict: string; profile: string | null; reason: string | null }> = {};
		for (const f of spec.files) {
			const r = await scans.add(tech, lot.id, { bytes: forLot(f.bytes, { supplierLot, container: f.container }), fileName: f.name, container: f.container });
			verdicts[f.container] = { verdict: r.verdict, profile: r.profile, reason: r.reason };
		}
		return { lot: await lots.get(lot.id), verdicts, spec };
	}

	it('lac-good meets identity', async () => {
		const { lot, verdicts } = await screenDemoLot('lac-good');
		expect(Object.values(verdicts).every((v) => v.verdict === 'genuine')).toBe(true);
		expect(lot).toMatchObject({ status: 'screened', identity: 'meets' });
		expect(lot.scans[0].title).toBeTruthy();
	});
	it('lac-diluted fails identity with diluted-starch on container 4', async () => {
		const { lot, verdicts } = await screenDemoLot('lac-diluted');
		expect(verdicts[4]).toMatchObject({ verdict: 'suspect', profile: 'diluted-starch' });
		expect(lot.identity).toBe('fails');
		expect(lot.outcome.failures.map((f) => f.container)).toEqual([4]);
	});
	it('lac-talc (unseen adulterant): container 2 is unknown or not-this-material, never genuine', async () => {
		const { verdicts, lot } = await screenDemoLot('lac-talc');
		expect(['unknown', 'not-this-material']).toContain(verdicts[2].verdict);
		expect(lot.outcome.investigation).toBe(true);
	});
	it('lac-wrong (MCC) gives not-this-material', async () => {
		const { verdicts } = await screenDemoLot('lac-wrong');
		expect(Object.values(verdicts).every((v) => v.verdict === 'not-this-material')).toBe(true);
	});
	it('lac-corrupt: the truncated file gives unusable with the parser reason', async () => {
		const { verdicts, lot } = await screenDemoLot('lac-corrupt');
		expect(verdicts[1].verdict).toBe('genuine');
		expect(verdicts[2]).toMatchObject({ verdict: 'unusable', reason: expect.stringMatching(/could not be read: .*##END=/) });
		expect(lot.status).toBe('awaiting-scans');
	});
	it('the stored statistics equal `lotgate screen` on a demo file', async () => {
		const spec = demo.lots.find((l) => l.lotKey === 'lac-diluted')!;
		const supplierLot = unique('cli');
		const demoFile = spec.files.find((x) => x.container === 4)!;
		const f = { ...demoFile, bytes: forLot(demoFile.bytes, { supplierLot, container: 4 }) };
		const lot = await lots.create(tech, { material: demo.materialCode, supplier: demo.supplierCode, supplierLot, containers: 4, receivedAt: today() });
		const r = await scans.add(tech, lot.id, { bytes: f.bytes, fileName: f.name, container: 4 });
		const dir = mkdtempSync(join(tmpdir(), 'lotgate-cli-'));
		writeFileSync(join(dir, 'model.json'), demo.artefactText);
		writeFileSync(join(dir, f.name), f.bytes);
		const out = JSON.parse(execFileSync('node', ['bin/lotgate.js', 'screen', '--model', join(dir, 'model.json'), '--input', join(dir, f.name), '--json'], { encoding: 'utf8' }));
		const [stored] = await sequelize().query<{ result: { family: Record<string, unknown>; classes: Record<string, Record<string, unknown>> } }>('SELECT result FROM scans WHERE id = :id', {
			replacements: { id: r.scanId },
			type: QueryTypes.SELECT
		});
		const strip = (s: Record<string, unknown>) => Object.fromEntries(Object.entries(s).filter(([k]) => k !== 'contributions'));
		expect(out.results[0].verdict).toBe(r.verdict);
		expect(strip(stored.result.family)).toEqual(out.results[0].family);
		for (const [name, s] of Object.entries(stored.result.classes)) expect(strip(s)).toEqual(out.results[0].classes[name]);
	});
});
