// The one way raw SQL rows enter the code: each query shape has a zod schema, its TypeScript type is inferred from it, and
// outside production every row is checked against it, so a renamed column, a NULL where none was expected or an int8 that
// came back as text fails loudly at the query instead of as NaN three calls later. The schemas only describe (no
// transforms, no defaults): the rows returned are the driver's own objects, so production, which skips the check, sees
// exactly what development sees. Simple reads and writes of one table use the Sequelize models instead (DEVELOPERS.md).
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { config } from '../config';
import { sequelize } from './index';

let checking: boolean | undefined;
function checkRows(): boolean {
	return (checking ??= config().NODE_ENV !== 'production');
}

/** A row schema whose parsed type equals its input type (no transforms), so skipping the check changes nothing. */
export type RowSchema<T> = z.ZodType<T, z.ZodTypeDef, T>;

export interface RowQueryOptions {
	replacements?: Record<string, unknown> | unknown[];
	transaction?: Transaction | null;
}

/** Checks already-fetched rows against `schema` (outside production) and returns them typed. */
export function rows<T>(schema: RowSchema<T>, result: readonly unknown[]): T[] {
	if (checkRows()) {
		for (let i = 0; i < result.length; i++) {
			const out = schema.safeParse(result[i]);
			if (!out.success) {
				const issue = out.error.issues[0];
				throw new Error(`Query row ${i} does not match its schema: ${issue.path.join('.') || '(row)'} ${issue.message}`);
			}
		}
	}
	return result as T[];
}

/** Runs a SELECT and returns its rows, typed by and (outside production) checked against `schema`. */
export async function select<T>(schema: RowSchema<T>, sql: string, options: RowQueryOptions = {}): Promise<T[]> {
	const result = await sequelize().query(sql, { replacements: options.replacements, transaction: options.transaction ?? undefined, type: QueryTypes.SELECT });
	return rows(schema, result);
}

/** The first row of a SELECT (or undefined), typed and checked like `select`. */
export async function selectOne<T>(schema: RowSchema<T>, sql: string, options: RowQueryOptions = {}): Promise<T | undefined> {
	return (await select(schema, sql, options))[0];
}

/** The one row an INSERT … RETURNING or UPDATE … RETURNING must give back; an error when there is none. */
export async function returning<T>(schema: RowSchema<T>, sql: string, options: RowQueryOptions = {}): Promise<T> {
	const row = await selectOne(schema, sql, options);
	if (row === undefined) throw new Error('The statement returned no row, though one was expected');
	return row;
}

/** Column helpers shared by the row schemas: ids and counts are numbers (see pg-types.ts), timestamps are Dates. */
export const col = {
	id: z.number().int(),
	count: z.number().int().nonnegative(),
	num: z.number(),
	text: z.string(),
	date: z.date(),
	bool: z.boolean(),
	json: z.unknown(),
	numbers: z.array(z.number()),
	nullableNumbers: z.array(z.number().nullable())
};
export { z };
