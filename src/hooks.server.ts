import type { Handle, HandleServerError, RequestEvent, ServerInit } from '@sveltejs/kit';
import { sequence } from '@sveltejs/kit/hooks';
import { randomUUID } from 'node:crypto';
import '$lib/validation/messages';
import { mayEnter } from '$lib/permissions';
import { apiError } from '$lib/server/api';
import { authHandle, SESSION_ABSOLUTE_SECONDS, type LotgateSession } from '$lib/server/auth';
import { closeDatabase, databaseIsUp, markDatabaseDown, models } from '$lib/server/db';
import { acceptedRequestId, bodyLimit, isConnectionError, limitBody } from '$lib/server/request-limits';
import { plainPage } from '$lib/server/plain-page';
import { installJobs, startWorkers, stopJobs } from '$lib/server/jobs';
import { instrumentForToken } from '$lib/server/tokens';
import { startCheckpoints, stopCheckpoints } from '$lib/server/audit-checkpoint';
import { jobsInProcess } from '$lib/server/worker';

const PUBLIC_PREFIXES = ['/login', '/auth/', '/health', '/_app/', '/favicon'];
const isPublic = (path: string) => PUBLIC_PREFIXES.some((p) => path === p || path.startsWith(p));
const isApi = (path: string) => path.startsWith('/api/');
/** While the password is one-time, only these paths answer; everything else leads to choosing a new one. */
const ONE_TIME_PASSWORD_PATHS = ['/account/password', '/logout'];
const DATABASE_DOWN = 'The Lotgate database is not reachable right now. Nothing was changed. Try again in a minute, or tell your admin.';

const requestId: Handle = async ({ event, resolve }) => {
	event.locals.requestId = acceptedRequestId(event.request.headers.get('x-request-id')) ?? randomUUID();
	event.locals.actor = null;
	event.locals.user = null;
	event.locals.databaseFailed = false;
	let response = await resolve(event);
	// A connection error thrown inside a load or action (after the cached health check said "up") is a 503, not a 500.
	if (response.status >= 500 && response.status !== 503 && event.locals.databaseFailed) {
		response = isApi(event.url.pathname) ? apiError(503, 'database-unavailable', DATABASE_DOWN) : plainPage(503, 'Service unavailable', DATABASE_DOWN, event.locals.requestId);
	}
	response.headers.set('x-request-id', event.locals.requestId);
	return response;
};

// Browser-facing hardening. Pages get their Content-Security-Policy (with a per-response script nonce) from kit.csp in
// svelte.config.js; every other answer (JSON, files, hook pages) gets a closed one here.
const SECURITY_HEADERS: Record<string, string> = {
	'x-content-type-options': 'nosniff',
	'referrer-policy': 'same-origin',
	'x-frame-options': 'DENY',
	'cross-origin-opener-policy': 'same-origin',
	'permissions-policy':
		'accelerometer=(), autoplay=(), camera=(), display-capture=(), encrypted-media=(), fullscreen=(self), geolocation=(), gyroscope=(), hid=(), magnetometer=(), microphone=(), midi=(), payment=(), picture-in-picture=(), publickey-credentials-get=(), screen-wake-lock=(), serial=(), usb=(), xr-spatial-tracking=()'
};
const FALLBACK_CSP = "default-src 'none'; frame-ancestors 'none'; base-uri 'none'; form-action 'self'; style-src 'unsafe-inline'";
const securityHeaders: Handle = async ({ event, resolve }) => {
	const response = await resolve(event);
	try {
		for (const [name, value] of Object.entries(SECURITY_HEADERS)) if (!response.headers.has(name)) response.headers.set(name, value);
		if (!response.headers.has('content-security-policy')) response.headers.set('content-security-policy', FALLBACK_CSP);
	} catch {
		return response; // immutable headers (a fetched response passed through): leave them
	}
	return response;
};

/** Body size per route (see request-limits.ts), checked before anything reads the body. */
const bodySize: Handle = async ({ event, resolve }) => {
	const { request, url } = event;
	if (request.method === 'GET' || request.method === 'HEAD' || request.method === 'OPTIONS') return resolve(event);
	const limit = bodyLimit(url.pathname, request.headers.get('content-type') ?? '');
	const limited = await limitBody(request, limit);
	if (!limited) {
		const message = `The request body is larger than this address accepts (${limit >= 1048576 ? `${(limit / 1048576).toFixed(1)} MB` : `${Math.round(limit / 1024)} KB`})`;
		const response = isApi(url.pathname) ? apiError(413, 'too-large', message) : plainPage(413, 'Too large', message, event.locals.requestId);
		response.headers.set('connection', 'close');
		return response;
	}
	event.request = limited;
	return resolve(event);
};

