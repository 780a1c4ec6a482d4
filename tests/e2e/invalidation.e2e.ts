// Browser: the invalidation journey on the lot page (issue #11). A diluted container fails; a genuine retest does not
// change that; a chemometrician proposes an invalidation with a cause; a QA manager approves it with a signature; the
// page then reads "invalidated by … because …, approved by …" and the retest counts. The exact API contract is checked
// over HTTP along the way. Screenshots at desktop, tablet and phone widths.
import { randomBytes } from 'node:crypto';
import pg from 'pg';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { demoScenario } from '../../src/lib/demo';
import { baseUrl, DEMO_PASSWORD, launchBrowser, newContext, sessionCookie, signIn } from '../support/browser';
import { forLot } from '../support/relabel';
import { shoot } from '../support/screens';

let browser: Browser;
const cookies: Record<string, string> = {};
let db: pg.Client;
const scenario = demoScenario();

beforeAll(async () => {
	browser = await launchBrowser();
	for (const who of ['technician', 'chemist', 'qa']) cookies[who] = await sessionCookie(browser, `${who}@demo.test`);
	db = new pg.Client({ connectionString: inject('databaseUrl') });
	await db.connect();
});
afterAll(async () => {
	await db?.end();
	await browser?.close();
});

const api = (who: string, path: string, init: RequestInit = {}) =>
	fetch(`${baseUrl()}/api/v1${path}`, { ...init, headers: { cookie: cookies[who], ...(init.body && typeof init.body === 'string' ? { 'content-type': 'application/json' } : {}), ...(init.headers ?? {}) } });

async function upload(lotId: number, bytes: Uint8Array, name: string, container: number) {
	const form = new FormData();
	form.set('file', new Blob([Buffer.from(bytes)]), name);
	form.set('container', String(container));
	const up = await api('technician', `/lots/${lotId}/scans`, { method: 'POST', body: form });
	expect(up.status, await up.clone().text()).toBe(201);
	return (await up.json()) as { scanId: number; verdict: string };
}

async function as(email: string): Promise<Page> {
	const page = await (await newContext(browser)).newPage();
	await signIn(page, email);
	return page;
}

interface LotJson {
	identity: string;
	containers: { number: number; result: string; scans: { id: number; verdict: string; fileName: string; invalidated: null | Record<string, string> }[] }[];
}

