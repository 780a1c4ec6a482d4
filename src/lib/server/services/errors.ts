import { normaliseText, textProblem, unstorableTextPath, type TextKind } from '../../validation/text';
/** A refusal a user can act on; routes map it to a status and the shared API error shape. */
export class ServiceError extends Error {
	constructor(
		readonly status: 400 | 401 | 403 | 404 | 409 | 413 | 415 | 422 | 423 | 429 | 503,
		readonly code: string,
		message: string,
		readonly field?: string,
		/** Extra fields for the API error body, e.g. what a confirmation needs (kept out of the message). */
		readonly details?: Record<string, unknown>
	) {
		super(message);
		this.name = 'ServiceError';
	}
}

export const notFound = (what: string) => new ServiceError(404, 'not-found', `${what} was not found`);
export const forbidden = (message = 'Your role does not allow this action') => new ServiceError(403, 'forbidden', message);
export const invalid = (message: string, field?: string) => new ServiceError(400, 'invalid', message, field);
export const conflict = (message: string, field?: string) => new ServiceError(409, 'conflict', message, field);

/** The boundary text rule for values that do not pass through a zod schema: 400 naming the field. */
export function cleanText(value: string, field: string, kind: TextKind): string {
	const problem = textProblem(kind === 'multiline' ? value.replace(/\r\n?/g, '\n') : value, kind);
	if (problem) throw new ServiceError(400, 'invalid-text', `${field}: this text ${problem}`, field);
	return normaliseText(value, kind);
}

/**
 * An uploaded file's name is kept as given for the record, so only what PostgreSQL cannot store faithfully is refused
 * (NUL, controls, unpaired surrogates); bidi controls are kept and removed only where the name is shown or sent.
 */
export function storableFileName(name: string | null | undefined, field = 'file'): string {
	const given = (name ?? '').trim() || 'upload';
	const found = unstorableTextPath(given) ?? (/[\t\n\r]/.test(given) ? { problem: 'contains a tab or line break' } : null);
	if (found) throw new ServiceError(400, 'invalid-file-name', `The file name ${found.problem}; rename the file`, field);
	return given;
}
