// QA disposition end to end against the real PostgreSQL: e-signatures with the two-person rule, superseding,
// the certificate (stored, byte-identical on regeneration, its text), the mail through the SMTP fake, supplier alerts,
// the status co-signature, the scorecard, and the audit chain afterwards.
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { QueryTypes } from 'sequelize';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { makeUser, unique } from '../support/factories';
import { forLot } from '../support/relabel';

type Svc = {
	db: typeof import('../../src/lib/server/db/index');
	lots: typeof import('../../src/lib/server/services/lots');
	scans: typeof import('../../src/lib/server/services/scans');
	dispositions: typeof import('../../src/lib/server/services/dispositions');
	alerts: typeof import('../../src/lib/server/services/alerts');
	audit: typeof import('../../src/lib/server/services/audit');
	mail: typeof import('../../src/lib/server/mail');
	scorecards: typeof import('../../src/lib/server/services/scorecards');
	supplierStatus: typeof import('../../src/lib/server/services/supplier-status');
	pdf: typeof import('../../src/lib/server/reports/certificate-pdf');
};
let s: Svc;
let fake: { url: string; close(): Promise<void> };
let qa1: Awaited<ReturnType<typeof makeUser>>;
let qa2: Awaited<ReturnType<typeof makeUser>>;
let buyer: Awaited<ReturnType<typeof makeUser>>;
let tech: Awaited<ReturnType<typeof makeUser>>;
let demoLots: import('../../src/lib/demo/scenario').DemoLot[];

const q = <T extends object>(sql: string, replacements: Record<string, unknown> = {}) => s.db.sequelize().query<T>(sql, { replacements, type: QueryTypes.SELECT });

beforeAll(async () => {
	s = {
		db: await import('../../src/lib/server/db/index'),
		lots: await import('../../src/lib/server/services/lots'),
		scans: await import('../../src/lib/server/services/scans'),
		dispositions: await import('../../src/lib/server/services/dispositions'),
		alerts: await import('../../src/lib/server/services/alerts'),
		audit: await import('../../src/lib/server/services/audit'),
		mail: await import('../../src/lib/server/mail'),
		scorecards: await import('../../src/lib/server/services/scorecards'),
		supplierStatus: await import('../../src/lib/server/services/supplier-status'),
		pdf: await import('../../src/lib/server/reports/certificate-pdf')
	};
	// The demo seed gives approved model versions built from the demo library (idempotent across test files).
	await (await import('../../src/lib/server/demo/seed')).seedDemo(() => {});
	demoLots = (await import('../../src/lib/demo')).demoScenario().lots;
	qa1 = await makeUser(['qa']);
	qa2 = await makeUser(['qa']);
	buyer = await makeUser(['procurement']);
	tech = await makeUser(['technician']);
	const { startSmtpFake } = await import('../../src/lib/server/mail-fake');
	fake = await startSmtpFake({ databaseUrl: process.env.DATABASE_URL! });
	process.env.SMTP_URL = fake.url;
}, 180_000);

afterAll(async () => {
	await fake?.close();
});

/** Receives a demo delivery as a new lot (unique supplier lot) and uploads every container through the scan service. */
async function receive(lotKey: string, options: { upload?: number } = {}) {
	const spec = demoLots.find((l) => l.lotKey === lotKey)!;
	const supplierLot = unique(spec.supplierLot);
	const lot = await s.lots.create(tech.actor, { material: spec.material, supplier: spec.supplier, supplierLot, containers: spec.files.length, receivedAt: '2025-03-04' });
	// Each file written for this lot: identical bytes are refused site-wide, and the header names this lot.
	for (const f of spec.files.slice(0, options.upload ?? spec.files.length)) await s.scans.add(tech.actor, lot.id, { bytes: forLot(f.bytes, { supplierLot, container: f.container }), fileName: f.name, container: f.container });
	return s.lots.get(lot.id);
}

const sign = (meaning: string, reason: string, password: string) => ({ meaning, reason, password });

