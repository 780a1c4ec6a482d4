// Result integrity (issue #11) against the real PostgreSQL: a failing container cannot be retested into "genuine";
// only a QA-approved invalidation (signed, by someone other than the proposer) lets a retest count; the release of a
// lot with any failing history takes two QA signatures; alerts stay and show the invalidation; unusable scans raise none.
import { execFileSync } from 'node:child_process';
import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { QueryTypes } from 'sequelize';
import { beforeAll, describe, expect, it } from 'vitest';
import { sequelize } from '../../src/lib/server/db';
import * as alerts from '../../src/lib/server/services/alerts';
import * as dispositions from '../../src/lib/server/services/dispositions';
import * as invalidations from '../../src/lib/server/services/invalidations';
import * as lots from '../../src/lib/server/services/lots';
import * as scans from '../../src/lib/server/services/scans';
import * as scorecards from '../../src/lib/server/services/scorecards';
import { makeUser, unique } from '../support/factories';
import { approvedMaterial, corrupt, jcamp, type LotFixture } from '../support/lot-fixtures';

const today = () => new Date().toISOString().slice(0, 10);
let fx: LotFixture;
let tech: Awaited<ReturnType<typeof makeUser>>;
let chemo: Awaited<ReturnType<typeof makeUser>>;
let qa1: Awaited<ReturnType<typeof makeUser>>;
let qa2: Awaited<ReturnType<typeof makeUser>>;
let techQa: Awaited<ReturnType<typeof makeUser>>;

beforeAll(async () => {
	fx = await approvedMaterial();
	tech = await makeUser(['technician']);
	chemo = await makeUser(['chemometrician']);
	qa1 = await makeUser(['qa']);
	qa2 = await makeUser(['qa']);
	techQa = await makeUser(['technician', 'qa']);
}, 120_000);

const file = (kind: Parameters<typeof jcamp>[0], seed: number, name = `C${seed}.jdx`) => ({ bytes: jcamp(kind, fx.axis, seed, name), fileName: name });
const receive = (containers: number) => lots.create(tech.actor, { material: fx.materialCode, supplier: fx.supplierCode, supplierLot: unique('RI'), containers, receivedAt: today() });
const sig = (u: { password: string }, meaning = 'invalidation approved: assignable laboratory cause', reason = 'investigation record INV-42 reviewed') => ({ password: u.password, meaning, reason });
const q = <T extends object>(sql: string, replacements: Record<string, unknown> = {}) => sequelize().query<T>(sql, { replacements, type: QueryTypes.SELECT });

/** Two containers: 1 genuine, 2 suspect (diluted), then a genuine retest of container 2. */
async function failedThenRetested(seed: number) {
	const lot = await receive(2);
	await scans.add(tech.actor, lot.id, { ...file('genuine', seed + 1), container: 1 });
	const bad = await scans.add(tech.actor, lot.id, { ...file('diluted-starch', seed + 2), container: 2 });
	expect(bad).toMatchObject({ verdict: 'suspect', profile: 'diluted-starch' });
	const retest = await scans.add(tech.actor, lot.id, { ...file('genuine', seed + 3), container: 2 });
	expect(retest.verdict).toBe('genuine');
	return { lot, bad, retest };
}

