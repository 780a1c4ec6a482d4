// Intake in the browser: pick and drop files, see the preview and the check's error before upload, then the server's answer.
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { baseUrl, launchBrowser, newContext, signIn } from '../support/browser';
import { jcampFile, truncatedJcamp } from '../support/intake-files';
import { unique } from '../support/factories';

let browser: Browser;
beforeAll(async () => {
	browser = await launchBrowser();
});
afterAll(async () => {
	await browser?.close();
});

const row = (page: Page, name: string) => page.locator(`[data-testid="upload-row"][data-file="${name}"]`);

/** A real drop: a DataTransfer holding the file, dispatched on the drop zone as the browser would after a drag. */
async function dropFile(page: Page, name: string, bytes: Uint8Array) {
	await page.getByTestId('upload-dropzone').evaluate(
		(zone, { name, data }) => {
			const dt = new DataTransfer();
			dt.items.add(new File([new Uint8Array(data)], name, { type: 'chemical/x-jcamp-dx' }));
			zone.dispatchEvent(new DragEvent('dragenter', { dataTransfer: dt, bubbles: true, cancelable: true }));
			zone.dispatchEvent(new DragEvent('dragover', { dataTransfer: dt, bubbles: true, cancelable: true }));
			zone.dispatchEvent(new DragEvent('drop', { dataTransfer: dt, bubbles: true, cancelable: true }));
		},
		{ name, data: Array.from(bytes) }
	);
}

describe('spectrum intake page', () => {
	it('previews a good file and shows a bad file’s error before upload, then stores only the good one; a second upload is refused', async () => {
		const context = await newContext(browser);
		const page = await context.newPage();
		await signIn(page, 'technician@demo.test');
		await page.goto('/intake');
		await expect(page.getByRole('heading', { name: 'Spectrum intake' }).isVisible()).resolves.toBe(true);

		const good = `${unique('good')}.jdx`;
		const goodBytes = jcampFile(2000);
		await page.getByTestId('upload-input').setInputFiles({ name: good, mimeType: 'chemical/x-jcamp-dx', buffer: Buffer.from(goodBytes) });
		await row(page, good).and(page.locator('[data-status="ready"]')).waitFor();
		await row(page, good).getByTestId('spectrum-preview').locator('canvas').waitFor();
		await expect(row(page, good).textContent()).resolves.toContain('2000 points');

		const bad = `${unique('cut')}.jdx`;
		await dropFile(page, bad, truncatedJcamp());
		await row(page, bad).and(page.locator('[data-status="invalid"]')).waitFor();
		await expect(row(page, bad).getByTestId('upload-problem').textContent()).resolves.toMatch(/without ##END=/);

		await page.getByTestId('upload-start').click();
		await row(page, good).and(page.locator('[data-status="stored"]')).waitFor();
		await expect(row(page, good).getByTestId('upload-message').textContent()).resolves.toMatch(/stored as spectrum #\d+, 2000 points/);
		await expect(row(page, bad).getAttribute('data-status')).resolves.toBe('invalid');
		await page.getByTestId('intake-table').getByText(good).waitFor();

		// The same bytes again, dropped this time: the browser check passes, the server refuses and names the first record.
		await page.getByRole('button', { name: 'Clear stored' }).click();
		await dropFile(page, `again-${good}`, goodBytes);
		await row(page, `again-${good}`).and(page.locator('[data-status="ready"]')).waitFor();
		await page.getByTestId('upload-start').click();
		await row(page, `again-${good}`).and(page.locator('[data-status="refused"]')).waitFor();
		await expect(row(page, `again-${good}`).getByTestId('upload-message').textContent()).resolves.toMatch(new RegExp(`already stored .* as spectrum \\d+ \\("${good.replace('.', '\\.')}"`));
		await context.close();
	});

	it('lets an admin create an instrument token that is shown once and works, and refuses it after revocation', async () => {
		const context = await newContext(browser);
		const page = await context.newPage();
		await signIn(page, 'admin@demo.test');
		await page.goto('/admin/instruments');
		const name = unique('E2E').toUpperCase();
		await page.getByLabel('Name').fill(name);
		await page.getByLabel('Serial number').fill('SN-1');
		await page.getByLabel('Qualification due').fill(`${new Date().getFullYear() + 1}-06-30`);
		await page.getByRole('button', { name: 'Register' }).click();
		const tableRow = page.getByTestId('instruments-table').locator('tr', { hasText: name });
		await tableRow.waitFor();
		await tableRow.getByRole('button', { name: 'Manage' }).click();
		await page.getByLabel('Label').fill('bay 2 PC');
		await page.getByRole('button', { name: 'Create token' }).click();
		const token = (await page.getByTestId('new-token-value').textContent())!.trim();
		expect(token).toMatch(/^lgt_/);

		const post = (t: string) => {
			const form = new FormData();
			form.append('file', new Blob([jcampFile() as BlobPart]), `${unique('tok')}.jdx`);
			return fetch(`${baseUrl()}/api/v1/spectra`, { method: 'POST', body: form, headers: { authorization: `Bearer ${t}` } });
		};
		expect((await post(token)).status).toBe(201);
		expect((await post(`${token}x`)).status).toBe(401);

		// Shown once: after a reload only the prefix is listed.
		await page.goto('/admin/instruments');
		await expect(page.content()).resolves.not.toContain(token);
		const again = page.getByTestId('instruments-table').locator('tr', { hasText: name });
		await again.getByRole('button', { name: 'Manage' }).click();
		await page.getByLabel('Reason').last().fill('PC replaced');
		await page.getByRole('button', { name: 'Revoke' }).click();
		await page.getByText(/revoked \d{4}-\d{2}-\d{2}/).waitFor();
		expect((await post(token)).status).toBe(401);
		await context.close();
	});
});
