// Browser (issue 12 §1, periodic review): the demo's approved lactose version is put past its review-by date; the
// chemometrician's and QA's home pages list it as overdue; a lot screened now keeps screening, and its verdict reads
// "model review overdue" on the lot page and in the API field; the chemometrician records the review on the version
// page with a signature, after which the version is in time and off the list. Screenshots at desktop, tablet and phone
// widths. The review-by date is put back at the end (the browser tests share the demo database, one file at a time).
import { randomBytes } from 'node:crypto';
import pg from 'pg';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { demoScenario } from '../../src/lib/demo';
import { baseUrl, DEMO_PASSWORD, launchBrowser, newContext, sessionCookie, signIn } from '../support/browser';
import { forLot } from '../support/relabel';
import { shoot } from '../support/screens';

let browser: Browser;
let db: pg.Client;
const cookies: Record<string, string> = {};
let version: { id: number; version: number; reviewBy: string | null } | null = null;

beforeAll(async () => {
	browser = await launchBrowser();
	for (const who of ['technician', 'chemist', 'qa']) cookies[who] = await sessionCookie(browser, `${who}@demo.test`);
	db = new pg.Client({ connectionString: inject('databaseUrl') });
	await db.connect();
});
afterAll(async () => {
	if (version) await db.query('UPDATE model_versions SET review_by = $1 WHERE id = $2', [version.reviewBy, version.id]);
	await db?.end();
	await browser?.close();
});

const api = (who: string, path: string, init: RequestInit = {}) =>
	fetch(`${baseUrl()}/api/v1${path}`, { ...init, headers: { cookie: cookies[who], ...(init.body && typeof init.body === 'string' ? { 'content-type': 'application/json' } : {}), ...(init.headers ?? {}) } });

async function as(email: string): Promise<Page> {
	const page = await (await newContext(browser)).newPage();
	await signIn(page, email);
	return page;
}

const day = (offset: number) => new Date(Date.now() + offset * 86_400_000).toISOString().slice(0, 10);