describe('result policy', () => {
	it('the retest that must not pass: a genuine rescan of a failing container leaves it failing', async () => {
		const { lot, bad, retest } = await failedThenRetested(91000);
		expect(retest.status).toMatchObject({ status: 'screened', identity: 'fails' });
		const view = await lots.get(lot.id);
		expect(view.identity).toBe('fails');
		const c2 = view.containers.find((c) => c.number === 2)!;
		expect(c2).toMatchObject({ result: 'suspect', profile: 'diluted-starch', decided: true, everFailed: true });
		// Every result stands: both scans of container 2 keep their verdicts and both count.
		expect(c2.scans.map((s) => [s.id, s.verdict, s.counts, s.invalidated])).toEqual([
			[bad.scanId, 'suspect', true, null],
			[retest.scanId, 'genuine', true, null]
		]);
		expect(c2.scans.map((s) => s.fileName)).toEqual([`C${91002}.jdx`, `C${91003}.jdx`]);
		expect(view.outcome.summary).toBe('Fails identity, quarantine recommended: C02 suspect (diluted-starch).');
		expect(view.failingHistory).toBe(true);
	});

	it('refuses bad proposals: missing cause or description 400, unknown or other lot’s scan 404, unusable 409, wrong role 403', async () => {
		const { lot, bad } = await failedThenRetested(92000);
		const other = await receive(1);
		const otherScan = await scans.add(tech.actor, other.id, { ...file('genuine', 92100), container: 1 });
		const broken = await scans.add(tech.actor, lot.id, { bytes: corrupt(fx.axis, 92200), fileName: 'C02-broken.jdx', container: 2 });
		expect(broken.verdict).toBe('unusable');
		const good = { cause: 'instrument-fault' as const, description: 'lamp intensity alarm at 10:02, log entry 5521' };
		await expect(invalidations.propose(tech.actor, lot.id, bad.scanId, { description: good.description } as never)).rejects.toMatchObject({ status: 400, field: 'cause', message: expect.stringMatching(/cause/) });
		await expect(invalidations.propose(tech.actor, lot.id, bad.scanId, { cause: 'bad-luck' as never, description: good.description })).rejects.toMatchObject({ status: 400, field: 'cause' });
		await expect(invalidations.propose(tech.actor, lot.id, bad.scanId, { cause: 'other' } as never)).rejects.toMatchObject({ status: 400, field: 'description' });
		await expect(invalidations.propose(tech.actor, lot.id, 99999999, good)).rejects.toMatchObject({ status: 404, message: expect.stringMatching(/Scan 99999999/) });
		await expect(invalidations.propose(tech.actor, lot.id, otherScan.scanId, good)).rejects.toMatchObject({ status: 404 });
		await expect(invalidations.propose(tech.actor, lot.id, broken.scanId, good)).rejects.toMatchObject({ status: 409, message: expect.stringMatching(/no invalidation is needed/) });
		await expect(invalidations.propose(qa1.actor, lot.id, bad.scanId, good)).rejects.toMatchObject({ status: 403 });
		// Nothing was stored by any refusal.
		expect(await q('SELECT id FROM scan_invalidations WHERE lot_id IN (:ids)', { ids: [lot.id, other.id] })).toEqual([]);
	});

	it('invalidation with approval, after which the retest counts; the alert stays and shows it', async () => {
		const { lot, bad } = await failedThenRetested(93000);
		const proposed = await invalidations.propose(chemo.actor, lot.id, bad.scanId, { cause: 'sample-presentation', description: 'probe window not in contact: container liner folded over the window' });
		expect(proposed).toMatchObject({ state: 'proposed', cause: 'sample-presentation', proposedBy: chemo.user.name });
		// A second live proposal for the same scan is refused.
		await expect(invalidations.propose(tech.actor, lot.id, bad.scanId, { cause: 'other', description: 'another go at the same scan' })).rejects.toMatchObject({ status: 409 });
		// Proposed is not approved: the container still fails.
		let view = await lots.get(lot.id);
		expect(view.containers[1].result).toBe('suspect');
		expect(view.containers[1].scans[0]).toMatchObject({ counts: true, invalidated: null, invalidation: { state: 'proposed' } });
		// Only QA decides, never the proposer, and never with a wrong password.
		await expect(invalidations.approve(tech.actor, lot.id, bad.scanId, sig(tech))).rejects.toMatchObject({ status: 403 });
		await expect(invalidations.approve(qa1.actor, lot.id, bad.scanId, sig({ password: 'not-the-password' }))).rejects.toMatchObject({ status: 401 });
		expect((await lots.get(lot.id)).identity).toBe('fails');
		const out = await invalidations.approve(qa1.actor, lot.id, bad.scanId, sig(qa1));
		expect(out.invalidation).toMatchObject({ state: 'approved', decidedBy: qa1.user.name });
		expect(out.status).toMatchObject({ status: 'screened', identity: 'meets' });
		view = await lots.get(lot.id);
		expect(view.identity).toBe('meets');
		const c2 = view.containers[1];
		expect(c2.result).toBe('genuine');
		expect(c2.scans[0]).toMatchObject({ verdict: 'suspect', counts: false, invalidated: { cause: 'sample-presentation', description: expect.stringMatching(/probe window/), proposedBy: chemo.user.name, approvedBy: qa1.user.name } });
		expect(c2.scans[0].invalidated!.at).toMatch(/Z$/);
		// Each step audited in its own transaction.
		const steps = await q<{ action: string }>("SELECT action FROM audit_events WHERE entity = 'lot' AND entity_id = :id AND action LIKE 'lot.scan-invalidation%' ORDER BY id", { id: String(lot.id) });
		expect(steps.map((s) => s.action)).toEqual(['lot.scan-invalidation-proposed', 'lot.scan-invalidation-approved']);
		const signed = await q<{ signer_name: string; record_type: string }>("SELECT signer_name, record_type FROM signatures WHERE record_type = 'scan-invalidation' AND record_id = :id", { id: String(proposed.id) });
		expect(signed).toEqual([{ signer_name: qa1.user.name, record_type: 'scan-invalidation' }]);
		// The supplier alert opened by the suspect scan stays, and shows the invalidation.
		const [alert] = (await alerts.list({ lot: lot.id })).rows;
		expect(alert).toMatchObject({ verdict: 'suspect', state: 'open' });
		expect(alert.invalidations).toEqual([expect.objectContaining({ scanId: bad.scanId, state: 'approved', cause: 'sample-presentation', decidedBy: qa1.user.name })]);
		// A decided invalidation is final.
		await expect(invalidations.refuse(qa2.actor, lot.id, bad.scanId, sig(qa2))).rejects.toMatchObject({ status: 404 });
		await expect(sequelize().query("UPDATE scan_invalidations SET description = 'edited' WHERE id = :id", { replacements: { id: proposed.id } })).rejects.toThrow(/never edited/);
	});

	it('the supplier scorecard counts a retested container with its failing verdict until QA approves the invalidation', async () => {
		const count = async (verdict: string) =>
			(await scorecards.scorecard(fx.supplierCode)).verdicts.filter((v) => v.verdict === verdict).reduce((n, v) => n + v.count, 0);
		const [genuine0, suspect0] = [await count('genuine'), await count('suspect')];
		const { lot, bad } = await failedThenRetested(93500);
		// container 1 genuine; container 2 suspect despite its genuine retest (the latest scan no longer decides)
		expect([await count('genuine'), await count('suspect')]).toEqual([genuine0 + 1, suspect0 + 1]);
		await invalidations.propose(chemo.actor, lot.id, bad.scanId, { cause: 'instrument-fault', description: 'lamp warming up: reference scan drifted' });
		await invalidations.approve(qa1.actor, lot.id, bad.scanId, sig(qa1));
		expect([await count('genuine'), await count('suspect')]).toEqual([genuine0 + 2, suspect0]);
	});

	it('self-approval is refused with 403 even for a user who holds both roles; a refusal leaves the result standing', async () => {
		const { lot, bad } = await failedThenRetested(94000);
		await invalidations.propose(techQa.actor, lot.id, bad.scanId, { cause: 'data-transfer', description: 'file copied from the wrong instrument folder' });
		await expect(invalidations.approve(techQa.actor, lot.id, bad.scanId, sig(techQa))).rejects.toMatchObject({ status: 403, code: 'own-proposal' });
		const refused = await invalidations.refuse(qa2.actor, lot.id, bad.scanId, sig(qa2, 'invalidation refused: the result stands', 'no evidence of a transfer error'));
		expect(refused.invalidation.state).toBe('refused');
		const view = await lots.get(lot.id);
		expect(view.identity).toBe('fails');
		expect(view.containers[1].scans[0]).toMatchObject({ counts: true, invalidated: null, invalidation: { state: 'refused', decidedBy: qa2.user.name } });
		// After a refusal, a new proposal with new evidence is possible.
		await expect(invalidations.propose(tech.actor, lot.id, bad.scanId, { cause: 'other', description: 'new evidence: probe calibration certificate expired' })).resolves.toMatchObject({ state: 'proposed' });
	});

	it('two-signature rule after an invalidation: the release of the now-genuine lot needs a second, different QA signature', async () => {
		const { lot, bad } = await failedThenRetested(95000);
		await invalidations.propose(tech.actor, lot.id, bad.scanId, { cause: 'wrong-container', description: 'container 5 of another delivery was scanned as container 2' });
		await invalidations.approve(qa1.actor, lot.id, bad.scanId, sig(qa1));
		expect((await lots.get(lot.id)).identity).toBe('meets');
		const first = await dispositions.dispose(qa1.actor, lot.id, { decision: 'release', password: qa1.password, meaning: 'released for use', reason: 'retest genuine after approved invalidation' });
		expect(first.disposition.state).toBe('awaiting-second-signature');
		expect(first.message).toMatch(/non-genuine container result \(since invalidated\).*second signature/);
		expect((await lots.get(lot.id)).status).toBe('screened');
		await expect(dispositions.cosign(qa1.actor, first.disposition.id, { password: qa1.password, meaning: 'approved as second QA manager', reason: 'same person' })).rejects.toMatchObject({ status: 403 });
		const second = await dispositions.cosign(qa2.actor, first.disposition.id, { password: qa2.password, meaning: 'approved as second QA manager', reason: 'reviewed the invalidation and the retest' });
		expect(second.disposition.state).toBe('effective');
		expect(second.disposition.signatures.map((s) => s.signerName)).toEqual([qa1.user.name, qa2.user.name]);
		expect((await lots.get(lot.id)).status).toBe('released');

		// The certificate: each container row names its scans by file name + first 12 hex of SHA-256, and lists the invalidation.
		const cert = await dispositions.certificate(lot.id);
		const view = await lots.get(lot.id);
		const row2 = cert.content.containers.find((c) => c.container === 2)!;
		expect(row2.verdict).toBe('genuine');
		expect(row2.scans!.map((x) => [x.fileName, x.sha12])).toEqual(view.containers[1].scans.map((x) => [x.fileName, x.sha256.slice(0, 12)]));
		expect(row2.scans![0]).toMatchObject({ verdict: 'suspect', counts: false, invalidated: { cause: 'wrong-container', causeLabel: 'wrong container scanned', approvedBy: qa1.user.name, proposedBy: tech.user.name } });
		expect(row2.scans![1]).toMatchObject({ verdict: 'genuine', counts: true, invalidated: null });
		expect(row2.scans![0].sha12).toMatch(/^[0-9a-f]{12}$/);
		expect(cert.content.containers.find((c) => c.container === 1)!.scans).toHaveLength(1);
		expect(cert.content.disposition.twoPersonReason).toMatch(/non-genuine result, since invalidated/);
		expect((await dispositions.regenerate(cert.dispositionId)).matchesStored).toBe(true);
		if (existsSync('/usr/bin/pdftotext')) {
			const dir = mkdtempSync(join(tmpdir(), 'lotgate-ri-'));
			writeFileSync(join(dir, 'c.pdf'), cert.pdf);
			const text = execFileSync('/usr/bin/pdftotext', [join(dir, 'c.pdf'), '-'], { encoding: 'utf8' }).replace(/\s+/g, ' ');
			expect(text).toContain('Invalidated scans');
			expect(text).toContain(row2.scans![0].sha12);
			expect(text).toContain(`approved by ${qa1.user.name}`);
		}
		// A lot that never failed still releases with one signature.
		const clean = await receive(1);
		await scans.add(tech.actor, clean.id, { ...file('genuine', 95100), container: 1 });
		const one = await dispositions.dispose(qa1.actor, clean.id, { decision: 'release', password: qa1.password, meaning: 'released for use', reason: 'every container genuine' });
		expect(one.disposition.state).toBe('effective');
	});

	it('an unusable scan raises no supplier alert', async () => {
		const lot = await receive(1);
		const r = await scans.add(tech.actor, lot.id, { bytes: corrupt(fx.axis, 96000), fileName: 'C01-broken.jdx', container: 1 });
		expect(r.verdict).toBe('unusable');
		expect((await alerts.list({ lot: lot.id })).rows).toEqual([]);
		expect((await lots.get(lot.id)).containers[0]).toMatchObject({ result: 'unusable', decided: false });
	});

	it('replicates k = 3 with one failing: the container fails; the others need all three genuine; averaging never happens', async () => {
		const materials = await import('../../src/lib/server/services/materials');
		const { rootActor } = await import('../support/factories');
		const fx3 = await approvedMaterial();
		await expect(materials.setReplicates(rootActor, fx3.materialCode, { replicates: 6, reason: 'too many' })).rejects.toThrow(/At most 5/);
		await expect(materials.setReplicates(tech.actor, fx3.materialCode, { replicates: 3, reason: 'not mine' })).rejects.toMatchObject({ status: 403 });
		expect((await materials.setReplicates(rootActor, fx3.materialCode, { replicates: 3, reason: 'repack and turn: three presentations per container' })).replicates).toBe(3);
		const lot = await lots.create(tech.actor, { material: fx3.materialCode, supplier: fx3.supplierCode, supplierLot: unique('K3'), containers: 2, receivedAt: today() });
		expect(lot.plan.replicates).toBe(3);
		const f = (kind: Parameters<typeof jcamp>[0], seed: number) => ({ bytes: jcamp(kind, fx3.axis, seed, `K${seed}.jdx`), fileName: `K${seed}.jdx` });
		await scans.add(tech.actor, lot.id, { ...f('genuine', 97001), container: 1 });
		await scans.add(tech.actor, lot.id, { ...f('genuine', 97002), container: 1 });
		let view = await lots.get(lot.id);
		expect(view.containers[0]).toMatchObject({ result: 'awaiting-scan', decided: false, replicates: { done: 2, required: 3 } });
		await scans.add(tech.actor, lot.id, { ...f('genuine', 97003), container: 1 });
		await scans.add(tech.actor, lot.id, { ...f('genuine', 97011), container: 2 });
		const failing = await scans.add(tech.actor, lot.id, { ...f('diluted-starch', 97012), container: 2 });
		expect(failing.verdict).toBe('suspect');
		const third = await scans.add(tech.actor, lot.id, { ...f('genuine', 97013), container: 2 });
		expect(third.status).toMatchObject({ status: 'screened', identity: 'fails' });
		view = await lots.get(lot.id);
		expect(view.containers[0]).toMatchObject({ result: 'genuine', decided: true, replicates: { done: 3, required: 3 } });
		expect(view.containers[1]).toMatchObject({ result: 'suspect', decided: true, replicates: { done: 3, required: 3 } });
		expect(view.identity).toBe('fails');
		// Another material's lot keeps its own k = 1 (k is recorded in each lot's plan at receipt).
		expect((await lots.get((await receive(1)).id)).replicates).toBe(1);
	});
});

