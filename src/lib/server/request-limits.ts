// Request-level limits applied in hooks.server.ts before any route reads the body: size per route, enforced on the
// declared Content-Length and again on the bytes that actually stream in (a chunked body declares none).
import { maxBatchBytes, maxSingleUploadBytes } from './upload-limits';

const KB = 1024;
export const LOGIN_BODY_BYTES = 4 * KB;
export const JSON_BODY_BYTES = 32 * KB;
export const FORM_BODY_BYTES = 128 * KB;

// Routes that take spectrum files. Everything else is small text.
const BATCH_UPLOADS: RegExp[] = [/^\/api\/v1\/spectra\/?$/, /^\/api\/v1\/materials\/[^/]+\/library\/?$/, /^\/materials\/[^/]+\/?$/];
const SINGLE_UPLOADS: RegExp[] = [/^\/api\/v1\/lots\/[^/]+\/scans\/?$/, /^\/lots\/[^/]+\/?$/];

/** The largest body accepted for this request, in bytes. */
export function bodyLimit(path: string, contentType: string): number {
	if (path === '/login' || path.startsWith('/login/') || path === '/logout' || path.startsWith('/auth/')) return LOGIN_BODY_BYTES;
	const type = contentType.split(';')[0].trim().toLowerCase();
	if (type === 'multipart/form-data') {
		if (BATCH_UPLOADS.some((r) => r.test(path))) return maxBatchBytes();
		if (SINGLE_UPLOADS.some((r) => r.test(path))) return maxSingleUploadBytes();
	}
	if (type === 'application/json' || path.startsWith('/api/')) return JSON_BODY_BYTES;
	return FORM_BODY_BYTES;
}

export class BodyTooLarge extends Error {
	constructor(readonly limit: number) {
		super(`The request body exceeds limit of ${limit} bytes for this route`);
		this.name = 'BodyTooLarge';
	}
}

/**
 * A copy of `request` whose body is checked against `limit` while it streams. Small limits are read whole here (never
 * more than the limit is held); larger ones are counted chunk by chunk and the stream errors with BodyTooLarge.
 * Returns null when the body is over the limit.
 */
export async function limitBody(request: Request, limit: number): Promise<Request | null> {
	const declared = request.headers.get('content-length');
	if (declared != null && Number(declared) > limit) return null;
	if (!request.body) return request;
	if (limit <= 1024 * KB) {
		const reader = request.body.getReader();
		const chunks: Uint8Array[] = [];
		let size = 0;
		for (;;) {
			const { done, value } = await reader.read();
			if (done) break;
			size += value.byteLength;
			if (size > limit) {
				await reader.cancel().catch(() => {});
				return null;
			}
			chunks.push(value);
		}
		const body = new Uint8Array(size);
		let at = 0;
		for (const c of chunks) {
			body.set(c, at);
			at += c.byteLength;
		}
		const headers = new Headers(request.headers);
		headers.delete('transfer-encoding');
		headers.set('content-length', String(size));
		return new Request(request.url, { method: request.method, headers, body, signal: request.signal });
	}
	let size = 0;
	const counted = request.body.pipeThrough(
		new TransformStream<Uint8Array, Uint8Array>({
			transform(chunk, controller) {
				size += chunk.byteLength;
				if (size > limit) controller.error(new BodyTooLarge(limit));
				else controller.enqueue(chunk);
			}
		})
	);
	return new Request(request.url, { method: request.method, headers: request.headers, body: counted, signal: request.signal, duplex: 'half' } as RequestInit);
}

/** A client-supplied request id is kept only when it is a UUID or at most 64 safe characters. */
export function acceptedRequestId(value: string | null): string | null {
	if (!value) return null;
	if (/^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i.test(value)) return value;
	return /^[A-Za-z0-9._:-]{1,64}$/.test(value) ? value : null;
}

/** Errors that mean the database cannot be reached (not a bad query): the answer is 503, not 500. */
export function isConnectionError(error: unknown): boolean {
	for (let e = error as { name?: string; code?: string; message?: string; parent?: unknown; original?: unknown; cause?: unknown } | undefined, depth = 0; e && depth < 5; depth++) {
		if (typeof e !== 'object') return false;
		if (/^Sequelize(Connection\w*|HostNotFound|HostNotReachable|InvalidConnection|AccessDenied)Error$/.test(e.name ?? '') || e.name === 'ConnectionAcquireTimeoutError') return true;
		if (['ECONNREFUSED', 'ECONNRESET', 'ETIMEDOUT', 'EPIPE', '57P01', '57P02', '57P03', '08000', '08001', '08003', '08004', '08006'].includes(String(e.code ?? ''))) return true;
		if (/Connection terminated|connect ECONNREFUSED|server closed the connection|the database system is (shutting down|starting up)/i.test(e.message ?? '')) return true;
		e = (e.parent ?? e.original ?? e.cause) as typeof e;
	}
	return false;
}

/**
 * PostgreSQL refusing text it cannot store (NUL in text, \u0000 in jsonb, invalid UTF-8): a bad request that slipped
 * past the field checks, answered 400 instead of 500.
 */
export function isUnstorableTextError(error: unknown): boolean {
	for (let e = error as { code?: string; parent?: unknown; original?: unknown; cause?: unknown } | undefined, depth = 0; e && depth < 5; depth++) {
		if (typeof e !== 'object') return false;
		if (['22021', '22P05'].includes(String(e.code ?? ''))) return true;
		e = (e.parent ?? e.original ?? e.cause) as typeof e;
	}
	return false;
}
