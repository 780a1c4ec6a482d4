/** A refusal a user can act on; routes map it to a status and the shared API error shape. */
export class ServiceError extends Error {
	constructor(
		readonly status: 400 | 401 | 403 | 404 | 409 | 413 | 415 | 422 | 423 | 429 | 503,
		readonly code: string,
		message: string,
		readonly field?: string
	) {
		super(message);
		this.name = 'ServiceError';
	}
}

export const notFound = (what: string) => new ServiceError(404, 'not-found', `${what} was not found`);
export const forbidden = (message = 'Your role does not allow this action') => new ServiceError(403, 'forbidden', message);
export const invalid = (message: string, field?: string) => new ServiceError(400, 'invalid', message, field);
export const conflict = (message: string, field?: string) => new ServiceError(409, 'conflict', message, field);
