// One zod schema per route for its query parameters: a bad value is a 400 naming the parameter, never a clamp or a 500.
import { z } from 'zod';
import { ServiceError } from './services/errors';

const blankToUndefined = (v: unknown) => (v === '' || v == null ? undefined : v);

/** A whole page number from 1 to 1,000,000 (Infinity, 1e20, 1.5, abc and 0 are refused). */
export const pageParam = z.preprocess(blankToUndefined, z.coerce.number({ invalid_type_error: 'must be a whole number' }).int('must be a whole number').min(1, 'must be at least 1').max(1_000_000, 'must be at most 1000000').optional());
export const pageSizeParam = (max: number) => z.preprocess(blankToUndefined, z.coerce.number({ invalid_type_error: 'must be a whole number' }).int('must be a whole number').min(1, 'must be at least 1').max(max, `must be at most ${max}`).optional());
/** A calendar date YYYY-MM-DD that exists (2024-02-30 does not). */
export const dateParam = z.preprocess(
	blankToUndefined,
	z
		.string()
		.regex(/^\d{4}-\d{2}-\d{2}$/, 'must be a date, YYYY-MM-DD')
		.refine((s) => {
			const d = new Date(`${s}T00:00:00Z`);
			return !Number.isNaN(d.getTime()) && d.toISOString().slice(0, 10) === s;
		}, 'is not a calendar date')
		.optional()
);

/** Parses `url`'s query with `schema`; 400 `invalid-query` naming the first bad parameter. */
export function parseQuery<T extends z.ZodTypeAny>(url: URL, schema: T): z.infer<T> {
	const raw: Record<string, string> = {};
	for (const [k, v] of url.searchParams) raw[k] = v;
	const out = schema.safeParse(raw);
	if (!out.success) {
		const issue = out.error.issues[0];
		const field = String(issue.path[0] ?? 'query');
		throw new ServiceError(400, 'invalid-query', `Query parameter "${field}" ${issue.message}`, field);
	}
	return out.data;
}
