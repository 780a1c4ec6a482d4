// How PostgreSQL's int8 and numeric values reach JavaScript, set once before the Sequelize instance is made.
// node-postgres returns both as strings by default (an int8 can exceed 2^53), and Sequelize's own numeric parser keeps the
// string; that left a `Number(r.x)` at every use of a bigserial id, a count(*) or a sum. Every id and count we store is far
// below 2^53, so they come back as numbers; a value that is not a safe integer is an error, never a rounded id.
// The parsers are Sequelize's per-dialect ones (DataTypes.postgres.X.parse, as Sequelize's docs for extending types
// describe), so they apply to every query and model of our Sequelize connections and to their array forms (int8[]),
// and leave other pg clients in the process (pg-boss, the mail fake) as they were.
import { DataTypes } from 'sequelize';

/** int8 (OID 20) text to a number; throws when it is not a safe integer (|n| > 2^53 − 1). */
export function parseInt8(text: string): number {
	const n = Number.parseInt(text, 10);
	if (!Number.isSafeInteger(n) || String(n) !== text.trim()) {
		throw new RangeError(`int8 value ${text} is outside JavaScript's safe integer range (±${Number.MAX_SAFE_INTEGER}); read it as text in SQL`);
	}
	return n;
}

/** numeric (OID 1700) text to a number (a double: 15–17 significant digits, which every numeric we compute fits). */
export function parseNumeric(text: string): number {
	return Number.parseFloat(text);
}

type ParsedType = { parse?: (text: string) => unknown };
let registered = false;

/** Registers the int8 and numeric parsers with Sequelize's postgres dialect (idempotent). */
export function registerTypeParsers(): void {
	if (registered) return;
	const postgres = (DataTypes as unknown as { postgres: { BIGINT: ParsedType; DECIMAL: ParsedType } }).postgres;
	postgres.BIGINT.parse = parseInt8;
	postgres.DECIMAL.parse = parseNumeric;
	registered = true;
}