describe('periodic model review', () => {
	it('overdue on both home pages, noted on the verdict, recorded on the version page', { timeout: 240_000 }, async () => {
		const { rows } = await db.query<{ id: number; version: number; review_by: string | null }>(
			"SELECT v.id, v.version, v.review_by::text AS review_by FROM model_versions v JOIN materials m ON m.id = v.material_id WHERE m.code = 'LAC-200' AND v.state = 'approved'"
		);
		expect(rows).toHaveLength(1);
		version = { id: Number(rows[0].id), version: rows[0].version, reviewBy: rows[0].review_by };
		const label = `LAC-200 v${version.version}`;
		await db.query('UPDATE model_versions SET review_by = $1 WHERE id = $2', [day(-4), version.id]);

		// The API states it (exact fields: reviewBy, review.state, review.daysLeft).
		const state = (await (await api('chemist', `/models/${version.id}/reviews`)).json()) as { reviewBy: string; review: { state: string; daysLeft: number }; reviews: unknown[] };
		expect(state).toMatchObject({ reviewBy: day(-4), review: { state: 'overdue', daysLeft: -4 } });

		// Both home pages list it as overdue.
		const chemist = await as('chemist@demo.test');
		await chemist.goto('/');
		const chemList = chemist.getByTestId('queue-reviews-overdue');
		await expect.poll(() => chemList.textContent()).toContain(label);
		expect(await chemList.textContent()).toContain(`review overdue: due ${day(-4)} (4 days ago)`);
		const homeShots = await shoot(chemist, 'review-home-chemist');
		expect(Object.values(homeShots).every((px) => px === 0), `home page sideways overflow ${JSON.stringify(homeShots)}`).toBe(true);
		const qa = await as('qa@demo.test');
		await qa.goto('/');
		await expect.poll(() => qa.getByTestId('queue-reviews-overdue-qa').textContent()).toContain(label);
		await shoot(qa, 'review-home-qa');

		// A lot screened now: the version keeps screening, the verdict carries the note (API field and lot page).
		const spec = demoScenario().lots.find((l) => l.lotKey === 'lac-good')!;
		const supplierLot = `REV-${randomBytes(3).toString('hex')}`;
		const res = await api('technician', '/lots', { method: 'POST', body: JSON.stringify({ material: spec.material, supplier: spec.supplier, supplierLot, containers: 2, receivedAt: day(0) }) });
		expect(res.status, await res.clone().text()).toBe(201);
		const lot = (await res.json()) as { id: number; internalLot: string };
		for (const f of spec.files.slice(0, 2)) {
			const form = new FormData();
			form.set('file', new Blob([Buffer.from(forLot(f.bytes, { supplierLot, container: f.container }))]), f.name);
			form.set('container', String(f.container));
			const up = await api('technician', `/lots/${lot.id}/scans`, { method: 'POST', body: form });
			expect(up.status, await up.clone().text()).toBe(201);
			expect(await up.json()).toMatchObject({ verdict: 'genuine', modelReviewOverdue: true });
		}
		const lotJson = (await (await api('qa', `/lots/${lot.id}`)).json()) as { containers: { scans: { modelReviewOverdue: boolean; verdict: string }[] }[] };
		expect(lotJson.containers.flatMap((c) => c.scans.map((s) => [s.verdict, s.modelReviewOverdue]))).toEqual([
			['genuine', true],
			['genuine', true]
		]);
		await qa.goto(`/lots/${lot.internalLot}`);
		const notes = qa.getByTestId('review-overdue');
		await expect.poll(() => notes.count()).toBe(2);
		expect(await notes.first().textContent()).toContain('model review overdue');
		expect(await notes.first().getAttribute('title')).toBe(`${label} was past its review-by date when it screened this container`);
		const lotShots = await shoot(qa, 'review-lot-overdue');
		console.log(`lot page sideways overflow (px): ${JSON.stringify(lotShots)}`);

		// The chemometrician records the review on the version page: a missing outcome is refused beside the field.
		await chemist.goto(`/materials/LAC-200/versions/${version.version}#review`);
		const panel = chemist.getByTestId('review-panel');
		expect(await panel.getAttribute('data-review-state')).toBe('overdue');
		expect(await panel.getByTestId('review-state').textContent()).toContain(`review overdue: due ${day(-4)} (4 days ago)`);
		const form = chemist.getByTestId('review-form');
		await form.getByLabel('What the review found').fill('Verdicts of the last 12 months reviewed: no unexplained failure; instrument checks in limits.');
		await form.getByLabel('Your password (signs the review)').fill(DEMO_PASSWORD);
		await form.getByRole('button', { name: 'Sign and record the review' }).click();
		await expect.poll(() => form.locator('.field-error').first().textContent()).toContain('Choose the outcome of the review');
		await form.getByLabel(/fit for use: screening/).check();
		await form.getByLabel('What the review found').fill('Verdicts of the last 12 months reviewed: no unexplained failure; instrument checks in limits.');
		await form.getByLabel('Your password (signs the review)').fill(DEMO_PASSWORD);
		await form.getByRole('button', { name: 'Sign and record the review' }).click();
		await expect.poll(() => chemist.getByTestId('review-done').textContent().catch(() => ''), { timeout: 20_000 }).toContain('Review recorded (fit for use)');
		await expect.poll(() => panel.getAttribute('data-review-state')).toBe('in-time');
		const history = chemist.getByTestId('review-history');
		expect(await history.locator('li').first().getAttribute('data-outcome')).toBe('fit-for-use');
		expect(await history.locator('li').first().textContent()).toContain('periodic review recorded');
		await panel.scrollIntoViewIfNeeded();
		const versionShots = await shoot(chemist, 'review-version-page');
		console.log(`version page sideways overflow (px): ${JSON.stringify(versionShots)}`);

		// Off the overdue list; the verdicts given while overdue keep their note.
		await chemist.goto('/');
		expect(await chemist.getByTestId('queue-reviews-overdue').textContent()).not.toContain(label);
		const after = (await (await api('qa', `/lots/${lot.id}`)).json()) as { containers: { scans: { modelReviewOverdue: boolean }[] }[] };
		expect(after.containers.flatMap((c) => c.scans.map((s) => s.modelReviewOverdue))).toEqual([true, true]);
	});
});
