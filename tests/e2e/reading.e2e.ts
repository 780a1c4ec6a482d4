// How the product reads and handles for the people who use it (issue 17, items 13 and 15-19), in Debian's Chromium
// against the seeded demo: table rows that select scans, phone widths, the audit trail, one wording and one date
// style, validation messages in our own voice, and downloads that bypass the client router.
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

describe('a table row selects its scan (item 13)', () => {
	it('on the lot page: click, Enter and Space select rows; the checkbox still toggles', async () => {
		const page = await as('technician@demo.test');
		await page.goto(`/lots/${internalOf.get('lac-diluted')}`);
		const count = page.getByTestId('selection-count');
		const row4 = page.locator('tr[data-container="4"]');
		const row2 = page.locator('tr[data-container="2"]');
		await row4.locator('td').nth(1).click();
		await expect(count.textContent()).resolves.toContain('1 selected');
		await expect(row4.getAttribute('aria-selected')).resolves.toBe('true');
		await expect(page.getByTestId('selected-scan').textContent()).resolves.toContain('C04');
		// A plain click on another row selects only that one, as a plain click on a point does.
		await row2.locator('td').nth(1).click();
		await expect(count.textContent()).resolves.toContain('1 selected');
		await expect(row4.getAttribute('aria-selected')).resolves.toBe('false');
		// Keyboard: rows are reachable by Tab; Space adds the focused row, Enter selects only it.
		await row4.focus();
		await page.keyboard.press('Space');
		await expect(count.textContent()).resolves.toContain('2 selected');
		await page.keyboard.press('Enter');
		await expect(count.textContent()).resolves.toContain('1 selected');
		await expect(row4.getAttribute('aria-selected')).resolves.toBe('true');
		await expect(row4.getAttribute('tabindex')).resolves.toBe('0');
		// The checkbox keeps toggling, without the row's click also firing.
		await row2.locator('input[type=checkbox]').check();
		await expect(count.textContent()).resolves.toContain('2 selected');
		expect(page.errors).toEqual([]);
		await page.context().close();
	});

	it('on the version page: clicking a spectrum row selects it for exclusion', async () => {
		const page = await as('chemist@demo.test');
		await page.goto('/materials/LAC-200/versions/1');
		const rows = page.getByTestId('members-table').locator('tbody tr[data-entry]');
		const first = rows.nth(0);
		const second = rows.nth(1);
		await first.locator('td').nth(2).click();
		await expect(page.getByTestId('selection-count').first().textContent()).resolves.toContain('1 selected');
		await second.locator('td').nth(2).click({ modifiers: ['Shift'] });
		await expect(page.getByTestId('selection-count').first().textContent()).resolves.toContain('2 selected');
		await second.focus();
		await page.keyboard.press('Enter');
		await expect(page.getByTestId('selection-count').first().textContent()).resolves.toContain('1 selected');
		await expect(second.getAttribute('aria-selected')).resolves.toBe('true');
		await expect(page.getByRole('button', { name: 'Exclude 1 selected' }).isEnabled()).resolves.toBe(true);
		expect(page.errors).toEqual([]);
		await page.context().close();
	});
});

