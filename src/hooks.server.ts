import type { Handle, HandleServerError, ServerInit } from '@sveltejs/kit';
import { sequence } from '@sveltejs/kit/hooks';
import { randomUUID } from 'node:crypto';
import { mayEnter } from '$lib/permissions';
import { apiError } from '$lib/server/api';
import { authHandle } from '$lib/server/auth';
import { closeDatabase, databaseIsUp, models } from '$lib/server/db';
import { plainPage } from '$lib/server/plain-page';
import { startWorkers, stopJobs } from '$lib/server/jobs';
import { instrumentForToken } from '$lib/server/tokens';

const PUBLIC_PREFIXES = ['/login', '/auth/', '/health', '/_app/', '/favicon'];
const isPublic = (path: string) => PUBLIC_PREFIXES.some((p) => path === p || path.startsWith(p));
const isApi = (path: string) => path.startsWith('/api/');

const requestId: Handle = async ({ event, resolve }) => {
	event.locals.requestId = event.request.headers.get('x-request-id') ?? randomUUID();
	event.locals.actor = null;
	event.locals.user = null;
	const response = await resolve(event);
	response.headers.set('x-request-id', event.locals.requestId);
	return response;
};

const FORM_TYPES = ['application/x-www-form-urlencoded', 'multipart/form-data', 'text/plain'];
const crossSiteForms: Handle = async ({ event, resolve }) => {
	const { request, url } = event;
	const origin = request.headers.get('origin');
	const type = request.headers.get('content-type')?.split(';')[0].trim().toLowerCase() ?? '';
	if (request.method !== 'GET' && request.method !== 'HEAD' && origin && origin !== url.origin && FORM_TYPES.includes(type)) {
		const message = `Form submissions from another site (${origin}) are refused`;
		return isApi(url.pathname) ? apiError(403, 'cross-site', message) : plainPage(403, 'Not allowed', message, event.locals.requestId);
	}
	return resolve(event);
};

const databaseHealth: Handle = async ({ event, resolve }) => {
	if (event.url.pathname.startsWith('/_app/') || (await databaseIsUp())) return resolve(event);
	const message = 'The Lotgate database is not reachable right now. Nothing was changed. Try again in a minute, or tell your admin.';
	return isApi(event.url.pathname) ? apiError(503, 'database-unavailable', message) : plainPage(503, 'Service unavailable', message, event.locals.requestId);
};

/** Fills locals.actor once: an instrument's bearer token on the API, otherwise the session's user, re-read from the database. */
const identity: Handle = async ({ event, resolve }) => {
	const authorization = event.request.headers.get('authorization');
	if (authorization?.startsWith('Bearer ') && isApi(event.url.pathname)) {
		const found = await instrumentForToken(authorization.slice(7).trim());
		if (!found) return apiError(401, 'bad-token', 'The instrument token is unknown or has been revoked');
		event.locals.actor = { id: null, label: `instrument ${found.instrument.name}`, roles: [], instrumentId: found.instrument.id, requestId: event.locals.requestId };
		return resolve(event);
	}
	const session = (await event.locals.auth()) as { uid?: number } | null;
	if (session?.uid) {
		const user = await models().User.findByPk(session.uid);
		if (user?.active) {
			event.locals.user = { id: user.id, name: user.name, email: user.email, roles: user.roles };
			event.locals.actor = { id: user.id, label: user.name, roles: user.roles, requestId: event.locals.requestId };
		}
	}
	return resolve(event);
};

const roleGuard: Handle = async ({ event, resolve }) => {
	const path = event.url.pathname;
	if (isPublic(path)) return resolve(event);
	const actor = event.locals.actor;
	if (!actor) {
		if (isApi(path)) return apiError(401, 'unauthenticated', 'Sign in, or send an instrument token');
		return new Response(null, { status: 303, headers: { location: `/login?redirectTo=${encodeURIComponent(path + event.url.search)}` } });
	}
	// Instrument tokens reach only the upload routes, which check them again.
	if (actor.instrumentId != null) {
		if (/^\/api\/v1\/(spectra|lots\/[^/]+\/scans)\/?$/.test(path)) return resolve(event);
		return apiError(403, 'forbidden', 'An instrument token may only upload spectra and scans');
	}
	if (!mayEnter(actor.roles, path)) {
		const message = 'Your role does not give access to this page.';
		return isApi(path) ? apiError(403, 'forbidden', message) : plainPage(403, 'Not allowed', message, event.locals.requestId);
	}
	return resolve(event);
};

export const handle: Handle = sequence(requestId, crossSiteForms, databaseHealth, authHandle, identity, roleGuard);

export const handleError: HandleServerError = ({ error, event, status }) => {
	if (status !== 404) console.error(`[${event.locals.requestId}]`, error);
	return {
		message: status === 404 ? 'This page does not exist.' : 'Something went wrong on our side. It has been logged.',
		requestId: event.locals.requestId
	};
};

export const init: ServerInit = async () => {
	// Queues are declared by their workflow modules; importing them registers their workers.
	await import('$lib/server/workers');
	// In the background, retrying: the server must come up (and answer 503) even while the database is down.
	const start = () =>
		startWorkers().catch((error) => {
			console.error('[jobs] workers not started, retrying in 10 s:', error.message);
			setTimeout(start, 10_000).unref();
		});
	void start();
	// adapter-node's graceful shutdown: release the job workers and the pool so the process can exit.
	process.once('sveltekit:shutdown' as never, async () => {
		await stopJobs().catch(() => {});
		await closeDatabase().catch(() => {});
	});
};
