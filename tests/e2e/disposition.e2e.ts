// Browser: QA disposition with e-signature (wrong password refused; a failed lot's release needs two different QA
// managers), the certificate download and its text, the mail in the SMTP fake and the demo inbox, and the alert flow.
import { execFileSync } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import pg from 'pg';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { demoScenario } from '../../src/lib/demo';
import { baseUrl, launchBrowser, newContext, sessionCookie, signIn } from '../support/browser';
import { forLot } from '../support/relabel';

let browser: Browser;
let techCookie: string;
let db: pg.Client;
const scenario = demoScenario();

beforeAll(async () => {
	browser = await launchBrowser();
	techCookie = await sessionCookie(browser, 'technician@demo.test');
	db = new pg.Client({ connectionString: inject('databaseUrl') });
	await db.connect();
});
afterAll(async () => {
	await db?.end();
	await browser?.close();
});

/** Receives a demo delivery as a new lot through the API, and uploads its containers as the technician. */
async function receive(lotKey: string) {
	const spec = scenario.lots.find((l) => l.lotKey === lotKey)!;
	const supplierLot = `${spec.supplierLot}-${randomBytes(3).toString('hex')}`;
	const res = await fetch(`${baseUrl()}/api/v1/lots`, {
		method: 'POST',
		headers: { cookie: techCookie, 'content-type': 'application/json' },
		body: JSON.stringify({ material: spec.material, supplier: spec.supplier, supplierLot, containers: spec.files.length, receivedAt: '2025-03-04' })
	});
	expect(res.status, await res.clone().text()).toBe(201);
	const lot = (await res.json()) as { id: number; internalLot: string };
	for (const f of spec.files) {
		const form = new FormData();
		// Written for this lot: identical bytes are refused site-wide, and the header names this lot.
		form.set('file', new Blob([Buffer.from(forLot(f.bytes, { supplierLot, container: f.container }))]), f.name);
		form.set('container', String(f.container));
		const up = await fetch(`${baseUrl()}/api/v1/lots/${lot.id}/scans`, { method: 'POST', headers: { cookie: techCookie }, body: form });
		expect(up.status, await up.clone().text()).toBe(201);
	}
	return lot;
}

async function as(email: string): Promise<Page> {
	const context = await newContext(browser);
	const page = await context.newPage();
	await signIn(page, email);
	return page;
}

const nameOf = async (email: string) => (await db.query<{ name: string }>('SELECT name FROM users WHERE email = $1', [email])).rows[0]!.name;

async function signDisposition(page: Page, decision: 'release' | 'quarantine' | 'reject', reason: string, password: string) {
	const form = page.getByTestId('dispose-form');
	await form.getByRole('radio', { name: decision }).check();
	// No meaning is pre-selected: the signer picks one (the first offered for the decision).
	await form.getByLabel('Meaning of your signature').selectOption({ index: 1 });
	await form.getByLabel('Reason').fill(reason);
	await form.getByLabel('Your password (re-enter to sign)').fill(password);
	await form.getByRole('button', { name: `Sign ${decision}` }).click();
}

