// Issue 10 §4: bad query parameters and unknown ids answer 400 or 404, never 500.
import { describe, expect, it, beforeAll, afterAll } from 'vitest';
import type { Actor } from '../../src/lib/server/services/actor';
import { makeUser } from '../support/factories';
import { call, type Handler } from '../support/http';
import { approvedMaterial, type LotFixture } from '../support/lot-fixtures';

let admin: Actor;
let fixture: LotFixture;
const figures = { tried: 0, fiveHundreds: 0 };

beforeAll(async () => {
	admin = (await makeUser(['admin', 'qa', 'procurement', 'chemometrician', 'technician'])).actor;
	fixture = await approvedMaterial({ points: 300, withModel: false });
});
afterAll(() => console.log(`[figures] bad inputs tried: ${figures.tried}, 5xx answers: ${figures.fiveHundreds}`));

/** A page load as a handler: what it returns is a 200, what it throws carries its status (error(404), redirect). */
const page = (load: (e: never) => unknown): Handler => async (e) => {
	await load(e as never);
	return new Response(null, { status: 200 });
};

interface Probe {
	name: string;
	route: () => Promise<Handler>;
	path: string;
	params?: Record<string, string>;
	method?: string;
	expect: number[];
}

const api = (m: () => Promise<{ GET?: unknown; POST?: unknown }>, method: 'GET' | 'POST' = 'GET') => async () => (await m())[method] as Handler;
const load = (m: () => Promise<{ load?: unknown }>) => async () => page((await m()).load as never);

const probes: Probe[] = [];
for (const p of ['Infinity', '1e20', 'abc', '-1', '0', '1.5', '']) {
	probes.push({ name: `/api/v1/suppliers?page=${p}`, route: api(() => import('../../src/routes/api/v1/suppliers/+server')), path: `/api/v1/suppliers?page=${encodeURIComponent(p)}`, expect: p === '' ? [200, 400] : [400] });
	probes.push({ name: `/api/v1/lots?page=${p}`, route: api(() => import('../../src/routes/api/v1/lots/+server')), path: `/api/v1/lots?page=${encodeURIComponent(p)}`, expect: p === '' ? [200, 400] : [400] });
}
for (const d of ['2024-02-30', '2024-13-01', 'yesterday']) {
	probes.push({ name: `/api/v1/lots?from=${d}`, route: api(() => import('../../src/routes/api/v1/lots/+server')), path: `/api/v1/lots?from=${d}`, expect: [400] });
}
for (const s of ['bogus', "'; DROP TABLE alerts; --"]) {
	probes.push({ name: `/api/v1/alerts?state=${s}`, route: api(() => import('../../src/routes/api/v1/alerts/+server')), path: `/api/v1/alerts?state=${encodeURIComponent(s)}`, expect: [400] });
	probes.push({ name: `/alerts?state=${s}`, route: load(() => import('../../src/routes/(app)/alerts/+page.server')), path: `/alerts?state=${encodeURIComponent(s)}`, expect: [400] });
}
for (const m of ['1.5', '0', '-3', 'abc', '1e9']) {
	probes.push({ name: `scorecard?months=${m}`, route: api(() => import('../../src/routes/api/v1/suppliers/[code]/scorecard/+server')), path: `/api/v1/suppliers/X/scorecard?months=${m}`, params: { code: '__fixture__' }, expect: [400] });
}
probes.push({ name: '/lots/999999', route: load(() => import('../../src/routes/(app)/lots/[id]/+page.server')), path: '/lots/999999', params: { id: '999999' }, expect: [404] });
probes.push({ name: '/api/v1/lots/999999', route: api(() => import('../../src/routes/api/v1/lots/[id]/+server')), path: '/api/v1/lots/999999', params: { id: '999999' }, expect: [404] });
probes.push({ name: '/materials/NOPE', route: load(() => import('../../src/routes/(app)/materials/[code]/+page.server')), path: '/materials/NOPE', params: { code: 'NOPE' }, expect: [404] });
probes.push({ name: '/suppliers/NOPE', route: load(() => import('../../src/routes/(app)/suppliers/[code]/+page.server')), path: '/suppliers/NOPE', params: { code: 'NOPE' }, expect: [404] });
probes.push({ name: '/lots?page=Infinity', route: load(() => import('../../src/routes/(app)/lots/+page.server')), path: '/lots?page=Infinity', expect: [200, 400] });

describe('bad parameters never answer 500', () => {
	for (const p of probes) {
		it(`${p.name} → ${p.expect.join(' or ')}`, async () => {
			figures.tried++;
			const params = Object.fromEntries(Object.entries(p.params ?? {}).map(([k, v]) => [k, v === '__fixture__' ? fixture.supplierCode : v]));
			let status: number;
			try {
				status = (await call(await p.route(), new Request(`http://127.0.0.1${p.path}`, { method: p.method ?? 'GET' }), params, admin)).status;
			} catch {
				status = 500;
			}
			if (status >= 500) figures.fiveHundreds++;
			expect(p.expect).toContain(status);
		});
	}

	it('POST /materials/NOPE-XYZ/build → 404', async () => {
		figures.tried++;
		const { actions } = await import('../../src/routes/(app)/materials/[code]/build/+page.server');
		const form = new FormData();
		form.set('recipe', 'snv,center');
		let status: number;
		try {
			const res = await call(async (e) => {
				const out = await (actions.default as (e: never) => Promise<{ status?: number } | undefined>)(e as never);
				return new Response(null, { status: (out as { status?: number })?.status ?? 200 });
			}, new Request('http://127.0.0.1/materials/NOPE-XYZ/build', { method: 'POST', body: form }), { code: 'NOPE-XYZ' }, admin);
			status = res.status;
		} catch {
			status = 500;
		}
		if (status >= 500) figures.fiveHundreds++;
		expect(status).toBe(404);
	});
});