describe('disposition with electronic signature', () => {
	it('refuses a wrong password, audits it, counts it toward the lockout, and stores nothing', async () => {
		const lot = await receive('lac-good');
		expect(lot.identity).toBe('meets');
		const before = await q<{ n: string }>("SELECT count(*) AS n FROM login_failures WHERE email = :email AND context = 'signature'", { email: qa1.email });
		await expect(s.dispositions.dispose(qa1.actor, lot.id, { decision: 'release', ...sign('released for use', 'all containers genuine', 'not-my-password') })).rejects.toMatchObject({
			status: 401,
			code: 'wrong-password',
			field: 'password'
		});
		const after = await q<{ n: string }>("SELECT count(*) AS n FROM login_failures WHERE email = :email AND context = 'signature'", { email: qa1.email });
		expect(Number(after[0]!.n)).toBe(Number(before[0]!.n) + 1);
		const audited = await q<{ action: string }>("SELECT action FROM audit_events WHERE entity = 'user' AND entity_id = :id AND action = 'user.signature-failed'", { id: String(qa1.user.id) });
		expect(audited.length).toBeGreaterThan(0);
		expect(await s.dispositions.forLot(lot.id)).toEqual([]);
		expect((await s.lots.get(lot.id)).status).toBe('screened');
		// A non-QA user cannot sign at all.
		await expect(s.dispositions.dispose(tech.actor, lot.id, { decision: 'release', ...sign('released for use', 'x y z', tech.password) })).rejects.toMatchObject({ status: 403 });
	});

	it('releases a lot that meets identity with one signature, stores the certificate and queues the mail', async () => {
		const lot = await receive('lac-good');
		const out = await s.dispositions.dispose(qa1.actor, lot.id, { decision: 'release', ...sign('released for use', 'every container genuine', qa1.password) });
		expect(out.disposition.state).toBe('effective');
		expect(out.manifestation).toMatchObject({ signerName: qa1.user.name, meaning: 'released for use', recordType: 'disposition' });
		expect(out.manifestation.recordHash).toMatch(/^[0-9a-f]{64}$/);
		expect(out.manifestation.signedAt).toMatch(/Z$/);
		expect((await s.lots.get(lot.id)).status).toBe('released');
		const cert = await s.dispositions.certificate(lot.id);
		expect(cert.pdf.subarray(0, 5).toString()).toBe('%PDF-');
		expect(cert.sha256).toBe(createHash('sha256').update(cert.pdf).digest('hex'));
		const outbox = await s.mail.forLot(lot.id);
		expect(outbox.find((m) => m.kind === 'certificate')).toMatchObject({ state: 'queued', recipients: ['qa-release@quarrymoor.demo.test'] });
		// A released lot takes no more scans.
		const f = demoLots.find((l) => l.lotKey === 'lac-good')!.files[0];
		await expect(s.scans.add(tech.actor, lot.id, { bytes: f.bytes, fileName: 'again.jdx', container: 1 })).rejects.toMatchObject({ status: 409 });
	});

	it('refuses release and reject before screening is complete, but allows quarantine', async () => {
		const lot = await receive('lac-good', { upload: 3 });
		expect(lot.status).toBe('awaiting-scans');
		await expect(s.dispositions.dispose(qa1.actor, lot.id, { decision: 'release', ...sign('released for use', 'too early', qa1.password) })).rejects.toMatchObject({ status: 409, code: 'screening-incomplete' });
		await expect(s.dispositions.dispose(qa1.actor, lot.id, { decision: 'reject', ...sign('rejected', 'too early', qa1.password) })).rejects.toMatchObject({ status: 409 });
		const out = await s.dispositions.dispose(qa1.actor, lot.id, { decision: 'quarantine', ...sign('quarantined pending investigation', 'supplier flagged by the dock', qa1.password) });
		expect(out.disposition.state).toBe('effective');
		expect((await s.lots.get(lot.id)).status).toBe('quarantined');
		const cert = await s.dispositions.certificate(lot.id);
		expect(cert.content.containers.filter((c) => c.verdict === 'awaiting-scan').length).toBe(5);
	});

	it('holds a failed lot’s release for a second signature from a different QA manager', async () => {
		const lot = await receive('lac-diluted');
		expect(lot.identity).toBe('fails');
		const first = await s.dispositions.dispose(qa1.actor, lot.id, { decision: 'release', ...sign('released for use', 'diluted container re-tested by HPLC: within specification', qa1.password) });
		expect(first.disposition.state).toBe('awaiting-second-signature');
		expect(first.message).toMatch(/needs a second signature from a different QA manager/);
		// One signature is not a release: the lot stays screened, with no certificate.
		expect((await s.lots.get(lot.id)).status).toBe('screened');
		await expect(s.dispositions.certificate(lot.id)).rejects.toMatchObject({ status: 404 });
		// The same person cannot give the second signature.
		await expect(s.dispositions.cosign(qa1.actor, first.disposition.id, sign('approved as second QA manager', 'I agree', qa1.password))).rejects.toMatchObject({ status: 403, code: 'same-signer' });
		await expect(s.dispositions.cosign(qa2.actor, first.disposition.id, sign('approved as second QA manager', 'I agree', 'wrong-password!'))).rejects.toMatchObject({ status: 401, code: 'wrong-password' });
		const second = await s.dispositions.cosign(qa2.actor, first.disposition.id, sign('second signature: released for use despite the failed identity', 'reviewed the HPLC re-test record', qa2.password));
		expect(second.disposition.state).toBe('effective');
		expect(second.disposition.signatures.map((x) => x.signerName)).toEqual([qa1.user.name, qa2.user.name]);
		expect(second.disposition.signatures[1].recordHash).toBe(second.disposition.signatures[0].recordHash);
		expect((await s.lots.get(lot.id)).status).toBe('released');
		await expect(s.dispositions.cosign(qa2.actor, first.disposition.id, sign('approved as second QA manager', 'again', qa2.password))).rejects.toMatchObject({ status: 409 });

		// ---------- the certificate ----------
		const cert = await s.dispositions.certificate(lot.id);
		const again = await s.dispositions.regenerate(cert.dispositionId);
		expect(again.matchesStored).toBe(true);
		expect(Buffer.compare(again.pdf, cert.pdf)).toBe(0);
		expect(Buffer.compare(await s.pdf.renderCertificate(cert.content), cert.pdf)).toBe(0);

		const dir = mkdtempSync(join(tmpdir(), 'lotgate-cert-'));
		writeFileSync(join(dir, 'c.pdf'), cert.pdf);
		const text = execFileSync('/usr/bin/pdftotext', ['-layout', join(dir, 'c.pdf'), '-'], { encoding: 'utf8' });
		expect(text).toContain(qa1.user.name);
		expect(text).toContain(qa2.user.name);
		expect(text).toContain('released for use');
		expect(text).toContain('second signature: released for use despite the failed identity');
		expect(text).toContain(cert.content.model!.label);
		expect(text).toContain(cert.content.model!.artefactSha256);
		expect(text).toContain(lot.internalLot);
		expect(text).toContain(lot.supplierLot);
		expect(text).toMatch(/page 1 of \d/);
		expect(text).toContain(s.pdf.certificateDocumentHash(cert.content));
		expect(text.replace(/\s+/g, ' ')).toContain('A screening result supports, but does not replace');
		const fonts = execFileSync('/usr/bin/pdffonts', [join(dir, 'c.pdf')], { encoding: 'utf8' });
		expect(fonts).toMatch(/SourceSans3/);
		// Every sampled container's verdict is printed on its row.
		for (const c of (await s.lots.get(lot.id)).scans.filter((x) => x.counts)) {
			const verdict = s.pdf.verdictText(c);
			expect(text).toMatch(new RegExp(`\\n\\s*C${String(c.container).padStart(2, '0')}\\s+${verdict.replace(/[()]/g, '\\$&')}`));
		}
		expect(text).toContain('suspect: diluted-starch');

		// ---------- the mail, through the SMTP fake ----------
		const mail = (await s.mail.forLot(lot.id)).find((m) => m.kind === 'certificate')!;
		expect(mail.state).toBe('queued');
		expect(await s.mail.deliver(mail.id)).toMatchObject({ state: 'sent', attempts: 1 });
		expect(await s.mail.deliver(mail.id)).toMatchObject({ state: 'sent', attempts: 1 });
		const [received] = (await q<{ subject: string; envelope_to: string[]; attachments: { filename: string; contentType: string; sha256: string }[]; raw: Buffer }>(
			"SELECT subject, envelope_to, attachments, raw FROM mail_messages WHERE subject LIKE 'Lot ' || :lot || ' %' ORDER BY id DESC LIMIT 1",
			{ lot: lot.internalLot }
		)) as [{ subject: string; envelope_to: string[]; attachments: { filename: string; contentType: string; sha256: string }[]; raw: Buffer }];
		expect(received.subject).toContain(lot.internalLot);
		expect(received.envelope_to).toEqual(['qa-release@quarrymoor.demo.test']);
		expect(received.attachments).toHaveLength(1);
		expect(received.attachments[0]).toMatchObject({ contentType: 'application/pdf', sha256: cert.sha256 });
		expect(received.attachments[0]!.filename).toMatch(/\.pdf$/);
		expect(received.raw.toString('latin1')).toContain(`X-Lotgate-Outbox: ${mail.id}`);
	});

	it('keeps a superseded disposition visible and never lets one be edited', async () => {
		const lot = await receive('lac-good');
		const first = await s.dispositions.dispose(qa1.actor, lot.id, { decision: 'quarantine', ...sign('quarantined pending investigation', 'label damaged on container 3', qa1.password) });
		const second = await s.dispositions.dispose(qa2.actor, lot.id, { decision: 'release', ...sign('released for use', 'label replaced; identity met on every container', qa2.password) });
		const history = await s.dispositions.forLot(lot.id);
		expect(history.map((d) => [d.id, d.state])).toEqual([
			[second.disposition.id, 'effective'],
			[first.disposition.id, 'superseded']
		]);
		expect(history[1].supersededBy).toBe(second.disposition.id);
		expect(history[0].supersedesId).toBe(first.disposition.id);
		expect((await s.lots.get(lot.id)).status).toBe('released');
		// The superseded certificate stays on record too.
		expect((await s.dispositions.certificate(lot.id, first.disposition.id)).content.disposition.decision).toBe('quarantine');
		await expect(s.db.sequelize().query("UPDATE dispositions SET decision = 'reject' WHERE id = :id", { replacements: { id: first.disposition.id } })).rejects.toThrow(/never edited/);
		await expect(s.db.sequelize().query('DELETE FROM dispositions WHERE id = :id', { replacements: { id: first.disposition.id } })).rejects.toThrow(/never deleted/);
	});
});

