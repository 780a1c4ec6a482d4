// Journeys from the practitioners' walk-through (issue 17), in Debian's Chromium: the second QA signature with both
// QA users, creating a material and a supplier through the forms, a cross-lot duplicate, an exclusion then "Build a
// version", and what QA sees on the approval page. Screenshots at desktop, tablet and phone widths.
import { randomBytes } from 'node:crypto';
import pg from 'pg';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { demoScenario } from '../../src/lib/demo';
import { baseUrl, launchBrowser, newContext, sessionCookie, signIn } from '../support/browser';
import { csvMatrix, standardRows } from '../support/library-fixtures';
import { forLot } from '../support/relabel';
import { shoot } from '../support/screens';

let browser: Browser;
let techCookie: string;
let db: pg.Client;
const scenario = demoScenario();
const tag = () => randomBytes(3).toString('hex');

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

/** Receives a demo delivery as a new lot through the API; each container file is written for this lot. */
async function receive(lotKey: string) {
	const spec = scenario.lots.find((l) => l.lotKey === lotKey)!;
	const supplierLot = `${spec.supplierLot}-${tag()}`;
	const res = await fetch(`${baseUrl()}/api/v1/lots`, {
		method: 'POST',
		headers: { cookie: techCookie, 'content-type': 'application/json' },
		body: JSON.stringify({ material: spec.material, supplier: spec.supplier, supplierLot, containers: spec.files.length, receivedAt: '2025-03-04' })
	});
	expect(res.status, await res.clone().text()).toBe(201);
	const lot = (await res.json()) as { id: number; internalLot: string };
	for (const f of spec.files) {
		const form = new FormData();
		form.set('file', new Blob([Buffer.from(forLot(f.bytes, { material: spec.material, supplierLot, container: f.container }))]), f.name);
		form.set('container', String(f.container));
		const up = await fetch(`${baseUrl()}/api/v1/lots/${lot.id}/scans`, { method: 'POST', headers: { cookie: techCookie }, body: form });
		expect(up.status, await up.clone().text()).toBe(201);
	}
	return lot;
}

async function as(email: string): Promise<Page> {
	const context = await newContext(browser);
	const page = await context.newPage();
	const errors: string[] = [];
	page.on('pageerror', (e) => errors.push(`${page.url()}: ${e.message}${process.env.LOTGATE_E2E_STACKS ? ` ${e.stack}` : ''}`));
	(page as Page & { errors: string[] }).errors = errors;
	await signIn(page, email);
	return page;
}
const errorsOf = (page: Page) => (page as Page & { errors: string[] }).errors;

