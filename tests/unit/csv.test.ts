// CSV injection (OWASP "CSV Injection"): cells starting with = + - @ tab or CR are neutralised in every export.
import Papa from 'papaparse';
import { describe, expect, it } from 'vitest';
import { neutraliseCell, toCsv } from '../../src/lib/csv';

describe('CSV export', () => {
	it.each(['=HYPERLINK("http://x","click")', '+1+1', '-2+3', '@SUM(A1)', '\t=1', '\r=1'])('prefixes %j with an apostrophe', (cell) => {
		expect(neutraliseCell(cell)).toBe(`'${cell}`);
	});

	it('leaves ordinary text and numbers (also negative ones) alone', () => {
		expect(neutraliseCell('plain text = fine')).toBe('plain text = fine');
		expect(neutraliseCell(-0.25)).toBe(-0.25);
		expect(neutraliseCell(null)).toBeNull();
	});

	it('writes a CSV whose parsed cells never start with a formula character, headers included', () => {
		const csv = toCsv([{ id: 1, reason: '=HYPERLINK("http://evil.example","x")', loading: -0.5, '=cmd': 'a' }], ['id', 'reason', 'loading', '=cmd']);
		const parsed = Papa.parse<string[]>(csv.trim()).data;
		expect(parsed[0]).toEqual(['id', 'reason', 'loading', "'=cmd"]);
		expect(parsed[1]).toEqual(['1', `'=HYPERLINK("http://evil.example","x")`, '-0.5', 'a']);
		expect(parsed.flat().some((c) => /^[=+@\t\r]/.test(c))).toBe(false);
	});
});