describe('validation messages in our own voice (item 18)', () => {
	it('a too-long name says so in our words; deactivate and revoke refuse an empty reason beside the form, not in a browser bubble', async () => {
		const page = await as('admin@demo.test');
		await page.goto('/admin/users');
		await page.getByLabel('Printed name').fill('N'.repeat(130));
		await page.getByLabel('E-mail').fill(`long-${Date.now()}@demo.test`);
		await page.getByRole('button', { name: 'Create user' }).click();
		await expect(page.getByText('Keep this to 120 characters or fewer (this has 130)').textContent()).resolves.toBeTruthy();
		expect(await page.content()).not.toContain('String must contain');

		const buyerRow = page.getByTestId('users-table').locator('tr', { hasText: 'buyer@demo.test' });
		await buyerRow.getByRole('button', { name: 'Manage' }).click();
		const deactivate = page.locator('form[action="?/active"]');
		await expect(deactivate.getAttribute('novalidate')).resolves.not.toBeNull();
		await deactivate.getByRole('button', { name: 'Deactivate' }).click();
		await expect(page.locator('.field-error', { hasText: 'Reason: Give a reason' }).first().textContent()).resolves.toBeTruthy();
		expect((await db.query("SELECT active FROM users WHERE email = 'buyer@demo.test'")).rows[0].active).toBe(true);
		await shoot(page, 'reading-admin-users-refusal');

		await page.goto('/admin/instruments');
		const dock = page.getByTestId('instruments-table').locator('tr', { hasText: 'NIR-DOCK-1' }).first();
		await dock.getByRole('button', { name: 'Manage' }).click();
		await page.locator('form[action="?/token"]').getByLabel('Label').fill(`reading test ${Date.now()}`);
		await page.getByRole('button', { name: 'Create token' }).click();
		await page.getByTestId('new-token-value').waitFor();
		if (!(await page.locator('form[action="?/revoke"]').count())) await page.getByTestId('instruments-table').locator('tr', { hasText: 'NIR-DOCK-1' }).first().getByRole('button', { name: 'Manage' }).click();
		const revoke = page.locator('form[action="?/revoke"]').first();
		await expect(revoke.getAttribute('novalidate')).resolves.not.toBeNull();
		await revoke.getByRole('button', { name: 'Revoke' }).click();
		await expect(page.locator('.field-error', { hasText: 'Reason:' }).first().textContent()).resolves.toMatch(/Reason: .*reason/i);
		expect(page.errors).toEqual([]);
		await page.context().close();
	});

	it('a date in the wrong shape gives one message on the receive form', async () => {
		const page = await as('technician@demo.test');
		await page.goto('/lots/new');
		// The browser's date input cannot hold a wrong shape; post the form as a script would.
		const res = await page.request.post('/lots/new', { form: { material: 'LAC-200', supplier: 'NORDVIK', supplierLot: 'X-1', containers: '2', receivedAt: '04/03/2025', plan: 'every' }, headers: { origin: new URL(page.url()).origin, 'x-sveltekit-action': 'true' } });
		const body = await res.text();
		expect(body).toContain('Enter the date as YYYY-MM-DD');
		expect(body).not.toContain('calendar date');
		await page.context().close();
	});
});

/** Elements that stick out past the right edge of a phone screen (for the failure message). */
async function overflowing(page: Page): Promise<string[]> {
	return page.evaluate(() => {
		const width = window.innerWidth;
		const out: string[] = [];
		for (const el of Array.from(document.body.querySelectorAll('*'))) {
			const r = el.getBoundingClientRect();
			if (r.right > width + 1 && r.width > 0) {
				// only the outermost offender: skip those inside a horizontally scrolling box
				let scroller = el.parentElement;
				let clipped = false;
				while (scroller) {
					const o = getComputedStyle(scroller).overflowX;
					if (o === 'auto' || o === 'scroll' || o === 'hidden') clipped = true;
					scroller = scroller.parentElement;
				}
				if (!clipped) out.push(`${el.tagName.toLowerCase()}.${String(el.className).slice(0, 60)} right=${Math.round(r.right)}`);
			}
		}
		return out.slice(0, 8);
	});
}

