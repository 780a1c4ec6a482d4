// Debian's Chromium driven by playwright-core; never a downloaded browser. launch() gives each run a fresh temporary profile.
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
			'--disable-sync'
		]
	});
}

export async function newContext(browser: Browser): Promise<BrowserContext> {
	const context = await browser.newContext({ baseURL: baseUrl(), viewport: { width: 1280, height: 800 } });
	// Fail fast with a clear locator error rather than running into the test timeout.
	context.setDefaultTimeout(15_000);
	return context;
}

export async function signIn(page: Page, email: string, password = DEMO_PASSWORD) {
	await page.goto('/login');
	await page.getByLabel('E-mail').fill(email);
	await page.getByLabel('Password').fill(password);
	const posted = page.waitForResponse((r) => r.request().method() === 'POST' && new URL(r.url()).pathname === '/login');
	await page.getByRole('button', { name: 'Sign in' }).click();
	const response = await posted;
	const body = await response.text().catch(() => '');
	// A successful sign-in answers with a redirect for the client router; wait for it to land.
	if (body.includes('"type":"redirect"')) await page.waitForURL((url) => !url.pathname.startsWith('/login'));
	else await page.getByTestId('login-error').waitFor();
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