describe('mail failures', () => {
	it('records a failed attempt and leaves the disposition in place', async () => {
		const lot = await receive('mcc-good');
		await s.dispositions.dispose(qa1.actor, lot.id, { decision: 'release', ...sign('released for use', 'every container genuine', qa1.password) });
		const mail = (await s.mail.forLot(lot.id))[0];
		const saved = process.env.SMTP_URL;
		process.env.SMTP_URL = 'smtp://127.0.0.1:9'; // nothing listens on the discard port
		try {
			await expect(s.mail.deliver(mail.id)).rejects.toThrow(/attempt 1 failed/);
		} finally {
			process.env.SMTP_URL = saved;
		}
		const failed = await s.mail.get(mail.id);
		expect(failed).toMatchObject({ state: 'queued', attempts: 1 });
		expect(failed!.lastError).toBeTruthy();
		expect((await s.lots.get(lot.id)).status).toBe('released');
		expect(await s.mail.deliver(mail.id)).toMatchObject({ state: 'sent', attempts: 2 });
	});
});

describe('supplier alerts', () => {
	it('opens an alert on a non-genuine verdict; procurement acknowledges, then closes it, each step audited', async () => {
		const lot = await receive('lac-diluted');
		const { rows } = await s.alerts.list({ lot: lot.id });
		expect(rows).toHaveLength(1);
		const alert = rows[0];
		expect(alert).toMatchObject({ state: 'open', severity: 'high', verdict: 'suspect', profile: 'diluted-starch', supplier: { code: lot.supplier.code } });
		const alertMail = await q<{ state: string; recipients: string[] }>('SELECT state, recipients FROM mail_outbox WHERE alert_id = :id', { id: alert.id });
		expect(alertMail[0]!.recipients).toContain(buyer.email);

		await expect(s.alerts.acknowledge(tech.actor, alert.id, 'seen')).rejects.toMatchObject({ status: 403 });
		await expect(s.alerts.close(buyer.actor, alert.id, 'done')).rejects.toMatchObject({ status: 409 });
		await expect(s.alerts.acknowledge(buyer.actor, alert.id, ' ')).rejects.toThrow();
		const acked = await s.alerts.acknowledge(buyer.actor, alert.id, 'Asked the supplier for their CoA and retain samples');
		expect(acked.acknowledged).toMatchObject({ by: buyer.user.name, note: 'Asked the supplier for their CoA and retain samples' });
		const closed = await s.alerts.close(buyer.actor, alert.id, 'Supplier confirmed a filling error; corrective action CAPA-17');
		expect(closed.state).toBe('closed');
		const steps = await q<{ action: string }>("SELECT action FROM audit_events WHERE entity = 'alert' AND entity_id = :id ORDER BY id", { id: String(alert.id) });
		expect(steps.map((x) => x.action)).toEqual(['alert.opened', 'alert.acknowledged', 'alert.closed']);
	});

	it('orders severity: not-this-material above unknown; an unusable scan (a lab problem) and a genuine lot open none', async () => {
		const wrong = await receive('lac-wrong');
		expect((await s.alerts.list({ lot: wrong.id })).rows[0]).toMatchObject({ severity: 'high', verdict: 'not-this-material' });
		const corrupt = await receive('lac-corrupt');
		expect((await s.alerts.list({ lot: corrupt.id })).rows).toHaveLength(0);
		const good = await receive('cit-good');
		expect((await s.alerts.list({ lot: good.id })).rows).toHaveLength(0);
		expect(s.alerts.SEVERITY_OF.unknown.rank).toBeLessThan(s.alerts.SEVERITY_OF['not-this-material'].rank);
		expect(s.alerts.SEVERITY_OF.unusable.rank).toBeLessThan(s.alerts.SEVERITY_OF.unknown.rank);
	});
});

