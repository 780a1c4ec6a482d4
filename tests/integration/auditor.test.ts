// The auditor role end to end in the handlers: every API handler that changes something refuses an auditor (403), every
// form action outside the auditor's own account refuses one, every read handler outside the admin area answers one,
// and the audit trail exports. The sweep covers every route file, so a new handler is checked without editing this test.
import { isHttpError, isRedirect, type RequestEvent } from '@sveltejs/kit';
import { beforeAll, describe, expect, it } from 'vitest';
import type { Actor } from '../../src/lib/server/services/actor';
import * as lots from '../../src/lib/server/services/lots';
import * as materials from '../../src/lib/server/services/materials';
import * as suppliers from '../../src/lib/server/services/suppliers';
import * as users from '../../src/lib/server/services/users';
import { makeUser, rootActor, unique } from '../support/factories';

type Module = Record<string, unknown>;
const apiRoutes = import.meta.glob<Module>('../../src/routes/api/v1/**/+server.ts');
const pageServers = import.meta.glob<Module>('../../src/routes/**/+page.server.ts');
const MUTATING = ['POST', 'PUT', 'PATCH', 'DELETE'];
const PARAMS = { id: '1', code: 'NOPE', version: '1', scanId: '1', tokenId: '1', index: '0' };

let auditor: Actor;
beforeAll(async () => {
	auditor = (await makeUser(['auditor'])).actor;
});

function event(actor: Actor, method: string, path: string, body?: BodyInit): RequestEvent {
	const url = new URL(`http://127.0.0.1${path}`);
	const headers: Record<string, string> = body === undefined || body instanceof FormData ? {} : { 'content-type': 'application/json' };
	return {
		request: new Request(url, { method, headers, body }),
		url,
		params: PARAMS,
		locals: { actor, user: { id: actor.id, name: actor.label, email: 'a@test.example', roles: actor.roles, mustChangePassword: false }, requestId: 'auditor-test', databaseFailed: false },
		route: { id: path },
		cookies: { get: () => undefined, getAll: () => [], set: () => {}, delete: () => {}, serialize: () => '' },
		getClientAddress: () => '127.0.0.1',
		setHeaders: () => {},
		fetch,
		isDataRequest: false,
		isSubRequest: false,
		platform: undefined
	} as unknown as RequestEvent;
}

/** A handler's status: its Response, or the HttpError/redirect it threw. */
async function statusOf(run: () => unknown): Promise<number> {
	try {
		const result = await run();
		return result instanceof Response ? result.status : 200;
	} catch (e) {
		if (isHttpError(e)) return e.status;
		if (isRedirect(e)) return e.status;
		if (e && typeof e === 'object' && 'status' in e && typeof e.status === 'number') return e.status;
		throw e;
	}
}

const routePath = (file: string, root: string) => file.slice(file.indexOf(root)).replace(/\/\+(server|page\.server)\.ts$/, '').replace('(app)', '').replace(/\/+/g, '/');

describe('auditor in every API handler', () => {
	it('is refused by every handler that changes something, before anything is read or written', async () => {
		const checked: string[] = [];
		for (const [file, load] of Object.entries(apiRoutes)) {
			const mod = await load();
			for (const method of MUTATING) {
				const fn = mod[method] as ((e: RequestEvent) => Promise<Response>) | undefined;
				if (!fn) continue;
				const path = routePath(file, 'api/v1');
				const status = await statusOf(() => fn(event(auditor, method, '/' + path, '{}')));
				expect(status, `${method} ${path}`).toBe(403);
				checked.push(`${method} ${path}`);
			}
		}
		expect(checked.length).toBeGreaterThan(20);
	});

	it('is answered by every reading handler outside the admin area (never 401/403)', async () => {
		let checked = 0;
		for (const [file, load] of Object.entries(apiRoutes)) {
			const fn = (await load()).GET as ((e: RequestEvent) => Promise<Response>) | undefined;
			if (!fn) continue;
			const path = routePath(file, 'api/v1');
			const status = await statusOf(() => fn(event(auditor, 'GET', '/' + path)));
			if (path.startsWith('api/v1/instruments')) expect(status, `GET ${path}`).toBe(403);
			else expect([401, 403], `GET ${path} answered ${status}`).not.toContain(status);
			checked++;
		}
		expect(checked).toBeGreaterThan(20);
	});

	it('lists lots through the API like any signed-in role', async () => {
		const { GET } = await import('../../src/routes/api/v1/lots/+server');
		const response = await GET(event(auditor, 'GET', '/api/v1/lots') as never);
		expect(response.status).toBe(200);
		expect(Array.isArray((await response.json()).rows)).toBe(true);
	});
});

describe('auditor in every form action and page', () => {
	it('is refused by every form action except changing their own password', async () => {
		let checked = 0;
		for (const [file, load] of Object.entries(pageServers)) {
			const actions = (await load()).actions as Record<string, (e: RequestEvent) => unknown> | undefined;
			if (!actions || !file.includes('/(app)/') || file.includes('/account/')) continue;
			for (const [name, action] of Object.entries(actions)) {
				const path = routePath(file, 'routes/');
				const form = new FormData();
				const status = await statusOf(() => action(event(auditor, 'POST', `/${path}?/${name}`, form)));
				expect(status, `${path} ?/${name}`).toBe(403);
				checked++;
			}
		}
		expect(checked).toBeGreaterThan(15);
	});

	it('opens the audit trail and exports it as CSV', async () => {
		const { GET } = await import('../../src/routes/(app)/audit/export.csv/+server');
		const response = await GET(event(auditor, 'GET', '/audit/export.csv') as never);
		expect(response.status).toBe(200);
		expect(response.headers.get('content-type')).toContain('text/csv');
		expect((await response.text()).split(/\r?\n/)[0]).toBe('id,at,actor,action,entity,entityId,reason,before,after,hash');
		const page = await import('../../src/routes/(app)/audit/+page.server');
		await expect(statusOf(() => page.load(event(auditor, 'GET', '/audit') as never))).resolves.toBe(200);
	});
});

describe('auditor in the services', () => {
	it('changes nothing through the services either', async () => {
		await expect(materials.create(auditor, { code: unique('M'), name: 'Auditor test' } as never)).rejects.toMatchObject({ status: 403 });
		await expect(suppliers.create(auditor, { code: unique('S'), name: 'Auditor test', contacts: [] } as never)).rejects.toMatchObject({ status: 403 });
		await expect(users.create(auditor, { email: `${unique('a')}@test.example`, name: 'Nobody', password: 'long-enough-pw-1', roles: ['auditor'] })).rejects.toMatchObject({ status: 403 });
		await expect(lots.create(auditor, {} as never)).rejects.toMatchObject({ status: 403 });
	});

	it('is a role an admin can grant at once (no second admin needed) and the database accepts', async () => {
		const created = await users.create(rootActor, { email: `${unique('aud')}@test.example`, name: 'Audrey Auditor', password: 'long-enough-pw-1', roles: ['auditor'] });
		expect(created.roles).toEqual(['auditor']);
	});
});