// Auth.js's own endpoints are used only from inside the server (the /login and /logout actions call them directly).
// Closing them to clients keeps every sign-in behind the /login action's rate limits.
const closedAuthRoutes: Handle = async ({ event, resolve }) => {
	if (event.url.pathname.startsWith('/auth/') && event.request.method !== 'GET') return plainPage(404, 'Not found', 'This page does not exist.', event.locals.requestId);
	return resolve(event);
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
	return isApi(event.url.pathname) ? apiError(503, 'database-unavailable', DATABASE_DOWN) : plainPage(503, 'Service unavailable', DATABASE_DOWN, event.locals.requestId);
};

/** Fills locals.actor once: an instrument's bearer token on the API, otherwise the session's user, re-read from the database. */
const identity: Handle = async ({ event, resolve }) => {
	const authorization = event.request.headers.get('authorization');
	if (authorization?.startsWith('Bearer ') && isApi(event.url.pathname)) {
		const found = await instrumentForToken(authorization.slice(7).trim());
		if (!found) return apiError(401, 'bad-token', 'The instrument token is unknown or has been revoked');
		event.locals.actor = { id: null, label: `instrument ${found.instrument.name}`, roles: [], instrumentId: found.instrument.id, requestId: event.locals.requestId, ip: clientAddress(event) };
		return resolve(event);
	}
	const session = (await event.locals.auth()) as LotgateSession | null;
	if (session?.uid) {
		const user = await models().User.findByPk(session.uid);
		// Revocation: a cookie issued under an older session version (sign-out, password change or reset, deactivation,
		// role change) or signed in more than the absolute limit ago is refused on this very request.
		const current = user?.active && (session.sv ?? 0) === user.sessionVersion;
		const fresh = typeof session.authAt === 'number' && Date.now() / 1000 - session.authAt < SESSION_ABSOLUTE_SECONDS;
		if (user && current && fresh) {
			event.locals.user = { id: user.id, name: user.name, email: user.email, roles: user.roles, mustChangePassword: user.passwordMustChange };
			event.locals.actor = { id: user.id, label: user.name, roles: user.roles, requestId: event.locals.requestId, ip: clientAddress(event) };
		}
	}
	return resolve(event);
};

function clientAddress(event: RequestEvent): string | undefined {
	try {
		return event.getClientAddress();
	} catch {
		return undefined;
	}
}

const roleGuard: Handle = async ({ event, resolve }) => {
	const path = event.url.pathname;
	if (isPublic(path)) return resolve(event);
	if (event.locals.user?.mustChangePassword && !ONE_TIME_PASSWORD_PATHS.some((p) => path === p || path.startsWith(p + '/'))) {
		const message = 'Your password was set by an admin and works only once: choose your own password first (/account/password).';
		if (isApi(path)) return apiError(403, 'password-change-required', message);
		return new Response(null, { status: 303, headers: { location: '/account/password' } });
	}
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

export const handle: Handle = sequence(requestId, securityHeaders, crossSiteForms, bodySize, closedAuthRoutes, databaseHealth, authHandle, identity, roleGuard);

export const handleError: HandleServerError = ({ error, event, status }) => {
	if (isConnectionError(error)) {
		// The next requests see the outage at once instead of trusting the 5 s health cache; requestId turns this into a 503.
		markDatabaseDown();
		event.locals.databaseFailed = true;
		console.error(`[${event.locals.requestId}] database unreachable:`, (error as Error).message);
		return { message: DATABASE_DOWN, code: 'database-unavailable', requestId: event.locals.requestId };
	}
	if (status !== 404) console.error(`[${event.locals.requestId}]`, error);
	return {
		message: status === 404 ? 'This page does not exist.' : 'Something went wrong on our side. It has been logged.',
		requestId: event.locals.requestId
	};
};

export const init: ServerInit = async () => {
	// Every job in $lib/server/jobs (JOBS) registers its queue and producer-side wiring (the mail outbox hand-off).
	installJobs();
	// The web process only enqueues; `npm run worker` processes work the queues and write the hourly audit checkpoint.
	// LOTGATE_JOBS_IN_PROCESS=1 (npm start, the browser tests, a one-machine install) does both in this process.
	if (jobsInProcess()) {
		// In the background, retrying: the server must come up (and answer 503) even while the database is down.
		const start = () =>
			startWorkers().catch((error) => {
				console.error('[jobs] workers not started, retrying in 10 s:', error.message);
				setTimeout(start, 10_000).unref();
			});
		void start();
		// Audit checkpoints outside the database: one now, then hourly (and one with every certificate).
		startCheckpoints();
	}
	// adapter-node's graceful shutdown: release the job workers and the pool so the process can exit.
	process.once('sveltekit:shutdown' as never, async () => {
		stopCheckpoints();
		await stopJobs().catch(() => {});
		await closeDatabase().catch(() => {});
	});
};
