import { execFileSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pg from 'pg';
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { demoScenario } from '../../src/lib/demo';
import { newToken } from '../../src/lib/server/tokens';
import { SCREENING_CAUTION } from '../../src/lib/caution';
import { baseUrl, launchBrowser, newContext, sessionCookie, signIn } from '../support/browser';
import { forLot } from '../support/relabel';

// The demo seed received every demo lot and uploaded its scans as the technician; these tests read them back
// through the browser and the API, and add lots and scans of their own.
const scenario = demoScenario();
const spec = (key: string) => scenario.lots.find((l) => l.lotKey === key)!;

let browser: Browser;
let db: pg.Client;
let techCookie: string;
const internalOf = new Map<string, string>();

beforeAll(async () => {
	browser = await launchBrowser();
	db = new pg.Client({ connectionString: inject('databaseUrl') });
	await db.connect();
	for (const l of scenario.lots) {
		const r = await db.query('SELECT internal_lot FROM lots WHERE supplier_lot = $1', [l.supplierLot]);
		if (r.rows[0]) internalOf.set(l.lotKey, r.rows[0].internal_lot);
	}
	techCookie = await sessionCookie(browser, 'technician@demo.test');
});
afterAll(async () => {
	await db?.end();
	await browser?.close();
});

async function lotJson(internal: string, cookie = techCookie) {
	const res = await fetch(`${baseUrl()}/api/v1/lots/${internal}`, { headers: { cookie } });
	expect(res.status).toBe(200);
	return res.json();
}

describe('demo lots on the lot page', () => {
	it('the seed received every demo lot', () => {
		expect([...internalOf.keys()].sort()).toEqual(scenario.lots.map((l) => l.lotKey).sort());
	});

	it('lac-good meets identity, with verdict words, the caution and the evidence plots', async () => {
		const context = await newContext(browser);
		const page = await context.newPage();
		await signIn(page, 'qa@demo.test');
		await page.goto(`/lots/${internalOf.get('lac-good')}`);
		await expect(page.getByTestId('lot-status').textContent()).resolves.toContain('meets identity');
		const rows = page.getByTestId('containers-table').locator('tbody tr');
		await expect(rows.count()).resolves.toBe(spec('lac-good').files.length);
		await expect(rows.first().textContent()).resolves.toContain('genuine');
		await expect(page.getByTestId('caution').textContent()).resolves.toContain(SCREENING_CAUTION);
		await expect(page.locator('canvas').count()).resolves.toBeGreaterThanOrEqual(3);
		await context.close();
	});

	it('lac-diluted fails identity: container 4 is suspect diluted-starch; brushing a row selects it in the plots', async () => {
		const context = await newContext(browser);
		const page = await context.newPage();
		await signIn(page, 'technician@demo.test');
		await page.goto(`/lots/${internalOf.get('lac-diluted')}`);
		await expect(page.getByTestId('lot-status').textContent()).resolves.toContain('fails identity, quarantine recommended');
		const row = page.locator('tr[data-container="4"]');
		await expect(row.getAttribute('data-verdict')).resolves.toBe('suspect');
		await expect(row.textContent()).resolves.toContain('diluted-starch');
		await expect(page.getByTestId('supplier-flag').textContent()).resolves.toMatch(/on watch/);
		await row.locator('input[type=checkbox]').check();
		await expect(page.getByTestId('selection-count').textContent()).resolves.toContain('1 selected');
		await expect(page.getByTestId('selected-scan').textContent()).resolves.toContain('container C04');
		await page.getByTestId('contributions').waitFor();
		await context.close();
	});

	it('lac-talc (unseen adulterant) is never genuine; lac-wrong is not this material; lac-corrupt is unusable', async () => {
		const talc = await lotJson(internalOf.get('lac-talc')!);
		expect(['unknown', 'not-this-material']).toContain(talc.containers[1].verdict);
		expect(talc.supplierFlag).toBe('blocked');
		const wrong = await lotJson(internalOf.get('lac-wrong')!);
		expect(wrong.scans.every((s: { verdict: string }) => s.verdict === 'not-this-material')).toBe(true);
		const broken = await lotJson(internalOf.get('lac-corrupt')!);
		const c2 = broken.scans.find((s: { container: number }) => s.container === 2);
		expect(c2).toMatchObject({ verdict: 'unusable', fileName: 'lac-corrupt-C02.jdx' });
		expect(c2.reason).toMatch(/could not be read/);
		expect(broken.status).toBe('awaiting-scans');
		const good = await lotJson(internalOf.get('lac-good')!);
		expect(good.scans[0]).toMatchObject({ fileName: expect.stringMatching(/\.jdx$/), title: expect.any(String), modelVersion: { label: expect.stringMatching(/^LAC-200 v\d+/) } });
	});

	it('the stored statistics equal `lotgate screen` on the same artefact and file', async () => {
		const lot = await lotJson(internalOf.get('lac-diluted')!);
		const scan = lot.scans.find((s: { container: number }) => s.container === 4);
		const art = await db.query('SELECT artefact FROM model_versions WHERE id = $1', [scan.modelVersion.id]);
		const { serializeArtefact } = await import('../../src/lib/analysis');
		const dir = mkdtempSync(join(tmpdir(), 'lotgate-e2e-cli-'));
		writeFileSync(join(dir, 'model.json'), serializeArtefact(art.rows[0].artefact));
		const file = spec('lac-diluted').files.find((f) => f.container === 4)!;
		writeFileSync(join(dir, file.name), file.bytes);
		const out = JSON.parse(execFileSync('node', ['bin/lotgate.js', 'screen', '--model', join(dir, 'model.json'), '--input', join(dir, file.name), '--json'], { encoding: 'utf8' }));
		const cli = out.results[0];
		expect(cli.verdict).toBe(scan.verdict);
		expect(scan.statistics.family.t2).toBe(cli.family.t2);
		expect(scan.statistics.family.spe).toBe(cli.family.spe);
		for (const [name, s] of Object.entries(cli.classes as Record<string, { c: number; cCrit: number }>)) {
			expect(scan.statistics.classes[name].c).toBe(s.c);
			expect(scan.statistics.classes[name].cCrit).toBe(s.cCrit);
		}
	});
});

describe('receiving and scanning', () => {
	it('receives a lot in the browser with the plan shown live, then uploads a scan for a container', async () => {
		const context = await newContext(browser);
		const page = await context.newPage();
		await signIn(page, 'technician@demo.test');
		await page.goto('/lots/new');
		await page.locator('select[name=material]').selectOption('LAC-200');
		await page.locator('select[name=supplier]').selectOption('NORDVIK');
		const supplierLot = `E2E-${Date.now()}`;
		await page.getByLabel("Supplier's lot number").fill(supplierLot);
		await page.getByLabel('Containers received (N)').fill('40');
		await page.locator('select[name=plan]').selectOption('n');
		await expect(page.getByTestId('plan-preview').textContent()).resolves.toContain('7 of 40');
		await page.getByLabel('Justification for the reduced plan').fill('Qualified supplier with a validated supply chain');
		await page.getByRole('button', { name: 'Receive the lot' }).click();
		await page.waitForURL(/\/lots\/QL-/);
		await expect(page.getByTestId('plan').textContent()).resolves.toContain('n = round(1 + √40)');
		const good = spec('lac-good').files[0];
		const container = await page.locator('select[name=container] option').first().getAttribute('value');
		await page.locator('input[type=file][name=file]').setInputFiles({ name: 'e2e-scan.jdx', mimeType: 'chemical/x-jcamp-dx', buffer: Buffer.from(forLot(good.bytes, { supplierLot, container: Number(container) })) });
		await page.getByRole('button', { name: 'Upload and screen' }).click();
		await expect(page.getByTestId('scan-added').textContent()).resolves.toContain('genuine');
		await expect(page.locator(`tr[data-container="${container}"]`).getAttribute('data-verdict')).resolves.toBe('genuine');
		await context.close();
	});

	it('uploads two container scans at once with the batch tool; both verdicts appear in the container table', async () => {
		const batchLot = `BATCH-${Date.now()}`;
		const created = await fetch(`${baseUrl()}/api/v1/lots`, {
			method: 'POST',
			headers: { cookie: techCookie, 'content-type': 'application/json' },
			body: JSON.stringify({ material: 'LAC-200', supplier: 'NORDVIK', supplierLot: batchLot, containers: 2, receivedAt: new Date().toISOString().slice(0, 10) })
		});
		expect(created.status).toBe(201);
		const lot = await created.json();
		// The demo file names carry the container (lac-good-C01.jdx), which the uploader maps by its default pattern.
		const files = spec('lac-good').files.filter((f) => f.container === 1 || f.container === 2);
		expect(files.map((f) => f.name).sort()).toEqual(['lac-good-C01.jdx', 'lac-good-C02.jdx']);
		const context = await newContext(browser);
		const page = await context.newPage();
		await signIn(page, 'technician@demo.test');
		await page.goto(`/lots/${lot.internalLot}`);
		const batch = page.getByTestId('scan-batch');
		await batch.getByTestId('upload-input').setInputFiles(files.map((f) => ({ name: f.name, mimeType: 'chemical/x-jcamp-dx', buffer: Buffer.from(forLot(f.bytes, { supplierLot: batchLot, container: f.container })) })));
		for (const f of files) await batch.locator(`[data-testid=upload-row][data-file="${f.name}"][data-status="ready"]`).waitFor();
		await expect(batch.getByLabel('Container for lac-good-C02.jdx').inputValue()).resolves.toBe('2');
		await batch.getByTestId('upload-start').click();
		for (const f of files) await batch.locator(`[data-testid=upload-row][data-file="${f.name}"][data-status="stored"]`).waitFor();
		for (const n of [1, 2]) await page.locator(`tr[data-container="${n}"][data-verdict="genuine"]`).waitFor();
		await expect(batch.locator('[data-file="lac-good-C01.jdx"]').getByTestId('upload-message').textContent()).resolves.toContain('container C01: genuine');
		const stored = await lotJson(lot.internalLot);
		expect(stored.scans.map((s: { container: number; fileName: string }) => `${s.container}:${s.fileName}`).sort()).toEqual(['1:lac-good-C01.jdx', '2:lac-good-C02.jdx']);
		await context.close();
	});

	it('POST /api/v1/lots answers 201 with containers 1..N; GET lists with filters', async () => {
		const res = await fetch(`${baseUrl()}/api/v1/lots`, {
			method: 'POST',
			headers: { cookie: techCookie, 'content-type': 'application/json', origin: baseUrl() },
			body: JSON.stringify({ material: 'LAC-200', supplier: 'NORDVIK', supplierLot: `API-${Date.now()}`, containers: 3, receivedAt: new Date().toISOString().slice(0, 10) })
		});
		expect(res.status).toBe(201);
		const lot = await res.json();
		expect(lot.containers.map((c: { number: number }) => c.number)).toEqual([1, 2, 3]);
		const list = await (await fetch(`${baseUrl()}/api/v1/lots?status=awaiting-scans&material=LAC-200&page=1`, { headers: { cookie: techCookie } })).json();
		expect(list.rows.some((r: { id: number }) => r.id === lot.id)).toBe(true);
		const buyer = await sessionCookie(browser, 'buyer@demo.test');
		const refused = await fetch(`${baseUrl()}/api/v1/lots`, { method: 'POST', headers: { cookie: buyer, 'content-type': 'application/json' }, body: '{}' });
		expect(refused.status).toBe(403);
		expect((await fetch(`${baseUrl()}/api/v1/lots/${lot.id}`, { headers: { cookie: buyer } })).status).toBe(200);
	});

	it('an instrument posts scans with its token; a container outside the plan is a 400 naming the plan', async () => {
		const tokLot = `TOK-${Date.now()}`;
		const created = await fetch(`${baseUrl()}/api/v1/lots`, {
			method: 'POST',
			headers: { cookie: techCookie, 'content-type': 'application/json' },
			body: JSON.stringify({ material: 'LAC-200', supplier: 'NORDVIK', supplierLot: tokLot, containers: 2, receivedAt: new Date().toISOString().slice(0, 10) })
		});
		const lot = await created.json();
		const { token, prefix, hash } = newToken();
		const inst = await db.query("SELECT id FROM instruments WHERE name = 'NIR-DOCK-1'");
		const admin = await db.query("SELECT id FROM users WHERE email = 'admin@demo.test'");
		await db.query('INSERT INTO instrument_tokens (instrument_id, label, prefix, token_hash, created_by) VALUES ($1, $2, $3, $4, $5)', [inst.rows[0].id, 'e2e', prefix, hash, admin.rows[0].id]);
		const post = (container: string, file: { name: string; bytes: Uint8Array }, auth = `Bearer ${token}`) => {
			const body = new FormData();
			body.set('container', container);
			body.set('file', new Blob([Buffer.from(file.bytes)]), file.name);
			return fetch(`${baseUrl()}/api/v1/lots/${lot.id}/scans`, { method: 'POST', headers: { authorization: auth }, body });
		};
		const files = spec('lac-good').files.map((f, i) => ({ ...f, bytes: forLot(f.bytes, { supplierLot: tokLot, container: i === 1 ? 1 : f.container }) }));
		const ok = await post('1', files[1]);
		expect(ok.status).toBe(201);
		expect(await ok.json()).toMatchObject({ verdict: 'genuine', container: 1 });
		const outside = await post('7', files[2]);
		expect(outside.status).toBe(400);
		expect((await outside.json()).error).toMatchObject({ field: 'container', message: expect.stringContaining(`the sampling plan of ${lot.internalLot}`) });
		expect((await post('2', files[2], 'Bearer lgt_nope_nope')).status).toBe(401);
		const stored = await lotJson(lot.internalLot);
		expect(stored.scans[0].instrument).toBe('NIR-DOCK-1');
	});
});
