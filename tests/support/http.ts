// One request through the app's `handle` (request id, limits, session, identity, role guard) and then a route handler,
// as the built server runs it, without a port. Shared by integration tests that speak HTTP to the routes.
import type { RequestEvent } from '@sveltejs/kit';
// @ts-expect-error the internal entry ships no module typings; it is the store `sequence()` reads
import { with_request_store } from '@sveltejs/kit/internal/server';
import { encode } from '@auth/core/jwt';
import type { Actor } from '../../src/lib/server/services/actor';

// eslint-disable-next-line @typescript-eslint/no-explicit-any -- each route types its own params
export type Handler = (event: any) => Promise<Response> | Response;
const SESSION_COOKIE = 'authjs.session-token';

/** A real Auth.js session cookie for the user, as the sign-in would set it, carrying the user's session version. */
export async function sessionCookie(actor: Actor) {
	const { models } = await import('../../src/lib/server/db');
	const sv = actor.id == null ? 0 : ((await models().User.findByPk(actor.id))?.sessionVersion ?? 0);
	const value = await encode({ token: { uid: actor.id, name: actor.label, sub: String(actor.id), sv, authAt: Math.floor(Date.now() / 1000) }, secret: process.env.AUTH_SECRET!, salt: SESSION_COOKIE });
	return `${SESSION_COOKIE}=${value}`;
}

let hooks: typeof import('../../src/hooks.server') | null = null;

export async function call(route: Handler, input: Request, params: Record<string, string> = {}, actor?: Actor, routeId?: string): Promise<Response> {
	hooks ??= await import('../../src/hooks.server');
	let request = input;
	if (actor) {
		const headers = new Headers(input.headers);
		headers.set('cookie', await sessionCookie(actor));
		if (!headers.has('origin')) headers.set('origin', new URL(input.url).origin);
		request = new Request(input, { headers });
	}
	const url = new URL(request.url);
	const jar = new Map((request.headers.get('cookie') ?? '').split(/;\s*/).filter(Boolean).map((c) => [c.slice(0, c.indexOf('=')), c.slice(c.indexOf('=') + 1)] as [string, string]));
	const cookies = { get: (n: string) => jar.get(n), getAll: () => [...jar].map(([name, value]) => ({ name, value })), set: () => {}, delete: () => {}, serialize: () => '' };
	const event = {
		request,
		url,
		params,
		locals: {} as App.Locals,
		cookies,
		route: { id: routeId ?? url.pathname },
		fetch,
		getClientAddress: () => '127.0.0.1',
		platform: undefined,
		setHeaders: () => {},
		isDataRequest: false,
		isSubRequest: false,
		isRemoteRequest: false,
		tracing: { enabled: false, root: {}, current: {} }
	} as unknown as RequestEvent;
	const state = { tracing: { record_span: ({ fn }: { fn: (span: unknown) => unknown }) => fn({}) } };
	return with_request_store({ event, state } as never, () =>
		hooks!.handle({
			event,
			resolve: async (e) => {
				try {
					return await route(e);
				} catch (error) {
					// What SvelteKit does with `error()` / `redirect()` thrown from a handler or load.
					const status = (error as { status?: number }).status;
					if (typeof status === 'number') return new Response(JSON.stringify(error), { status, headers: (error as { location?: string }).location ? { location: (error as { location: string }).location } : {} });
					throw error;
				}
			}
		})
	) as Promise<Response>;
}

export const jsonRequest = (method: string, path: string, body?: unknown) =>
	new Request(`http://127.0.0.1${path}`, { method, headers: { 'content-type': 'application/json' }, body: body === undefined ? undefined : JSON.stringify(body) });
