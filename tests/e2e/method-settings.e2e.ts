// Browser (issue 12 §1 and §3): the material's method settings a chemometrician keeps and QA approves.
// - The declared axis on the material page, and the change form (a reason is required; audited through the service).
// - The version page names the training spectra left out for not covering the declared axis (figures.axis.excluded).
// - Acceptance criteria: the chemometrician proposes a revision on the criteria page, a QA manager approves it with a
//   signature, and the page shows the revision in force.
// Screenshots at desktop, tablet and phone widths. Spectra: the invented library fixtures (wiring only, never evidence).
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DEMO_PASSWORD, launchBrowser, newContext, signIn } from '../support/browser';
import { axis as gridOf, rng, spectrum } from '../support/library-fixtures';
import { shoot } from '../support/screens';

let browser: Browser;
beforeAll(async () => {
	browser = await launchBrowser();
});
afterAll(async () => {
	await browser?.close();
});

const code = `E2S-${Math.random().toString(36).slice(2, 7).toUpperCase()}`;
const csv = (x: number[], rows: { id: string; y: number[] }[]) =>
	Buffer.from(`id,class,role,supplier_lot,${x.map((v) => v.toFixed(3)).join(',')}\n${rows.map((r, i) => `${r.id},genuine,training,L${i % 4},${r.y.map((v) => v.toFixed(6)).join(',')}`).join('\n')}\n`);

async function as(email: string): Promise<{ context: BrowserContext; page: Page }> {
	const context = await newContext(browser);
	const page = await context.newPage();
	await signIn(page, email);
	return { context, page };
}

