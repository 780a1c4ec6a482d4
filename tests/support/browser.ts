// Debian's Chromium driven by playwright-core; never a downloaded browser.
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type Browser, type BrowserContext, type Page } from 'playwright-core';
import { inject } from 'vitest';

export const baseUrl = () => inject('baseUrl');
export const DEMO_PASSWORD = process.env.LOTGATE_DEMO_PASSWORD || 'demo-lotgate';

export async function launchBrowser(): Promise<Browser> {
	return chromium.launch({
		executablePath: '/usr/bin/chromium',
		headless: true,
		args: [
			'--no-sandbox',
			'--disable-gpu',
			'--disable-quic',
			'--no-first-run',
			'--disable-background-networking',
			'--disable-component-update',
			'--disable-sync',
			`--user-data-dir=${mkdtempSync(join(tmpdir(), 'lotgate-chromium-'))}`
		]
	});
}

export async function newContext(browser: Browser): Promise<BrowserContext> {
	return browser.newContext({ baseURL: baseUrl(), viewport: { width: 1280, height: 800 } });
}

export async function signIn(page: Page, email: string, password = DEMO_PASSWORD) {
	await page.goto('/login');
	await page.getByLabel('E-mail').fill(email);
	await page.getByLabel('Password').fill(password);
	await Promise.all([page.waitForURL((url) => !url.pathname.startsWith('/login') || url.search.includes('error'), { timeout: 15_000 }).catch(() => {}), page.getByRole('button', { name: 'Sign in' }).click()]);
}

/** Signs in through the real form and returns the cookie header, for API calls from tests. */
export async function sessionCookie(browser: Browser, email: string): Promise<string> {
	const context = await newContext(browser);
	const page = await context.newPage();
	await signIn(page, email);
	await page.waitForURL((url) => !url.pathname.startsWith('/login'));
	const cookies = await context.cookies();
	await context.close();
	return cookies.map((c) => `${c.name}=${c.value}`).join('; ');
}
