// Every CSV Lotgate writes (audit export, plot data) goes through here, so a cell a spreadsheet would run as a formula
// is neutralised the way the OWASP "CSV Injection" guidance describes: text starting with = + - @ tab or CR gets a
// leading apostrophe. Numbers stay numbers (a negative loading is not a formula).
import Papa from 'papaparse';

const FORMULA_START = /^[=+\-@\t\r]/;

export function neutraliseCell(value: unknown): unknown {
	return typeof value === 'string' && FORMULA_START.test(value) ? `'${value}` : value;
}

/** Rows to CSV (RFC 4180 quoting by papaparse), every text cell neutralised; `columns` fixes the order. */
export function toCsv(rows: Record<string, unknown>[], columns?: string[]): string {
	const safe = rows.map((row) => Object.fromEntries(Object.entries(row).map(([k, v]) => [k, neutraliseCell(v)])));
	const header = columns ?? [...new Set(rows.flatMap((r) => Object.keys(r)))];
	// Header cells come from data too (metadata keys), so they are neutralised as well.
	return Papa.unparse({ fields: header.map((h) => String(neutraliseCell(h))), data: safe.map((r) => header.map((h) => r[h] ?? '')) });
}