describe('invalidation journey', () => {
	it('a failing container is not retested into genuine; an approved invalidation lets the retest count', { timeout: 180_000 }, async () => {
		const spec = scenario.lots.find((l) => l.lotKey === 'lac-diluted')!;
		const good = scenario.lots.find((l) => l.lotKey === 'lac-good')!;
		// identical bytes are refused site-wide as evidence, so every file is written for this lot (its header names it)
		const supplierLot = `INV-${randomBytes(3).toString('hex')}`;
		const res = await api('technician', '/lots', {
			method: 'POST',
			body: JSON.stringify({ material: spec.material, supplier: spec.supplier, supplierLot, containers: spec.files.length, receivedAt: '2025-03-04' })
		});
		expect(res.status).toBe(201);
		const lot = (await res.json()) as { id: number; internalLot: string };
		const scans = [];
		for (const f of spec.files) scans.push({ ...(await upload(lot.id, forLot(f.bytes, { supplierLot, container: f.container }), f.name, f.container)), container: f.container });
		const bad = scans.find((s) => s.verdict === 'suspect')!;
		expect(bad).toBeTruthy();
		// The retest: a genuine file for the same container.
		const retestFile = good.files.find((f) => f.container === bad.container) ?? good.files[0];
		const retest = await upload(lot.id, forLot(retestFile.bytes, { supplierLot, container: bad.container }), `retest-C${String(bad.container).padStart(2, '0')}.jdx`, bad.container);
		expect(retest.verdict).toBe('genuine');
		let view = (await (await api('qa', `/lots/${lot.id}`)).json()) as LotJson;
		expect(view.identity).toBe('fails');
		const c = view.containers.find((x) => x.number === bad.container)!;
		expect(c.result).toBe('suspect');
		expect(c.scans.map((s) => [s.verdict, s.invalidated])).toEqual([
			['suspect', null],
			['genuine', null]
		]);

		// The API refuses bad proposals and wrong roles, naming the problem.
		const post = (who: string, path: string, body: unknown) => api(who, `/lots/${lot.id}/scans/${path}`, { method: 'POST', body: JSON.stringify(body) });
		const missing = await post('chemist', `${bad.scanId}/invalidation`, { description: 'probe not in contact with the powder' });
		expect(missing.status).toBe(400);
		expect(((await missing.json()) as { error: { message: string } }).error.message).toMatch(/cause/);
		expect((await post('chemist', `999999/invalidation`, { cause: 'other', description: 'no such scan here at all' })).status).toBe(404);
		expect((await post('qa', `${bad.scanId}/invalidation`, { cause: 'other', description: 'QA may not propose one' })).status).toBe(403);

		// The chemometrician proposes it on the lot page.
		const chemist = await as('chemist@demo.test');
		await chemist.goto(`/lots/${lot.id}`);
		const entry = chemist.locator(`[data-testid="scan-entry"][data-scan="${bad.scanId}"]`);
		await entry.getByTestId('propose-open').click();
		await entry.getByLabel('Assignable cause').selectOption('sample-presentation');
		await entry.getByLabel('What went wrong, and how it was found').fill('Probe window not in contact: the liner was folded over it (photo in the lab log).');
		await entry.getByRole('button', { name: 'Propose invalidation' }).click();
		await expect.poll(() => entry.getByTestId('invalidation-text').getAttribute('data-state'), { timeout: 20_000 }).toBe('proposed');
		// Still failing until QA decides.
		view = (await (await api('qa', `/lots/${lot.id}`)).json()) as LotJson;
		expect(view.identity).toBe('fails');
		// The proposer cannot approve (403: not QA).
		expect((await post('chemist', `${bad.scanId}/invalidation/approve`, { password: DEMO_PASSWORD, meaning: 'approved', reason: 'mine' })).status).toBe(403);
		await chemist.context().close();

		// A QA manager approves it with a signature.
		const qa = await as('qa@demo.test');
		await qa.goto(`/lots/${lot.id}`);
		const qEntry = qa.locator(`[data-testid="scan-entry"][data-scan="${bad.scanId}"]`);
		await qEntry.getByLabel('Your reason').fill('Lab log and photo confirm the presentation fault');
		await qEntry.getByLabel('Your password (re-enter to sign)').fill(DEMO_PASSWORD);
		// The meaning of the signature starts empty: deciding without one is refused beside the scan, nothing changes.
		expect(await qEntry.getByLabel('Meaning of your signature').inputValue()).toBe('');
		await qEntry.getByRole('button', { name: 'Approve invalidation' }).click();
		await expect.poll(() => qEntry.getByTestId('invalidation-error').textContent(), { timeout: 20_000 }).toContain('Choose what the signature means');
		expect(await qEntry.getByTestId('invalidation-text').getAttribute('data-state')).toBe('proposed');
		await qEntry.getByLabel('Meaning of your signature').fill('invalidation approved: assignable laboratory cause');
		await qEntry.getByLabel('Your reason').fill('Lab log and photo confirm the presentation fault');
		await qEntry.getByLabel('Your password (re-enter to sign)').fill(DEMO_PASSWORD);
		await qEntry.getByRole('button', { name: 'Approve invalidation' }).click();
		await expect.poll(() => qEntry.getByTestId('invalidation-text').getAttribute('data-state'), { timeout: 20_000 }).toBe('approved');
		const names = (await db.query<{ email: string; name: string }>("SELECT email, name FROM users WHERE email IN ('chemist@demo.test','qa@demo.test')")).rows;
		const nameOf = (e: string) => names.find((n) => n.email === e)!.name;
		const text = (await qEntry.getByTestId('invalidation-text').textContent())!.replace(/\s+/g, ' ');
		expect(text).toMatch(new RegExp(`Invalidated by ${nameOf('chemist@demo.test')} because sample presentation.*approved by ${nameOf('qa@demo.test')}`));
		await expect(qa.locator(`[data-testid="container-record"][data-container="${bad.container}"]`).getAttribute('data-result')).resolves.toBe('genuine');
		await expect(qa.getByTestId('failing-history').count()).resolves.toBe(1);
		// The scan record fits a phone: nothing in it reaches past the 390 px viewport (the evidence plots are another panel's).
		await qa.setViewportSize({ width: 390, height: 844 });
		const widest = await qa.getByTestId('scan-record').evaluate((el) => Math.max(...[el, ...el.querySelectorAll('*')].map((e) => e.getBoundingClientRect().right)));
		expect(widest).toBeLessThanOrEqual(390);
		const overflow = await shoot(qa, 'invalidation-approved');
		console.log('sideways overflow by width:', JSON.stringify(overflow));
		await qEntry.scrollIntoViewIfNeeded();
		await shoot(qa, 'invalidation-approved-viewport', { fullPage: false });

		// The API tells the same story.
		view = (await (await api('qa', `/lots/${lot.id}`)).json()) as LotJson;
		expect(view.identity).toBe('meets');
		const after = view.containers.find((x) => x.number === bad.container)!;
		expect(after.result).toBe('genuine');
		expect(after.scans[0].invalidated).toMatchObject({ cause: 'sample-presentation', proposedBy: nameOf('chemist@demo.test'), approvedBy: nameOf('qa@demo.test') });
		expect(after.scans[1].fileName).toMatch(/^retest-C\d\d\.jdx$/);
		// Deciding again finds no proposal.
		expect((await post('qa', `${bad.scanId}/invalidation/refuse`, { password: DEMO_PASSWORD, meaning: 'refused', reason: 'too late' })).status).toBe(404);
		await qa.context().close();
	});
});