describe('QA disposition in the browser', () => {
	it('refuses a disposition signed with the wrong password', async () => {
		const lot = await receive('lac-good');
		const page = await as('qa@demo.test');
		await page.goto(`/lots/${lot.id}`);
		await signDisposition(page, 'release', 'Every container genuine', 'not-the-password');
		await expect(page.getByTestId('dispose-password-error').textContent()).resolves.toContain('password is not correct');
		await expect(page.getByTestId('disposition-effective').count()).resolves.toBe(0);
		const { rows } = await db.query("SELECT status FROM lots WHERE id = $1", [lot.id]);
		expect(rows[0].status).toBe('screened');
		await page.context().close();
	});

	it('holds a failed lot’s release at one signature and releases it with a second from another QA manager', async () => {
		const lot = await receive('lac-diluted');
		const qa = await as('qa@demo.test');
		await qa.goto(`/lots/${lot.id}`);
		await expect(qa.getByTestId('two-person-note').count()).resolves.toBe(0);
		await signDisposition(qa, 'release', 'Container 4 re-tested by HPLC: within specification', 'demo-lotgate');
		await expect(qa.getByTestId('dispose-message').textContent()).resolves.toMatch(/needs a second signature from a different QA manager/);
		await qa.getByTestId('disposition-pending').waitFor();
		await expect(qa.getByTestId('waiting-second-signature').textContent()).resolves.toContain('Waiting for a second signature by another QA user');
		expect((await db.query('SELECT status FROM lots WHERE id = $1', [lot.id])).rows[0].status).toBe('screened');
		await qa.context().close();

		const qa2 = await as('qa2@demo.test');
		await qa2.goto(`/lots/${lot.id}`);
		const cosign = qa2.getByTestId('cosign-form');
		await cosign.getByLabel('Meaning of your signature').selectOption('second signature: released for use despite the failed identity');
		await cosign.getByLabel('Your reason').fill('Reviewed the HPLC re-test record');
		await cosign.getByLabel('Your password (re-enter to sign)').fill('demo-lotgate');
		await cosign.getByRole('button', { name: 'Sign as second QA manager' }).click();
		const effective = qa2.getByTestId('disposition-effective');
		await effective.waitFor();
		await expect(effective.getAttribute('data-decision')).resolves.toBe('release');
		const names = await effective.getByTestId('signer-name').allTextContents();
		expect(names).toEqual([await nameOf('qa@demo.test'), await nameOf('qa2@demo.test')]);

		// The certificate, downloaded from the lot page.
		const download = qa2.waitForEvent('download');
		await qa2.getByTestId('certificate-link').click();
		const file = await (await download).path();
		const text = execFileSync('/usr/bin/pdftotext', ['-layout', file, '-'], { encoding: 'utf8' });
		expect(text).toContain(await nameOf('qa@demo.test'));
		expect(text).toContain(await nameOf('qa2@demo.test'));
		expect(text).toContain('released for use');
		expect(text).toMatch(/LAC-200 v\d+/);
		expect(text).toContain('suspect: diluted-starch');
		expect(text.match(/^\s*C\d{2,}\s+(genuine|suspect)/gm)?.length).toBe(6);
		await qa2.context().close();

		// The mail with the certificate reached the SMTP fake (sent by the pg-boss job).
		let received: { subject: string; attachments: { filename: string; contentType: string }[] } | undefined;
		for (let i = 0; i < 60 && !received; i++) {
			received = (await db.query("SELECT subject, attachments FROM mail_messages WHERE subject LIKE 'Lot ' || $1 || ' %'", [lot.internalLot])).rows[0];
			if (!received) await new Promise((r) => setTimeout(r, 250));
		}
		expect(received, 'the certificate mail never reached the SMTP fake').toBeTruthy();
		expect(received!.attachments).toEqual([expect.objectContaining({ contentType: 'application/pdf', filename: expect.stringMatching(/\.pdf$/) })]);

		// The lot page shows it sent; the admin's demo inbox lists it with the PDF.
		const admin = await as('admin@demo.test');
		await admin.goto(`/lots/${lot.id}`);
		await expect(admin.getByTestId('mail-state').locator('[data-state="sent"]').count()).resolves.toBe(1);
		await admin.goto(`/admin/inbox?q=${encodeURIComponent(lot.internalLot)}`);
		const message = admin.getByTestId('inbox-message').filter({ hasText: `Lot ${lot.internalLot}` });
		const attachment = message.getByTestId('inbox-attachment');
		await expect(attachment.textContent()).resolves.toMatch(/\.pdf$/);
		const pdf = await (await admin.request.get(`${baseUrl()}${await attachment.getAttribute('href')}`)).body();
		expect(pdf.subarray(0, 5).toString()).toBe('%PDF-');
		await admin.context().close();
	});

	it('takes an alert from open through acknowledged to closed', async () => {
		const lot = await receive('lac-wrong');
		const buyer = await as('buyer@demo.test');
		await buyer.goto('/alerts');
		const row = buyer.getByTestId('alerts-table').locator(`tr[data-lot="${lot.internalLot}"]`);
		await expect(row.locator('[data-severity]').getAttribute('data-severity')).resolves.toBe('high');
		await row.getByRole('link', { name: lot.internalLot }).click();
		await buyer.getByTestId('acknowledge-form').waitFor();
		await buyer.getByTestId('acknowledge-form').getByRole('textbox').fill('Asked GRISEDALE for their dispatch records');
		await buyer.getByRole('button', { name: 'Acknowledge alert' }).click();
		await buyer.getByTestId('acknowledged-step').waitFor();
		await buyer.getByTestId('close-form').getByRole('textbox').fill('Wrong material picked at their warehouse; CAPA opened');
		await buyer.getByRole('button', { name: 'Close alert' }).click();
		await expect(buyer.getByTestId('closed-step').textContent()).resolves.toContain('CAPA opened');
		await expect(buyer.getByTestId('alert-header').locator('[data-state]').getAttribute('data-state')).resolves.toBe('closed');
		await buyer.context().close();
		const steps = await db.query("SELECT action FROM audit_events WHERE entity = 'alert' AND entity_id = (SELECT id::text FROM alerts WHERE lot_id = $1) ORDER BY id", [lot.id]);
		expect(steps.rows.map((r) => r.action)).toEqual(['alert.opened', 'alert.finding-added', 'alert.finding-added', 'alert.acknowledged', 'alert.closed']);
	});

	it('signs through the API: 201 with the manifestation, 202 while a second signature is due, shared error shape', async () => {
		const qaCookie = await sessionCookie(browser, 'qa@demo.test');
		const qa2Cookie = await sessionCookie(browser, 'qa2@demo.test');
		const post = (path: string, cookie: string, body: unknown) =>
			fetch(`${baseUrl()}${path}`, { method: 'POST', headers: { cookie, 'content-type': 'application/json' }, body: JSON.stringify(body) });
		const good = await receive('mcc-good');
		const wrong = await post(`/api/v1/lots/${good.id}/dispositions`, qaCookie, { decision: 'release', password: 'nope-nope', meaning: 'released for use', reason: 'all genuine' });
		expect(wrong.status).toBe(401);
		expect((await wrong.json()).error).toMatchObject({ code: 'wrong-password', field: 'password' });
		const bad = await post(`/api/v1/lots/${good.id}/dispositions`, qaCookie, { decision: 'approve', password: 'demo-lotgate', meaning: 'released for use', reason: 'all genuine' });
		expect(bad.status).toBe(400);
		expect((await bad.json()).error).toMatchObject({ field: 'decision' });
		const ok = await post(`/api/v1/lots/${good.id}/dispositions`, qaCookie, { decision: 'release', password: 'demo-lotgate', meaning: 'released for use', reason: 'all genuine' });
		expect(ok.status).toBe(201);
		const body = await ok.json();
		expect(body).toMatchObject({ signerName: await nameOf('qa@demo.test'), meaning: 'released for use', recordHash: expect.stringMatching(/^[0-9a-f]{64}$/), signedAt: expect.stringMatching(/Z$/) });
		const pdf = await fetch(`${baseUrl()}/api/v1/lots/${good.id}/certificate.pdf`, { headers: { cookie: techCookie } });
		expect(pdf.headers.get('content-type')).toBe('application/pdf');
		expect(Buffer.from(await pdf.arrayBuffer()).subarray(0, 5).toString()).toBe('%PDF-');

		const failed = await receive('lac-diluted');
		const pending = await post(`/api/v1/lots/${failed.id}/dispositions`, qaCookie, { decision: 'release', password: 'demo-lotgate', meaning: 'released for use', reason: 're-tested' });
		expect(pending.status).toBe(202);
		const dispositionId = (await pending.json()).disposition.id;
		const self = await post(`/api/v1/dispositions/${dispositionId}/cosign`, qaCookie, { password: 'demo-lotgate', meaning: 'approved as second QA manager', reason: 'me again' });
		expect(self.status).toBe(403);
		expect((await self.json()).error.code).toBe('same-signer');
		const cosigned = await post(`/api/v1/dispositions/${dispositionId}/cosign`, qa2Cookie, { password: 'demo-lotgate', meaning: 'approved as second QA manager', reason: 'agree' });
		expect(cosigned.status).toBe(201);
		expect((await cosigned.json()).disposition.state).toBe('effective');
		const tech = await post(`/api/v1/lots/${good.id}/dispositions`, techCookie, { decision: 'reject', password: 'demo-lotgate', meaning: 'rejected', reason: 'no' });
		expect(tech.status).toBe(403);
	});

	it('shows the supplier scorecard with its trend chart, and changes a status with a QA co-signature', async () => {
		const buyer = await as('buyer@demo.test');
		await buyer.goto('/suppliers/GRISEDALE');
		await expect(Number(await buyer.getByTestId('lots-received').textContent())).toBeGreaterThan(0);
		await buyer.locator('canvas').first().waitFor();
		await buyer.getByTestId('verdicts-table').getByText('not this material').first().waitFor();
		// The status change on a supplier of its own, so other tests keep the demo suppliers as seeded.
		const code = `ST${randomBytes(3).toString('hex').toUpperCase()}`;
		const buyerCookie = await sessionCookie(browser, 'buyer@demo.test');
		const created = await fetch(`${baseUrl()}/api/v1/suppliers`, { method: 'POST', headers: { cookie: buyerCookie, 'content-type': 'application/json' }, body: JSON.stringify({ code, name: 'Status Test Trading', status: 'qualified' }) });
		expect(created.status, await created.clone().text()).toBe(201);
		await buyer.goto(`/suppliers/${code}`);
		const form = buyer.getByTestId('request-status-form');
		// No status is chosen for the buyer.
		expect(await form.getByLabel('New status').inputValue()).toBe('');
		await form.getByLabel('New status').selectOption('on-watch');
		await form.getByLabel('Reason').fill('Late certificates of analysis twice this quarter');
		await form.getByRole('button', { name: 'Request the change' }).click();
		await buyer.getByTestId('status-pending').waitFor();
		await buyer.context().close();
		expect((await db.query('SELECT status FROM suppliers WHERE code = $1', [code])).rows[0].status).toBe('qualified');

		const qa = await as('qa@demo.test');
		await qa.goto(`/suppliers/${code}`);
		const approve = qa.getByTestId('approve-status-form');
		await approve.getByLabel('Reason').fill('Agree: watch until the CAPA closes');
		await approve.getByLabel('Your password (re-enter to sign)').fill('demo-lotgate');
		// The meaning starts empty; signing without one is refused beside the field and changes nothing.
		expect(await approve.getByLabel('Meaning').inputValue()).toBe('');
		await approve.getByRole('button', { name: 'Co-sign the change' }).click();
		await approve.getByText('Choose the meaning of your signature').waitFor();
		expect((await db.query('SELECT status FROM suppliers WHERE code = $1', [code])).rows[0].status).toBe('qualified');
		await approve.getByLabel('Meaning').selectOption('supplier status change approved');
		await approve.getByLabel('Your password (re-enter to sign)').fill('demo-lotgate');
		await approve.getByRole('button', { name: 'Co-sign the change' }).click();
		await qa.locator('h1 [data-status="on-watch"]').waitFor();
		await qa.context().close();
		expect((await db.query('SELECT status FROM suppliers WHERE code = $1', [code])).rows[0].status).toBe('on-watch');
	});
});