describe('phone width, 390 px (item 15)', () => {
	const PHONE = { width: 390, height: 844 };
	it('no main page scrolls sideways; the navigation folds into a menu; the lots list keeps its status', async () => {
		const page = await as('admin@demo.test', PHONE);
		const lotId = internalOf.get('lac-diluted');
		const pages = ['/', '/lots', `/lots/${lotId}`, '/materials', '/materials/LAC-200', '/materials/LAC-200/versions/1', '/materials/LAC-200/versions/1/report', '/intake', '/suppliers', '/suppliers/PALMERA', '/instruments', '/alerts', '/audit', '/admin', '/admin/users', '/admin/instruments', '/lots/new'];
		const wide: Record<string, { over: number; what: string[] }> = {};
		for (const path of pages) {
			await page.goto(path);
			await page.waitForLoadState('networkidle');
			const over = await page.evaluate(() => document.documentElement.scrollWidth - window.innerWidth);
			if (over > 0) wide[path] = { over, what: await overflowing(page) };
		}
		expect(wide).toEqual({});

		// The navigation is one "Menu" button until opened.
		await page.goto('/lots');
		const nav = page.getByRole('navigation', { name: 'Main' });
		await expect(nav.isVisible()).resolves.toBe(false);
		const headerHeight = await page.locator('header').evaluate((h) => h.getBoundingClientRect().height);
		expect(headerHeight).toBeLessThan(90);
		await page.getByTestId('menu-button').click();
		await expect(nav.isVisible()).resolves.toBe(true);
		await expect(page.getByTestId('menu-button').getAttribute('aria-expanded')).resolves.toBe('true');
		await shoot(page, 'reading-phone-menu-open', { fullPage: false });
		await nav.getByRole('link', { name: 'Materials' }).click();
		await page.waitForURL(/\/materials$/);
		await expect(nav.isVisible()).resolves.toBe(false);

		// The lots list: the status of every row is on screen, not scrolled away.
		await page.goto('/lots');
		const status = page.getByTestId('lots-table').locator('tbody tr').first().locator('td').last();
		// Not only on the screen: inside the table's own visible box, so no part of it is scrolled away.
		const [statusRight, tableRight] = await status.evaluate((td) => [td.getBoundingClientRect().right, td.closest('table')!.getBoundingClientRect().right]);
		expect(statusRight).toBeLessThanOrEqual(tableRight + 0.5);
		expect(tableRight).toBeLessThanOrEqual(PHONE.width);
		await expect(status.textContent()).resolves.toMatch(/\w/);
		for (const [name, path] of [['lots', '/lots'], ['lot', `/lots/${lotId}`], ['version', '/materials/LAC-200/versions/1'], ['supplier', '/suppliers/PALMERA']]) {
			await page.goto(path);
			await page.waitForLoadState('networkidle');
			const overflow = await shoot(page, `reading-${name}`);
			expect(overflow, name).toEqual({ desktop: 0, 'tablet-landscape': 0, 'tablet-portrait': 0, phone: 0 });
		}
		expect(page.errors).toEqual([]);
		await page.context().close();
	});
});

describe('one way of writing things (item 17)', () => {
	const ZONED = /\b\d{4}-\d{2}-\d{2} \d{2}:\d{2}:\d{2} UTC\b/;
	it('one caution beside the verdicts; containers as C01; verdicts in words; times in one style with the zone', async () => {
		const page = await as('qa@demo.test');
		await page.goto(`/lots/${internalOf.get('lac-wrong')}`);
		await expect(page.locator('.caution', { hasText: 'does not replace' }).count()).resolves.toBe(1);
		await expect(page.locator('section[aria-labelledby="outcome-h"] [data-testid="caution"]').count()).resolves.toBe(1);
		const text = (await page.locator('main').textContent()) ?? '';
		expect(text).not.toContain('not-this-material');
		expect(text).toContain('not this material');
		expect(text).toMatch(/C01/);
		await page.locator('tr[data-container="1"] summary').click();
		await expect(page.locator('tr[data-container="1"] ol li').first().textContent()).resolves.toMatch(ZONED);

		await page.goto('/materials/LAC-200/versions/1?show=held-out');
		const version = (await page.getByTestId('members-table').textContent()) ?? '';
		expect(version).not.toMatch(/not-this-material/);
		await expect(page.getByTestId('built-by').textContent()).resolves.toMatch(ZONED);

		expect(page.errors).toEqual([]);
		await page.context().close();
	});
});