describe('method settings in the browser', () => {
	it('declared axis and its change form; excluded short spectra on the version page; acceptance criteria proposed and approved', { timeout: 300_000 }, async () => {
		const { context: chemistCtx, page } = await as('chemist@demo.test');
		const errors: string[] = [];
		page.on('pageerror', (e) => errors.push(e.message));
		const api = chemistCtx.request;
		expect((await api.post('/api/v1/materials', { data: { code, name: 'E2E method settings', technique: 'NIR', axis: { unit: 'nm', from: 1100, to: 2498, step: 2 } } })).status()).toBe(201);
		expect((await api.post(`/api/v1/materials/${code}/classes`, { data: { name: 'genuine', kind: 'genuine', description: 'genuine' } })).status()).toBe(201);
		const x = gridOf(700, 1100, 2498);
		const random = rng(4242);
		const full = await api.post(`/api/v1/materials/${code}/library`, { multipart: { file: { name: 'full.csv', mimeType: 'text/csv', buffer: csv(x, Array.from({ length: 20 }, (_, i) => ({ id: `g${i}`, y: spectrum('genuine', x, random) }))) }, classColumn: 'class' } });
		expect(full.status(), await full.text()).toBe(201);
		const shortX = x.filter((v) => v >= 1300 && v <= 2400);
		const short = await api.post(`/api/v1/materials/${code}/library`, { multipart: { file: { name: 'short.csv', mimeType: 'text/csv', buffer: csv(shortX, [{ id: 'short-1', y: spectrum('genuine', shortX, random) }]) }, classColumn: 'class' } });
		expect(short.status(), await short.text()).toBe(201);
		const shortEntry = ((await short.json()) as { entries: { id: number }[]; outsideAxis: { entryId: number }[] }).outsideAxis[0].entryId;

		// The version page names the spectrum the build left out, with the reason.
		const build = await api.post(`/api/v1/materials/${code}/models`, { data: { recipe: 'center', components: 2, familyComponents: 2, folds: 5 } });
		expect(build.status(), await build.text()).toBe(201);
		const { id } = (await build.json()) as { id: number };
		await expect.poll(async () => ((await (await api.get(`/api/v1/models/${id}`)).json()) as { state: string }).state, { timeout: 180_000, interval: 2000 }).toMatch(/draft|failed/);
		await page.goto(`/materials/${code}/versions/1`);
		const summary = page.getByTestId('axis-summary');
		expect(await summary.textContent()).toContain('Built on 1100–2498 nm every 2 nm');
		expect(await summary.getByTestId('axis-excluded-count').textContent()).toContain('1 training spectrum was left out');
		expect(await summary.locator(`[data-entry="${shortEntry}"]`).textContent()).toContain('does not cover the declared axis 1100–2498 nm every 2: missing 1100–1300 and 2400–2498 nm');
		await summary.scrollIntoViewIfNeeded();
		await shoot(page, 'settings-version-axis', { fullPage: false });

		// The material page shows the declared axis; the change form refuses a missing reason beside the field.
		await page.goto(`/materials/${code}`);
		const panel = page.getByTestId('axis-panel');
		expect(await panel.getByTestId('declared-axis').textContent()).toContain('1100–2498 nm every 2 nm');
		await panel.locator('summary', { hasText: 'Change the axis' }).click();
		const form = panel.getByTestId('axis-form');
		await form.getByLabel('From').fill('1150');
		await form.getByRole('button', { name: 'Save the axis' }).click();
		await expect.poll(() => form.locator('.field-error').first().textContent()).toContain('needs a reason');
		expect(await panel.getByTestId('declared-axis').textContent()).toContain('1100–2498 nm every 2 nm');
		await form.getByLabel('From').fill('1150');
		await form.getByLabel('Reason for the change (required)').fill('probe window below 1150 nm is noisy on the new dock');
		await form.getByRole('button', { name: 'Save the axis' }).click();
		await expect.poll(() => panel.getByTestId('axis-status').textContent().catch(() => '')).toContain('Axis set to 1150–2498 nm every 2');
		await expect.poll(() => panel.getByTestId('declared-axis').textContent()).toContain('1150–2498 nm every 2 nm');
		expect(await panel.textContent()).toContain('probe window below 1150 nm is noisy on the new dock');
		const axisApi = (await (await api.get(`/api/v1/materials/${code}/axis`)).json()) as { axis: { from: number; source: string } };
		expect(axisApi.axis).toMatchObject({ from: 1150, source: 'declared' });
		await shoot(page, 'settings-material-axis');

		// Acceptance criteria: the chemometrician proposes a revision.
		await page.getByTestId('criteria-link').click();
		await page.waitForURL(new RegExp(`/materials/${code}/criteria$`));
		expect(await page.getByTestId('criteria-source').textContent()).toContain('The defaults');
		const propose = page.getByTestId('criteria-propose-form');
		await propose.getByLabel('Verdict-level sensitivity of genuine, at least').fill('0.3');
		await propose.getByLabel('Why the criteria change').fill('high-risk excipient: tighter evidence before approval');
		await propose.getByRole('button', { name: 'Propose for QA approval' }).click();
		await expect.poll(() => propose.locator('.field-error').first().textContent()).toContain('sensitivityMin must be between 0.5 and 1');
		await propose.getByLabel('Verdict-level sensitivity of genuine, at least').fill('0.95');
		await propose.getByLabel('Review period of an approved version (months)').fill('6');
		await propose.getByRole('button', { name: 'Propose for QA approval' }).click();
		await expect.poll(() => page.getByTestId('criteria-status').textContent().catch(() => '')).toContain('Revision 1 proposed');
		const proposed = page.getByTestId('criteria-proposed');
		expect(await proposed.locator('[data-criterion="sensitivityMin"]').getAttribute('data-changed')).toBe('yes');
		expect(await proposed.locator('[data-criterion="reviewMonths"]').textContent()).toContain('6');
		expect(await proposed.locator('[data-criterion="challengeMin"]').getAttribute('data-changed')).toBe('no');
		// the proposer cannot decide (and a chemometrician holds no decision form at all)
		expect(await page.getByTestId('criteria-decide-form').count()).toBe(0);
		await shoot(page, 'settings-criteria-proposed');

		// A QA manager approves it with a signature; a missing decision is refused first.
		const { page: qa } = await as('qa@demo.test');
		await qa.goto(`/materials/${code}/criteria`);
		const decide = qa.getByTestId('criteria-decide-form');
		await decide.getByLabel('Reason for your decision').fill('tighter criteria agreed at the method review meeting');
		await decide.getByLabel('Your password (signs the decision)').fill(DEMO_PASSWORD);
		await decide.getByRole('button', { name: 'Sign the decision' }).click();
		await expect.poll(() => decide.locator('.field-error').first().textContent()).toContain('Choose approve or refuse');
		await decide.getByLabel(/approve: revision 1 applies/).check();
		expect(await decide.textContent()).toContain('acceptance criteria approved');
		await decide.getByLabel('Reason for your decision').fill('tighter criteria agreed at the method review meeting');
		await decide.getByLabel('Your password (signs the decision)').fill(DEMO_PASSWORD);
		await decide.getByRole('button', { name: 'Sign the decision' }).click();
		await expect.poll(() => qa.getByTestId('criteria-status').textContent().catch(() => ''), { timeout: 20_000 }).toContain('Revision 1 approved');
		await expect.poll(() => qa.getByTestId('criteria-source').textContent()).toContain('Revision 1, approved by');
		expect(await qa.getByTestId('criteria-effective').locator('[data-criterion="sensitivityMin"]').textContent()).toContain('95.0 %');
		expect(await qa.getByTestId('criteria-revisions').locator('[data-revision="1"]').getAttribute('data-state')).toBe('approved');
		const shots = await shoot(qa, 'settings-criteria-approved');
		expect(Object.values(shots).every((px) => px === 0), `criteria page sideways overflow ${JSON.stringify(shots)}`).toBe(true);
		const apiView = (await (await api.get(`/api/v1/materials/${code}/acceptance-criteria`)).json()) as { effective: { revision: number; criteria: { sensitivityMin: number; reviewMonths: number } } };
		expect(apiView.effective).toMatchObject({ revision: 1, criteria: { sensitivityMin: 0.95, reviewMonths: 6 } });
		expect(errors).toEqual([]);
	});
});