describe('spectral quality gates before any model', () => {
	it('each gate on a crafted spectrum gives unusable with the gate and its value, no model verdict and no supplier alert', async () => {
		const { writeJcampAffn } = await import('../../src/lib/demo/jcamp-writer');
		const { synth } = await import('../support/lot-fixtures');
		const library = await import('../../src/lib/server/services/library');
		const instruments = await import('../../src/lib/server/services/instruments');
		const gates = await import('../../src/lib/server/services/quality-gates');
		const { rootActor } = await import('../support/factories');
		const fxg = await approvedMaterial();
		// The material's library: the no-sample gate compares a scan's range with it.
		await library.addFiles(rootActor, fxg.materialCode, [0, 1, 2, 3, 4].map((i) => ({ name: `lib-${i}.jdx`, bytes: jcamp('genuine', fxg.axis, 98000 + i, `lib-${i}`) })), { class: 'genuine', role: 'training' });
		const write = (name: string, values: ArrayLike<number>, yUnits = 'ABSORBANCE') => ({
			fileName: name,
			bytes: new TextEncoder().encode(
				writeJcampAffn({ title: name, axis: fxg.axis, values: Array.from(values, (v) => Math.round(v * 1e6) / 1e6), xUnits: 'NANOMETERS', yUnits, yFactor: 1e-6, dataType: 'NEAR INFRARED SPECTRUM', origin: 'Lotgate tests', owner: 'Lotgate tests (synthetic)' })
			)
		});
		const good = synth('genuine', fxg.axis, 98100);
		const top = Math.max(...good);
		const clipped = Float64Array.from(good, (v) => Math.min(v, top - 0.05));
		let seed = 11;
		const noise = () => ((seed = (seed * 16807) % 2147483647) / 2147483647 - 0.5) * 1e-3;
		const cases = [
			{ file: write('G1-flat.jdx', new Float64Array(fxg.axis.length).fill(0.5)), gate: /quality gate flat: .*max − min = 0/ },
			{ file: write('G2-saturated.jdx', clipped), gate: /quality gate saturation: \d+ consecutive points sit at the maximum value/ },
			{ file: write('G3-empty.jdx', Float64Array.from(fxg.axis, () => 0.01 + noise())), gate: /quality gate no-sample: the signal's range .* % of the library's typical range/ },
			{ file: write('G4-reflectance.jdx', Float64Array.from(good, (a) => 10 ** -a), 'REFLECTANCE'), gate: /quality gate wrong-ordinate: the file's ordinate is "REFLECTANCE"/ },
			{ file: write('G5-percent.jdx', Float64Array.from(good, (a) => 100 * 10 ** -a), 'ARBITRARY UNITS'), gate: /quality gate wrong-ordinate: values run from .* percent reflectance/ }
		];
		const lot = await lots.create(tech.actor, { material: fxg.materialCode, supplier: fxg.supplierCode, supplierLot: unique('QG'), containers: cases.length + 1, receivedAt: today() });
		for (const [i, c] of cases.entries()) {
			const r = await scans.add(tech.actor, lot.id, { ...c.file, container: i + 1 });
			expect(r.verdict, c.file.fileName).toBe('unusable');
			expect(r.reason, c.file.fileName).toMatch(c.gate);
			expect(r.modelVersion).toBeNull();
		}
		// The instrument's declared ordinate ceiling: the good spectrum is above a ceiling set below its maximum.
		const inst = await instruments.create(rootActor, { name: unique('NIRQ'), technique: 'NIR', serial: 'q', axisUnit: 'nm', qualificationDue: '2999-01-01' });
		await expect(gates.setOrdinateCeiling(tech.actor, inst.id, 1, 'not an admin')).rejects.toMatchObject({ status: 403 });
		await gates.setOrdinateCeiling(rootActor, inst.id, top / 2, 'detector linear range from the qualification report');
		const capped = await scans.add(tech.actor, lot.id, { ...write('G6-ceiling.jdx', good), container: cases.length + 1, instrumentId: inst.id });
		expect(capped).toMatchObject({ verdict: 'unusable', reason: expect.stringMatching(/quality gate saturation: the maximum .* is above the instrument's ordinate ceiling/) });
		// Never a material verdict, never an alert; the lot waits for rescans.
		expect((await alerts.list({ lot: lot.id })).rows).toEqual([]);
		let view = await lots.get(lot.id);
		expect(view.containers.every((c) => c.result === 'unusable' && !c.decided)).toBe(true);
		expect(view.status).toBe('awaiting-scans');
		// The same good spectrum without that instrument passes every gate and is screened by the model.
		const ok = await scans.add(tech.actor, lot.id, { ...write('G6-rescan.jdx', good), container: cases.length + 1 });
		expect(ok.verdict).toBe('genuine');
		view = await lots.get(lot.id);
		expect(view.containers[cases.length].result).toBe('genuine');
		// Thresholds per material (chemometrician or admin, with a reason, audited).
		await expect(gates.setMaterialThresholds(tech.actor, fxg.materialId, { noSampleRatio: 0.1 }, 'stricter')).rejects.toMatchObject({ status: 403 });
		await expect(gates.setMaterialThresholds(rootActor, fxg.materialId, { noSampleRatio: 1.5 }, 'nonsense')).rejects.toThrow();
		await gates.setMaterialThresholds(rootActor, fxg.materialId, { saturationRun: 1000 }, 'instrument exports a flat-topped band by design');
		const again = await scans.add(tech.actor, lot.id, { ...write('G2-saturated-again.jdx', Float64Array.from(clipped, (v) => v + 1e-6)), container: 2 });
		expect(again.reason ?? '').not.toMatch(/consecutive points/);
	});
});
