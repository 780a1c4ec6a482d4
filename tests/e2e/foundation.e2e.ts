import { spawn, spawnSync } from 'node:child_process';
import pg from 'pg';
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { stopProcess } from '../support/global-app';
import { baseUrl, DEMO_PASSWORD, launchBrowser, newContext, sessionCookie, signIn } from '../support/browser';

let browser: Browser;
beforeAll(async () => {
	browser = await launchBrowser();
});
afterAll(async () => {
	await browser?.close();
});

const DEMO = [
	['technician@demo.test', 'Technician'],
	['chemist@demo.test', 'Chemometrician'],
	['qa@demo.test', 'QA manager'],
	['qa2@demo.test', 'QA manager'],
	['buyer@demo.test', 'Procurement'],
	['admin@demo.test', 'Admin']
] as const;

function verifyAudit() {
	return spawnSync('npx', ['tsx', 'scripts/audit-verify.ts'], { encoding: 'utf8', env: { ...process.env, DATABASE_URL: inject('databaseUrl'), LOTGATE_AUDIT_KEY: inject('auditKey'), LOTGATE_AUDIT_CHECKPOINT_DIR: inject('auditCheckpointDir') } });
}

describe('sign-in and roles', () => {
	it.each(DEMO)('signs in as %s and shows the role home', async (email, roleLabel) => {
		const context = await newContext(browser);
		const page = await context.newPage();
		await signIn(page, email);
		await page.waitForURL(`${baseUrl()}/`);
		await expect(page.getByTestId('signed-in-as').textContent()).resolves.toContain(roleLabel);
		await context.close();
	});

	it('says so when the password is wrong', async () => {
		const context = await newContext(browser);
		const page = await context.newPage();
		await signIn(page, 'qa2@demo.test', 'not-the-password');
		await expect(page.getByTestId('login-error').textContent()).resolves.toContain('e-mail or password is not correct');
		await context.close();
	});

	it('refuses a technician on admin pages and admin API routes', async () => {
		const context = await newContext(browser);
		const page = await context.newPage();
		await signIn(page, 'technician@demo.test');
		const response = await page.goto('/admin/users');
		expect(response?.status()).toBe(403);
		await expect(page.locator('body').textContent()).resolves.toContain('Not allowed');
		const api = await context.request.get('/api/v1/users');
		expect(api.status()).toBe(403);
		expect((await api.json()).error.code).toBe('forbidden');
		const anonymous = await fetch(`${baseUrl()}/api/v1/suppliers`);
		expect(anonymous.status).toBe(401);
		await context.close();
	});

	it('lets an admin create a user, writes an audit row, and locks that user after 5 failures', async () => {
		const context = await newContext(browser);
		const page = await context.newPage();
		await signIn(page, 'admin@demo.test');
		await page.goto('/admin/users');
		const email = `locktest-${Date.now()}@demo.test`;
		await page.getByLabel('Printed name').fill('Lockout Tester');
		await page.getByLabel('E-mail').fill(email);
		await page.getByLabel('Initial password').fill('lock-test-password');
		await page.locator('form[action="?/create"]').getByLabel('Technician').check();
		await page.getByRole('button', { name: 'Create user' }).click();
		await expect(page.getByTestId('create-user-message').textContent()).resolves.toContain(email);

		// The admin cannot read the audit trail (QA and admin can): check it as admin.
		await page.goto(`/audit?entity=user&action=user.created`);
		await expect(page.getByTestId('audit-table').textContent()).resolves.toContain('user.created');
		const cookie = await sessionCookie(browser, 'qa@demo.test');
		const csv = await fetch(`${baseUrl()}/audit/export.csv?action=user.created`, { headers: { cookie } });
		expect(csv.status).toBe(200);
		expect(await csv.text()).toContain(email);

		const other = await newContext(browser);
		const tab = await other.newPage();
		for (let i = 0; i < 4; i++) {
			await signIn(tab, email, 'wrong-password-' + i);
			await expect(tab.getByTestId('login-error').textContent()).resolves.toContain('not correct');
		}
		await signIn(tab, email, 'wrong-password-5');
		await expect(tab.getByTestId('login-error').textContent()).resolves.toContain('locked');
		await signIn(tab, email, 'lock-test-password');
		await expect(tab.getByTestId('login-error').textContent()).resolves.toContain('locked');
		await other.close();
		await context.close();
	});

	it('signs out', async () => {
		const context = await newContext(browser);
		const page = await context.newPage();
		await signIn(page, 'buyer@demo.test', DEMO_PASSWORD);
		await page.getByRole('button', { name: 'Sign out' }).click();
		await page.waitForURL(/\/login/);
		const response = await page.goto('/suppliers');
		expect(new URL(response!.url()).pathname).toBe('/login');
		await context.close();
	});

	it('answers unknown pages with a 404 page', async () => {
		const context = await newContext(browser);
		const page = await context.newPage();
		await signIn(page, 'qa@demo.test');
		const response = await page.goto('/no-such-place');
		expect(response?.status()).toBe(404);
		await expect(page.locator('h1').textContent()).resolves.toContain('Not found');
		await context.close();
	});
});