describe('supplier status and scorecard', () => {
	it('changes a supplier status only with a QA co-signature', async () => {
		const suppliers = await import('../../src/lib/server/services/suppliers');
		const created = await suppliers.create(buyer.actor, { code: unique('SUP').toUpperCase(), name: 'Status Test Supplier', status: 'qualified' });
		const req = await s.supplierStatus.request(buyer.actor, created.code, { status: 'on-watch', reason: 'two suspect lots this quarter' });
		expect(req.state).toBe('pending');
		expect((await suppliers.get(created.id)).status).toBe('qualified');
		await expect(s.supplierStatus.request(buyer.actor, created.code, { status: 'blocked', reason: 'another one' })).rejects.toMatchObject({ status: 409 });
		await expect(s.supplierStatus.approve(buyer.actor, req.id, sign('approved', 'ok ok', buyer.password))).rejects.toMatchObject({ status: 403 });
		await expect(s.supplierStatus.approve(qa1.actor, req.id, sign('approved', 'ok ok', 'wrong-password'))).rejects.toMatchObject({ status: 401 });
		const approved = await s.supplierStatus.approve(qa1.actor, req.id, sign('supplier status change approved', 'agree with the watch', qa1.password));
		expect(approved.state).toBe('approved');
		expect(approved.signature).toMatchObject({ signerName: qa1.user.name });
		expect((await suppliers.get(created.id)).status).toBe('on-watch');
		const audited = await q<{ action: string }>("SELECT action FROM audit_events WHERE entity = 'supplier' AND entity_id = :id ORDER BY id", { id: String(created.id) });
		expect(audited.map((a) => a.action)).toEqual(['supplier.created', 'supplier.status-change-requested', 'supplier.status-changed']);
	});

	it('scores a supplier: lots, pass rate, verdicts by profile, monthly trend, open alerts', async () => {
		const card = await s.scorecards.scorecard('PALMERA');
		// Recounted through the lot list (another query path): every PALMERA lot, and those whose identity fails or meets.
		const listed = await s.lots.list({ supplier: 'PALMERA', pageSize: 200 });
		expect(listed.total).toBeLessThanOrEqual(200);
		expect(card.lots.received).toBe(listed.total);
		expect(card.lots.fails).toBe(listed.rows.filter((l) => l.identity === 'fails').length);
		expect(card.lots.meets).toBe(listed.rows.filter((l) => l.identity === 'meets').length);
		expect(card.lots.fails).toBeGreaterThan(0); // the demo seeds a failing PALMERA lot
		expect(card.passRate).not.toBeNull();
		expect(card.verdicts.some((v) => v.verdict === 'suspect' && v.profile === 'diluted-starch')).toBe(true);
		expect(card.alerts.open.every((a) => a.state !== 'closed')).toBe(true);
	});

	it('counts the tiles, the verdicts and the trend over one period, ending with the current month (issue 17)', async () => {
		const all = await s.scorecards.scorecard('PALMERA');
		const now = new Date().toISOString().slice(0, 7);
		expect(all.period).toMatchObject({ choice: 'all', to: now });
		expect(all.trend).toHaveLength(all.period.months);
		expect(all.trend[all.trend.length - 1].month).toBe(now);
		// the tiles count exactly the lots the trend shows
		const sum = (k: 'received' | 'meets' | 'fails') => all.trend.reduce((n, t) => n + t[k], 0);
		expect(sum('received')).toBe(all.lots.received);
		expect(sum('meets')).toBe(all.lots.meets);
		expect(sum('fails')).toBe(all.lots.fails);
		const one = await s.scorecards.scorecard('PALMERA', { months: 1 });
		expect(one.trend.map((t) => t.month)).toEqual([now]);
		expect(one.lots.received).toBe(one.trend[0].received);
		await expect(s.scorecards.scorecard('PALMERA', { months: 0 })).rejects.toMatchObject({ status: 400, field: 'months' });
	});
});

describe('audit trail', () => {
	it('verifies after the whole flow', async () => {
		const report = await s.audit.verifyChain();
		expect(report).toMatchObject({ ok: true });
		expect(report.checked).toBeGreaterThan(10);
	});
});
