// How the product reads and handles for the people who use it (issue 17, items 13 and 15-19), in Debian's Chromium
// against the seeded demo: table rows that select scans, phone widths, the audit trail, one wording and one date
// style, validation messages in our own voice, and downloads that bypass the client router.
import pg from 'pg';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { demoScenario } from '../../src/lib/demo';
import { launchBrowser, newContext, signIn } from '../support/browser';

const scenario = demoScenario();
let browser: Browser;
let db: pg.Client;
const internalOf = new Map<string, string>();

beforeAll(async () => {
	browser = await launchBrowser();
	db = new pg.Client({ connectionString: inject('databaseUrl') });
	await db.connect();
	for (const l of scenario.lots) {
		const r = await db.query('SELECT internal_lot FROM lots WHERE supplier_lot = $1', [l.supplierLot]);
		if (r.rows[0]) internalOf.set(l.lotKey, r.rows[0].internal_lot);
	}
});
afterAll(async () => {
	await db?.end();
	await browser?.close();
});

type Watched = Page & { errors: string[]; dataRequests: string[] };
/** A signed-in page that records page errors, console errors and every client-router data request. */
async function as(email: string, viewport?: { width: number; height: number }): Promise<Watched> {
	const context = await newContext(browser);
	const page = (await context.newPage()) as Watched;
	if (viewport) await page.setViewportSize(viewport);
	page.errors = [];
	page.dataRequests = [];
	page.on('pageerror', (e) => page.errors.push(e.message));
	page.on('console', (m) => m.type() === 'error' && page.errors.push(m.text()));
	page.on('request', (r) => r.url().includes('__data.json') && page.dataRequests.push(new URL(r.url()).pathname));
	await signIn(page, email);
	return page;
}

describe('downloads are plain downloads (item 19)', () => {
	it('report PDF, artefact JSON and certificate download without the client router trying them first', async () => {
		const page = await as('qa@demo.test');
		await page.goto('/materials/LAC-200/versions/1');
		for (const testId of ['report-pdf-link', 'artefact-link']) {
			const link = page.getByTestId(testId);
			await expect(link.getAttribute('data-sveltekit-reload')).resolves.not.toBeNull();
			const [download] = await Promise.all([page.waitForEvent('download'), link.click()]);
			expect(download.suggestedFilename()).toMatch(testId === 'artefact-link' ? /\.model\.json$/ : /\.pdf$/);
		}
		await page.goto(`/lots/${internalOf.get('cit-good')}`);
		const [certificate] = await Promise.all([page.waitForEvent('download'), page.getByTestId('certificate-link').click()]);
		expect(certificate.suggestedFilename()).toMatch(/\.pdf$/);
		expect(page.dataRequests.filter((p) => /report\.pdf|artefact|certificate/.test(p))).toEqual([]);
		expect(page.errors).toEqual([]);
		await page.context().close();
	});
});
