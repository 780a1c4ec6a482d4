import { json, type RequestEvent } from '@sveltejs/kit';
import { ZodError } from 'zod';
import { flatRoles, type Allowed } from '$lib/permissions';
import { markDatabaseDown } from './db';
import { unstorableTextPath } from '$lib/validation/text';
import { BodyTooLarge, isConnectionError, isUnstorableTextError } from './request-limits';
import { hasRole, type Actor } from './services/actor';
import { ServiceError } from './services/errors';

export interface ApiErrorBody {
	error: { code: string; message: string; field?: string; [extra: string]: unknown };
}

/** The one error shape every /api/v1 route answers with. */
export function apiError(status: number, code: string, message: string, field?: string, extra: Record<string, unknown> = {}) {
	const body: ApiErrorBody = { error: { code, message, ...(field ? { field } : {}), ...extra } };
	return json(body, { status });
}

export function errorResponse(error: unknown) {
	if (error instanceof ServiceError) {
		const response = apiError(error.status, error.code, error.message, error.field, error.details ?? {});
		const retryAfter = (error as { retryAfter?: number }).retryAfter;
		if (error.status === 429 && retryAfter) response.headers.set('retry-after', String(Math.ceil(retryAfter)));
		return response;
	}
	if (error instanceof BodyTooLarge || (error instanceof Error && error.cause instanceof BodyTooLarge)) {
		return apiError(413, 'too-large', 'The request body is larger than this address accepts');
	}
	if (isConnectionError(error)) {
		markDatabaseDown();
		return apiError(503, 'database-unavailable', 'The Lotgate database is not reachable right now. Nothing was changed. Try again in a minute, or tell your admin.');
	}
	if (isUnstorableTextError(error)) {
		return apiError(400, 'invalid-text', 'The request holds text that cannot be stored (a NUL, control or broken character); nothing was changed');
	}
	if (error instanceof ZodError) {
		const issue = error.issues[0];
		const field = issue?.path.join('.') || undefined;
		return apiError(400, 'invalid', field ? `${field}: ${issue.message}` : (issue?.message ?? 'Invalid input'), field);
	}
	console.error(error);
	return apiError(500, 'internal', 'An unexpected error occurred; it has been logged.');
}

/** Re-checks the caller inside the handler (the hook guards too): 401 without identity, 403 without a role. */
export function requireActor(event: RequestEvent, ...allowed: Allowed[]): Actor {
	const actor = event.locals.actor;
	if (!actor) throw new ServiceError(401, 'unauthenticated', 'Sign in, or send an instrument token');
	const roles = flatRoles(allowed);
	if (roles.length && !hasRole(actor, roles)) {
		throw new ServiceError(403, 'forbidden', `This needs one of the roles: ${roles.join(', ')}`);
	}
	return actor;
}

/** Wraps a handler so thrown ServiceError/ZodError become the shared error shape. */
export function handler<E extends RequestEvent>(fn: (event: E) => Promise<Response>) {
	return async (event: E) => {
		try {
			return await fn(event);
		} catch (error) {
			return errorResponse(error);
		}
	};
}

export async function readJson(request: Request): Promise<Record<string, unknown>> {
	let parsed: Record<string, unknown>;
	try {
		const body = await request.json();
		if (!body || typeof body !== 'object' || Array.isArray(body)) throw new Error('not an object');
		parsed = body as Record<string, unknown>;
	} catch {
		throw new ServiceError(400, 'invalid-json', 'The request body must be a JSON object');
	}
	// Text PostgreSQL cannot store as sent is refused for every field, also ones a route's schema does not know.
	const bad = unstorableTextPath(parsed);
	if (bad) throw new ServiceError(400, 'invalid-text', `${bad.path}: this text ${bad.problem}`, bad.path);
	return parsed;
}