describe('request safety', () => {
	it('refuses a form post from another site', async () => {
		const res = await fetch(`${baseUrl()}/login`, {
			method: 'POST',
			headers: { origin: 'http://elsewhere.example', 'content-type': 'application/x-www-form-urlencoded' },
			body: 'email=qa%40demo.test&password=x'
		});
		expect(res.status).toBe(403);
	});

	it('answers 503 with a clear page when the database is down', async () => {
		const port = 3199;
		const app = spawn(process.execPath, ['build/index.js'], {
			env: { ...process.env, DATABASE_URL: 'postgresql://lotgate@127.0.0.1:1/nowhere', AUTH_SECRET: 'x', PORT: String(port), HOST: '127.0.0.1', ORIGIN: `http://127.0.0.1:${port}` },
			stdio: 'ignore'
		});
		try {
			let res: Response | null = null;
			for (let i = 0; i < 80 && !res; i++) {
				res = await fetch(`http://127.0.0.1:${port}/login`).catch(() => null);
				if (!res) await new Promise((r) => setTimeout(r, 250));
			}
			expect(res?.status).toBe(503);
			expect(await res!.text()).toContain('database is not reachable');
			const api = await fetch(`http://127.0.0.1:${port}/api/v1/lots`);
			expect(api.status).toBe(503);
			expect((await api.json()).error.code).toBe('database-unavailable');
		} finally {
			await stopProcess(app);
		}
	});
});

describe('audit:verify', () => {
	it('passes on the real chain and fails after a row is tampered with', async () => {
		const ok = verifyAudit();
		expect(ok.status, ok.stderr).toBe(0);
		expect(ok.stdout).toContain('audit chain verified');
		// Tampering as the owner role: the app role may not switch the trigger off.
		const client = new pg.Client({ connectionString: inject('ownerDatabaseUrl') });
		await client.connect();
		const { rows } = await client.query('SELECT id, reason FROM audit_events ORDER BY id LIMIT 1 OFFSET 2');
		try {
			await client.query('ALTER TABLE audit_events DISABLE TRIGGER audit_events_no_update');
			await client.query("UPDATE audit_events SET reason = 'quietly changed' WHERE id = $1", [rows[0].id]);
			const broken = verifyAudit();
			expect(broken.status).toBe(1);
			expect(broken.stderr).toContain(`#${rows[0].id}`);
		} finally {
			await client.query('UPDATE audit_events SET reason = $2 WHERE id = $1', [rows[0].id, rows[0].reason]);
			await client.query('ALTER TABLE audit_events ENABLE TRIGGER audit_events_no_update');
			await client.end();
		}
		expect(verifyAudit().status).toBe(0);
	});
});
