// Browser: build a version, exclude two points with a reason, rebuild; the diff shows the exclusion and its reason;
// the builder cannot approve; a QA user approves; approving the next version retires the previous one.
import { createHash } from 'node:crypto';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { launchBrowser, newContext, signIn } from '../support/browser';
import { csvMatrix, standardRows } from '../support/library-fixtures';

let browser: Browser;
beforeAll(async () => {
	browser = await launchBrowser();
});
afterAll(async () => {
	await browser?.close();
});

const code = `E2E-${Math.random().toString(36).slice(2, 7).toUpperCase()}`;

async function waitForDraft(page: Page) {
	await expect.poll(async () => (await page.locator('h1 [data-state]').getAttribute('data-state')) ?? '', { timeout: 60_000, interval: 1000 }).toMatch(/draft|failed/);
	expect(await page.locator('h1 [data-state]').getAttribute('data-state')).toBe('draft');
}

async function approveAs(page: Page, versionUrl: string, reason: string) {
	await page.goto(`${versionUrl}/approve`);
	// The meaning of the signature is never pre-selected: the signer chooses it.
	const meaning = page.getByLabel('Meaning of this signature');
	expect(await meaning.inputValue()).toBe('');
	await meaning.selectOption('approved for screening');
	await page.getByLabel('Reason').fill(reason);
	await page.getByLabel(/Your password/).fill(process.env.LOTGATE_DEMO_PASSWORD || 'demo-lotgate');
	await Promise.all([page.waitForURL(versionUrl), page.getByRole('button', { name: 'Sign and approve' }).click()]);
}

describe('method development in the browser', () => {
	it('builds, excludes with a reason, rebuilds, diffs, and is approved by QA only', async () => {
		const chemist = await newContext(browser);
		const page = await chemist.newPage();
		const pageErrors: string[] = [];
		page.on('pageerror', (e) => pageErrors.push(e.message));
		await signIn(page, 'chemist@demo.test');

		// Material and classes through the API (the same calls integrations make), the library from the fixture generator.
		const created = await chemist.request.post('/api/v1/materials', { data: { code, name: 'E2E lactose', technique: 'NIR' } });
		expect(created.status()).toBe(201);
		for (const [name, kind] of [['genuine', 'genuine'], ['diluted', 'suspect'], ['substituted', 'suspect']]) {
			expect((await chemist.request.post(`/api/v1/materials/${code}/classes`, { data: { name, kind, description: name } })).status()).toBe(201);
		}
		const upload = await chemist.request.post(`/api/v1/materials/${code}/library`, {
			multipart: { file: { name: 'library.csv', mimeType: 'text/csv', buffer: Buffer.from(csvMatrix(standardRows(14), 3, 200)) }, classColumn: 'class' }
		});
		expect(upload.status(), await upload.text()).toBe(201);
		expect((await upload.json()).added).toBe(standardRows(14).length);

		// A build through the API: { id, jobId }, then poll the version until the job finishes.
		const queued = await chemist.request.post(`/api/v1/materials/${code}/models`, { data: { recipe: 'snv,center', folds: 4, note: 'API build' } });
		expect(queued.status()).toBe(201);
		const { id: apiId, jobId } = await queued.json();
		expect(jobId).toBeTruthy();
		await expect.poll(async () => (await (await chemist.request.get(`/api/v1/models/${apiId}`)).json()).state, { timeout: 60_000, interval: 500 }).toBe('draft');
		const apiVersion = await (await chemist.request.get(`/api/v1/models/${apiId}`)).json();
		expect(apiVersion.figures.models.length).toBe(4);
		const artefactText = await (await chemist.request.get(`/api/v1/models/${apiId}/artefact`)).text();
		expect(createHash('sha256').update(artefactText).digest('hex')).toBe(apiVersion.artefactSha256);

		// Build through the form; the job runs in the server's pg-boss worker.
		await page.goto(`/materials/${code}/build`);
		await page.getByLabel('Folds', { exact: true }).fill('5');
		await Promise.all([page.waitForURL(new RegExp(`/materials/${code}/versions/2$`)), page.getByRole('button', { name: 'Build version' }).click()]);
		await waitForDraft(page);
		const v1 = page.url();
		// The evidence plots draw (Chart.js in the browser) without script errors.
		await page.getByTestId('chart-Distance-plot-family').locator('canvas').waitFor();
		expect(await page.locator('figure canvas').count()).toBeGreaterThanOrEqual(6);
		expect(pageErrors).toEqual([]);
		if (process.env.LOTGATE_E2E_SCREENSHOTS) await page.screenshot({ path: `${process.env.LOTGATE_E2E_SCREENSHOTS}/version.png`, fullPage: true });

		// Select two training spectra in the table and exclude them with a category and reason.
		const boxes = page.getByTestId('members-table').locator('tbody input[type=checkbox]');
		await boxes.nth(0).check();
		await boxes.nth(1).check();
		await page.getByTestId('selection-count').filter({ hasText: '2 selected' }).waitFor({ timeout: 15_000 });
		const exclude = page.getByTestId('exclude-form');
		await exclude.getByLabel('Reason category').selectOption('sample-preparation');
		await exclude.getByLabel('Reason', { exact: true }).fill('cuvette window smudged');
		await exclude.getByRole('button', { name: /Exclude 2 selected/ }).click();
		await page.getByTestId('pending').filter({ hasText: 'cuvette window smudged' }).waitFor({ timeout: 15_000 }).catch(async (e) => {
			console.log('EXCLUDE FORM:', await exclude.innerText(), '\nPENDING:', await page.getByTestId('pending').innerText());
			throw e;
		});

		await Promise.all([page.waitForURL(new RegExp(`/materials/${code}/versions/3$`)), page.getByRole('button', { name: 'Rebuild', exact: true }).click()]);
		await waitForDraft(page);
		const v2 = page.url();

		await page.goto(`${v2}/diff`);
		await page.getByTestId('diff-training').filter({ hasText: 'cuvette window smudged' }).waitFor({ timeout: 15_000 });
		await page.getByTestId('diff-training').filter({ hasText: 'sample-preparation' }).waitFor({ timeout: 15_000 });
		await page.getByTestId('diff-training').filter({ hasText: 'Excluded (2)' }).waitFor({ timeout: 15_000 });

		// The builder (a chemometrician) cannot reach the approval, neither page nor API.
		expect((await page.goto(`${v2}/approve`))?.status()).toBe(403);
		const api = await chemist.request.post(`/api/v1/models/${code}@3/approve`, { data: { password: 'demo-lotgate', meaning: 'approved for screening', reason: 'mine' } });
		expect(api.status()).toBe(403);
		await chemist.close();

		// QA approves v1, then v2: v1 is retired and stays readable.
		const qa = await newContext(browser);
		const qaPage = await qa.newPage();
		await signIn(qaPage, 'qa@demo.test');
		await approveAs(qaPage, v1, 'Challenge set rejected; genuine test spectra accepted');
		await qaPage.locator('h1 [data-state=\"approved\"]').waitFor({ timeout: 15_000 });
		await approveAs(qaPage, v2, 'Two smudged-cuvette spectra removed');
		await qaPage.getByTestId('approval').filter({ hasText: 'approved for screening' }).waitFor({ timeout: 15_000 });
		await qaPage.goto(v1);
		await qaPage.locator('h1 [data-state=\"retired\"]').waitFor({ timeout: 15_000 });
		const artefact = await qa.request.get(`/api/v1/models/${code}/artefact`);
		expect(artefact.status()).toBe(200);
		expect((await artefact.json()).meta.version).toBe('3');
		await qa.close();
	});
});