describe('second QA signature, with both QA users', () => {
	it('the first signer waits; the second signer’s home works and leads to the co-signature', async () => {
		const lot = await receive('lac-diluted');
		const qa = await as('qa@demo.test');
		await qa.goto(`/lots/${lot.id}`);
		const form = qa.getByTestId('dispose-form');
		// Nothing is pre-selected on a signed form: no decision, no meaning.
		expect(await form.getByRole('radio', { name: 'release' }).isChecked()).toBe(false);
		expect(await form.getByRole('radio', { name: 'quarantine' }).isChecked()).toBe(false);
		expect(await form.getByLabel('Meaning of your signature').inputValue()).toBe('');
		// Signing without choosing is refused beside the field, and nothing is stored.
		await form.getByLabel('Reason').fill('no decision chosen');
		await form.getByLabel('Your password (re-enter to sign)').fill('demo-lotgate');
		await form.getByRole('button', { name: 'Sign the chosen decision' }).click();
		await expect(form.getByText('Choose release, quarantine or reject').textContent()).resolves.toBeTruthy();
		expect((await db.query('SELECT count(*)::int AS n FROM dispositions WHERE lot_id = $1', [lot.id])).rows[0].n).toBe(0);

		await form.getByRole('radio', { name: 'release' }).check();
		await form.getByLabel('Meaning of your signature').selectOption('released for use');
		await form.getByLabel('Reason').fill('Container 4 re-tested by HPLC: within specification');
		await form.getByLabel('Your password (re-enter to sign)').fill('demo-lotgate');
		await form.getByRole('button', { name: 'Sign release' }).click();
		// The first signer sees the wait, not the form again.
		await qa.getByTestId('waiting-second-signature').waitFor();
		await expect(qa.getByTestId('waiting-second-signature').textContent()).resolves.toContain('Waiting for a second signature by another QA user');
		await expect(qa.getByTestId('dispose-form').count()).resolves.toBe(0);
		await expect(qa.getByTestId('cosign-form').count()).resolves.toBe(0);
		await shoot(qa, 'journeys-first-signer-waits');
		await qa.goto('/');
		const mine = qa.getByTestId('queue-qa-review').getByRole('listitem').filter({ hasText: lot.internalLot });
		await expect(mine.count()).resolves.toBe(1);
		await expect(mine.textContent()).resolves.toContain('waiting for a second signature by another QA user');

		// The server refuses a second pending release of the lot, from anyone.
		const qaCookie = (await qa.context().cookies()).map((c) => `${c.name}=${c.value}`).join('; ');
		const again = await fetch(`${baseUrl()}/api/v1/lots/${lot.id}/dispositions`, {
			method: 'POST',
			headers: { cookie: qaCookie, 'content-type': 'application/json', origin: baseUrl() },
			body: JSON.stringify({ decision: 'release', password: 'demo-lotgate', meaning: 'released for use', reason: 'again' })
		});
		expect(again.status).toBe(409);
		expect((await again.json()).error.code).toBe('second-signature-pending');
		expect(errorsOf(qa)).toEqual([]);
		await qa.context().close();

		// The second QA user: the home page renders (navigation, sign-out) and names the pending release.
		const qa2 = await as('qa2@demo.test');
		await qa2.goto('/');
		await qa2.getByRole('heading', { name: /Good to see you/ }).waitFor();
		await qa2.getByRole('button', { name: 'Sign out' }).waitFor();
		const pending = qa2.getByTestId('queue-qa-review').getByRole('link', { name: `${lot.internalLot} · release needs a second signature` });
		await shoot(qa2, 'journeys-second-signer-home');
		await pending.click();
		await qa2.waitForURL(/\/lots\//);
		const cosign = qa2.getByTestId('cosign-form');
		await expect(cosign.getByLabel('Meaning of your signature').inputValue()).resolves.toBe('');
		await cosign.getByLabel('Meaning of your signature').selectOption('approved as second QA manager');
		await cosign.getByLabel('Your reason').fill('Reviewed the HPLC re-test record');
		await cosign.getByLabel('Your password (re-enter to sign)').fill('demo-lotgate');
		await cosign.getByRole('button', { name: 'Sign as second QA manager' }).click();
		const effective = qa2.getByTestId('disposition-effective');
		await effective.waitFor();
		await expect(effective.getAttribute('data-decision')).resolves.toBe('release');
		expect((await db.query('SELECT status FROM lots WHERE id = $1', [lot.id])).rows[0].status).toBe('released');
		await shoot(qa2, 'journeys-second-signature-done');
		expect(errorsOf(qa2)).toEqual([]);
		await qa2.context().close();

		// Procurement's alert for the lot shows the disposition in force and where each finding stands now (item 7),
		// with containers as C01 and times in the one zoned style (item 17).
		const buyer = await as('buyer@demo.test');
		await buyer.goto('/alerts?state=all&sort=opened:desc');
		const listed = buyer.getByTestId('alerts-table').locator(`tr[data-lot="${lot.internalLot}"]`);
		await expect(listed.getByTestId('alert-lot-now').textContent()).resolves.toBe('released');
		const cells = await listed.locator('td').allTextContents();
		expect(cells[5]).toMatch(/^C\d{2}(, C\d{2})*$/);
		expect(cells[7]).toMatch(/^\d{4}-\d{2}-\d{2} \d{2}:\d{2}:\d{2} UTC$/);
		await listed.getByRole('link', { name: lot.internalLot }).click();
		// The click navigates in the client: wait for the alert's own heading before reading the page.
		await buyer.getByRole('heading', { name: new RegExp(`^Alert #\\d+: .*lot ${lot.internalLot}$`) }).waitFor();
		const now = buyer.getByTestId('alert-lot-now');
		await expect(now.getAttribute('data-decision')).resolves.toBe('release');
		const disposition = (await buyer.getByTestId('alert-disposition').textContent())!.replace(/\s+/g, ' ');
		expect(disposition).toMatch(/^Disposition in force: .*released, signed by .+ and .+, \d{4}-\d{2}-\d{2} \d{2}:\d{2}:\d{2} UTC\.$/);
		const finding = buyer.getByTestId('alert-findings').locator('tbody tr').first();
		await expect(finding.getAttribute('data-scan-state')).resolves.toBe('counts');
		const container = Number(await finding.getAttribute('data-container'));
		await expect(finding.locator('td').first().textContent()).resolves.toBe(`C${String(container).padStart(2, '0')}`);
		await expect(finding.getByTestId('finding-now').textContent()).resolves.toContain('Container now:');
		await shoot(buyer, 'journeys-alert-current');
		expect(errorsOf(buyer)).toEqual([]);
		await buyer.context().close();
	}, 300_000);
});

describe('onboarding through the forms', () => {
	it('creates a material with a comma-separated recipient list, and names a wrong address', async () => {
		const page = await as('chemist@demo.test');
		await page.goto('/materials');
		const code = `MGS-${tag()}`.toUpperCase();
		await page.getByLabel('Code').fill(code);
		await page.getByLabel('Name').fill('Magnesium stearate, vegetable');
		await page.getByLabel('Certificate recipients (comma-separated)').fill('qa@site.example, not-an-address');
		await page.getByRole('button', { name: 'Create material' }).click();
		const error = page.locator('.field-error').filter({ hasText: 'not-an-address' });
		await error.waitFor();
		await expect(error.textContent()).resolves.toContain('is not an e-mail address');
		await expect(page.locator('body').textContent()).resolves.not.toContain('[object Object]');
		await shoot(page, 'journeys-material-form-error');
		await page.getByLabel('Certificate recipients (comma-separated)').fill('qa@site.example, lab@site.example');
		await Promise.all([page.waitForURL(`**/materials/${code}`), page.getByRole('button', { name: 'Create material' }).click()]);
		const { rows } = await db.query('SELECT name, recipients FROM materials WHERE code = $1', [code]);
		expect(rows[0]).toEqual({ name: 'Magnesium stearate, vegetable', recipients: ['qa@site.example', 'lab@site.example'] });
		expect(errorsOf(page)).toEqual([]);
		await page.context().close();
	});

	it('adds a supplier with contact e-mails', async () => {
		const page = await as('buyer@demo.test');
		await page.goto('/suppliers');
		const code = `SUP-${tag()}`.toUpperCase();
		await page.getByLabel('Code').fill(code);
		await page.getByLabel('Name').fill('Harrowgate Excipients');
		await page.getByLabel('Contact e-mails (comma-separated)').fill('quality@harrowgate.example;orders@harrowgate.example');
		await page.getByRole('button', { name: 'Add supplier' }).click();
		await page.getByText(`Added ${code} · Harrowgate Excipients`).waitFor();
		const { rows } = await db.query('SELECT name, contacts FROM suppliers WHERE code = $1', [code]);
		expect(rows[0]).toEqual({ name: 'Harrowgate Excipients', contacts: ['quality@harrowgate.example', 'orders@harrowgate.example'] });
		await shoot(page, 'journeys-supplier-added');
		expect(errorsOf(page)).toEqual([]);
		await page.context().close();
	});
});

describe('evidence that cannot be reused', () => {
	it('refuses another lot’s container file in the uploader, naming where it is stored; a header naming another lot needs a recorded note', async () => {
		const source = await receive('lac-good');
		const stored = (await db.query('SELECT sp.raw, sc.container FROM scans sc JOIN spectra sp ON sp.id = sc.spectrum_id WHERE sc.lot_id = $1 ORDER BY sc.container LIMIT 1', [source.id])).rows[0];
		const supplierLot = `DUP-${tag()}`;
		const res = await fetch(`${baseUrl()}/api/v1/lots`, {
			method: 'POST',
			headers: { cookie: techCookie, 'content-type': 'application/json' },
			body: JSON.stringify({ material: 'LAC-200', supplier: 'NORDVIK', supplierLot, containers: 2, receivedAt: '2025-03-04' })
		});
		const lot = (await res.json()) as { id: number; internalLot: string };
		const page = await as('technician@demo.test');
		await page.goto(`/lots/${lot.internalLot}`);
		const batch = page.getByTestId('scan-batch');
		const other = forLot(scenario.lots.find((l) => l.lotKey === 'lac-good')!.files[1].bytes, { supplierLot: 'PT-25-009', container: 2 });
		await batch.getByTestId('upload-input').setInputFiles([
			{ name: 'copy-C01.jdx', mimeType: 'chemical/x-jcamp-dx', buffer: Buffer.from(stored.raw) },
			{ name: 'other-C02.jdx', mimeType: 'chemical/x-jcamp-dx', buffer: Buffer.from(other) }
		]);
		for (const n of ['copy-C01.jdx', 'other-C02.jdx']) await batch.locator(`[data-testid=upload-row][data-file="${n}"][data-status="ready"]`).waitFor();
		await batch.getByTestId('upload-start').click();
		const dup = batch.locator('[data-testid=upload-row][data-file="copy-C01.jdx"][data-status="refused"]');
		await dup.waitFor();
		await expect(dup.getByTestId('upload-message').textContent()).resolves.toContain(`already stored in lot ${source.internalLot}, container C0${stored.container}`);
		await expect(dup.getByTestId('upload-confirm').count()).resolves.toBe(0);
		const mismatch = batch.locator('[data-testid=upload-row][data-file="other-C02.jdx"][data-status="refused"]');
		await mismatch.waitFor();
		await expect(mismatch.getByTestId('upload-message').textContent()).resolves.toContain('the file names lot PT-25-009');
		await shoot(page, 'journeys-cross-lot-duplicate');
		const note = 'Template on the handheld still had the previous lot; container 2 of this lot was scanned';
		await mismatch.getByLabel(/Why the header differs/).fill(note);
		await mismatch.getByRole('button', { name: 'Upload with this note' }).click();
		await batch.locator('[data-testid=upload-row][data-file="other-C02.jdx"][data-status="stored"]').waitFor();
		const audit = await db.query("SELECT after FROM audit_events WHERE action = 'lot.scan-added' AND entity_id = $1 ORDER BY id DESC LIMIT 1", [String(lot.id)]);
		expect(audit.rows[0].after.headerConfirmation.note).toBe(note);
		expect((await db.query('SELECT count(*)::int AS n FROM scans WHERE lot_id = $1', [lot.id])).rows[0].n).toBe(1);
		expect(errorsOf(page)).toEqual([]);
		await page.context().close();
	}, 300_000);
});

describe('exclusions that stick, and an approval page that shows what is signed', () => {
	const code = `XB-${tag()}`.toUpperCase();
	let excludedId = 0;
	const reason = 'c/c_crit above 4 in every fold: cuvette window smudged';

	async function draftOf(page: Page, version: number) {
		await expect.poll(async () => (await db.query('SELECT v.state FROM model_versions v JOIN materials m ON m.id = v.material_id WHERE m.code = $1 AND v.version = $2', [code, version])).rows[0]?.state, { timeout: 120_000, interval: 1000 }).toMatch(/draft|failed/);
		const row = (await db.query('SELECT v.id, v.state, v.error FROM model_versions v JOIN materials m ON m.id = v.material_id WHERE m.code = $1 AND v.version = $2', [code, version])).rows[0];
		expect(row.state, row.error ?? '').toBe('draft');
		await page.reload();
		return Number(row.id);
	}
	const excludedIn = async (versionId: number) =>
		(await db.query('SELECT library_entry_id AS id, exclusion_category AS category, exclusion_reason AS reason FROM model_memberships WHERE model_version_id = $1 AND NOT included ORDER BY 1', [versionId])).rows;

	it('exclusion, then "Build a version": the excluded spectrum stays out, and coming back needs a reason', async () => {
		const chemist = await as('chemist@demo.test');
		const api = chemist.context().request;
		expect((await api.post('/api/v1/materials', { data: { code, name: 'Journey lactose', technique: 'NIR' } })).status()).toBe(201);
		for (const [name, kind] of [['genuine', 'genuine'], ['diluted', 'suspect'], ['substituted', 'suspect']]) {
			expect((await api.post(`/api/v1/materials/${code}/classes`, { data: { name, kind, description: name } })).status()).toBe(201);
		}
		const upload = await api.post(`/api/v1/materials/${code}/library`, { multipart: { file: { name: 'library.csv', mimeType: 'text/csv', buffer: Buffer.from(csvMatrix(standardRows(14), 17, 200)) }, classColumn: 'class' } });
		expect(upload.status(), await upload.text()).toBe(201);
		expect((await api.post(`/api/v1/materials/${code}/models`, { data: { recipe: 'snv,center', folds: 4, note: 'first build' } })).status()).toBe(201);
		await chemist.goto(`/materials/${code}/versions/1`);
		const v1 = await draftOf(chemist, 1);
		// QA approves v1 (through the API), so v1 screens lots and a later draft is compared with it.
		const qaCookie = await sessionCookie(browser, 'qa@demo.test');
		const approved = await fetch(`${baseUrl()}/api/v1/models/${code}@1/approve`, {
			method: 'POST',
			headers: { cookie: qaCookie, 'content-type': 'application/json', origin: baseUrl() },
			body: JSON.stringify({ password: 'demo-lotgate', meaning: 'approved for screening', reason: 'Challenge set rejected; genuine test spectra accepted' })
		});
		expect(approved.status, await approved.clone().text()).toBe(200);

		// Exclude one training spectrum on v1 with a category and a reason, and rebuild: v2 has one spectrum fewer.
		await chemist.reload();
		const first = chemist.getByTestId('members-table').locator('tbody tr').filter({ hasText: 'included' }).first();
		excludedId = Number(await first.getAttribute('data-entry'));
		await first.locator('input[type=checkbox]').check();
		await chemist.getByTestId('selection-count').filter({ hasText: '1 selected' }).waitFor();
		const exclude = chemist.getByTestId('exclude-form');
		await exclude.getByLabel('Reason category').selectOption('statistical-outlier');
		await exclude.getByLabel('Reason', { exact: true }).fill(reason);
		await exclude.getByRole('button', { name: /Exclude 1 selected/ }).click();
		await chemist.getByTestId('pending').filter({ hasText: reason }).waitFor();
		await Promise.all([chemist.waitForURL(new RegExp(`/materials/${code}/versions/2$`)), chemist.getByRole('button', { name: 'Rebuild', exact: true }).click()]);
		const v2 = await draftOf(chemist, 2);
		expect(await excludedIn(v2)).toEqual([{ id: excludedId, category: 'statistical-outlier', reason }]);

		// "Build a version" starts from v2: the form names it and lists the exclusion with its reason.
		await chemist.goto(`/materials/${code}/build`);
		await expect(chemist.getByTestId('build-basis').textContent()).resolves.toContain(`Starts from ${code} v2`);
		const row = chemist.getByTestId('build-excluded').locator(`tr[data-entry="${excludedId}"]`);
		await expect(row.textContent()).resolves.toContain(reason);
		expect(await row.getByRole('checkbox').isChecked()).toBe(false);
		await shoot(chemist, 'journeys-build-from-current-version');
		// Ticking it without a reason is refused beside the field; nothing is built.
		await row.getByRole('checkbox').check();
		await chemist.getByRole('button', { name: 'Build version' }).click();
		await chemist.getByText('Write why the ticked spectra come back').waitFor();
		expect((await db.query('SELECT count(*)::int AS n FROM model_versions v JOIN materials m ON m.id = v.material_id WHERE m.code = $1', [code])).rows[0].n).toBe(2);
		// Untick it and build with α = 0.025: v3 keeps the exclusion, and its diff re-includes nothing.
		await row.getByRole('checkbox').uncheck();
		await chemist.getByLabel('α, class models (type-I error)').fill('0.025');
		await Promise.all([chemist.waitForURL(new RegExp(`/materials/${code}/versions/3$`)), chemist.getByRole('button', { name: 'Build version' }).click()]);
		const v3 = await draftOf(chemist, 3);
		expect(await excludedIn(v3)).toEqual([{ id: excludedId, category: 'statistical-outlier', reason }]);
		await chemist.goto(`/materials/${code}/versions/3/diff`);
		const training = chemist.getByTestId('diff-training');
		await training.getByText('Re-included (0)').waitFor();
		await expect(training.textContent()).resolves.not.toContain('(empty)');
		expect(v1).toBeLessThan(v3);
		expect(errorsOf(chemist)).toEqual([]);
		await chemist.context().close();
	}, 600_000);

	it('the approval page shows, above the signature, the change against the approved version, the criteria and the warnings', async () => {
		expect(excludedId).toBeGreaterThan(0);
		const qa = await as('qa@demo.test');
		await qa.goto(`/materials/${code}/versions/3/approve`);
		const summary = qa.getByTestId('approval-summary');
		await expect(summary.getByTestId('approval-retires').textContent()).resolves.toContain(`Approving retires ${code} v1, which screens lots now`);
		const row = summary.getByTestId('approval-excluded').locator(`tr[data-entry="${excludedId}"]`);
		const rowText = (await row.textContent())!;
		for (const part of [reason, 'Statistical outlier at γ', 'newly excluded']) expect(rowText).toContain(part);
		const alpha = summary.getByTestId('approval-params').locator('tr[data-param="alpha"]');
		await expect(alpha.textContent()).resolves.toBe('α, class models (type-I error)0.050.025');
		expect(await summary.getByTestId('approval-params').textContent()).not.toMatch(/familyComponents|jackson-mudholkar|supplier_lot/);
		const criteria = summary.getByTestId('approval-acceptance');
		await expect(criteria.locator('[data-met]').getAttribute('data-met')).resolves.toMatch(/yes|no/);
		expect(await criteria.locator('[data-criterion]').count()).toBeGreaterThanOrEqual(5);
		await summary.getByTestId('approval-warnings').waitFor();

		// Above the signature at every width, and nothing in the summary or the signature runs past a phone's edge.
		for (const width of [1440, 768, 390]) {
			await qa.setViewportSize({ width, height: 900 });
			const s = (await summary.boundingBox())!;
			const sig = (await qa.getByTestId('approval-signature').boundingBox())!;
			expect(s.y + s.height).toBeLessThanOrEqual(sig.y);
			const right = await qa.evaluate(() => Math.max(...['approval-summary', 'approval-signature'].map((id) => document.querySelector(`[data-testid="${id}"]`)!.getBoundingClientRect().right)));
			expect(right).toBeLessThanOrEqual(width);
		}
		const overflow = await shoot(qa, 'journeys-approval-page');
		console.log('approval page sideways overflow by width:', JSON.stringify(overflow));

		const sign = qa.getByTestId('approval-signature');
		await sign.getByLabel('Meaning of this signature').selectOption('approved for screening');
		await sign.getByLabel('Reason').fill('One outlier excluded with its reason; α tightened; criteria met');
		await sign.getByLabel('Your password (re-enter to sign)').fill('demo-lotgate');
		await Promise.all([qa.waitForURL(new RegExp(`/materials/${code}/versions/3$`)), sign.getByRole('button', { name: 'Sign and approve' }).click()]);
		const states = (await db.query('SELECT v.version, v.state FROM model_versions v JOIN materials m ON m.id = v.material_id WHERE m.code = $1 ORDER BY v.version', [code])).rows;
		expect(states.map((r) => [r.version, r.state])).toEqual([
			[1, 'retired'],
			[2, 'draft'],
			[3, 'approved']
		]);
		expect(errorsOf(qa)).toEqual([]);
		await qa.context().close();
	}, 300_000);
});
