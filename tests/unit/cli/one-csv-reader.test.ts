// Issue 15 §5: one CSV reader. The command line (readSpectraCsv) and the server's upload parser (parseSpectrumFile)
// read one file the same way: delimiter, decimal comma, gap spellings, encoding, line numbers and refusals. Before,
// the command line had its own reader: it refused "0,5" and "NA" that an upload accepted.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, test } from 'vitest';
import { CliError, readSpectraCsv } from '../../../src/lib/cli/csv';
import { parseSpectrumFile, SpectrumFileError } from '../../../src/lib/spectra';
import { fixture, root } from '../analysis/fixtures';

const enc = (text: string) => new TextEncoder().encode(text);

/** Both readings of one file, in the same shape: the server's as an upload with gaps allowed, the command line's as `screen` reads an input. */
function both(bytes: Uint8Array, allowGaps = true) {
	const server = parseSpectrumFile(bytes, 'f.csv', { allowGaps, minPoints: 2, unit: 'nm' });
	const cli = readSpectraCsv(bytes, 'f.csv', { unit: 'nm', blankAsNaN: allowGaps });
	return {
		server: server.spectra.map((s) => ({ id: s.id, line: s.line, axis: Array.from(s.axis), values: Array.from(s.values), unit: s.unit, meta: s.meta })),
		cli: cli.spectra.map((s) => ({ id: s.id, line: s.line, axis: Array.from(s.axis), values: Array.from(s.values), unit: s.unit, meta: s.meta }))
	};
}

describe('the command line and the server read one CSV file the same', () => {
	test('semicolons with decimal commas, gap spellings, a blank line, CRLF and a byte-order mark', () => {
		const text = '\uFEFFid;class;1100;1102;1104;1106\r\nA-1;genuine;0,51;0,52;NA;0,54\r\n\r\nA-2;genuine;0,61;;0,63;#N/A\r\nA-3;suspect;1,5e-1;-0,25;0,3;?\r\n';
		const { server, cli } = both(enc(text));
		expect(cli).toEqual(server);
		// what they read, written out: decimal commas are decimals, every gap spelling is NaN, line 3 was blank
		expect(server.map((s) => s.values)).toEqual([
			[0.51, 0.52, Number.NaN, 0.54],
			[0.61, Number.NaN, 0.63, Number.NaN],
			[0.15, -0.25, 0.3, Number.NaN]
		]);
		expect(server.map((s) => [s.id, s.line])).toEqual([['A-1', 2], ['A-2', 4], ['A-3', 5]]);
		expect(server[0].meta).toEqual({ id: 'A-1', class: 'genuine' });
	});

	test('the same numbers with commas and decimal points read to the same values', () => {
		const semi = both(enc('id;1100;1102;1104\nA;0,5;0,25;1,125\n')).cli;
		const comma = both(enc('id,1100,1102,1104\nA,0.5,0.25,1.125\n')).cli;
		expect(semi.map((s) => s.values)).toEqual(comma.map((s) => s.values));
	});

	test('a Latin-1 export (older instrument software) decodes the same way', () => {
		const latin1 = Uint8Array.from([...'Probe;Qualit', 0xe4, ...'t;1100;1102\nP1;gut;0,1;0,2\n'].map((c) => (typeof c === 'number' ? c : c.charCodeAt(0))));
		const { server, cli } = both(latin1);
		expect(cli).toEqual(server);
		expect(Object.keys(cli[0].meta)).toEqual(['Probe', 'Qualität']);
	});

	test('the open gasoline file (Kalivas 1997) reads identically', () => {
		const { server, cli } = both(new Uint8Array(readFileSync(fixture('gasoline_nir.csv'))));
		expect(cli).toHaveLength(60);
		expect(cli).toEqual(server);
	});

	test('a refusal is the same refusal: code, line and problem', () => {
		const cases: [text: string, allowGaps: boolean][] = [
			['id,1100,1102,1104\nA,1,2,3\nB,1,x,3\n', true], // text in a spectral cell
			['id,1100,1102,1104\nA,1,,3\n', false], // a gap where gaps are not allowed (lotgate build)
			['id,1100,1100,1104\nA,1,2,3\n', true], // an axis value twice
			['id,1100,1102,1104\nA,1,2\n', true] // a short row
		];
		for (const [text, allowGaps] of cases) {
			let server: SpectrumFileError | undefined;
			try {
				parseSpectrumFile(enc(text), 'f.csv', { allowGaps, minPoints: 2, unit: 'nm' });
			} catch (e) {
				server = e as SpectrumFileError;
			}
			expect(server, text).toBeInstanceOf(SpectrumFileError);
			expect(() => readSpectraCsv(enc(text), 'f.csv', { blankAsNaN: allowGaps })).toThrow(new CliError(`f.csv: line ${server!.line}: ${server!.problem}`));
		}
	});
});

describe('through the lotgate command itself', () => {
	test('screening the gasoline file written with semicolons and decimal commas gives the same results', { timeout: 120_000 }, () => {
		const dir = mkdtempSync(join(tmpdir(), 'lotgate-csv-'));
		const run = (...args: string[]) => spawnSync(process.execPath, [join(root, 'bin/lotgate.js'), ...args], { cwd: root, encoding: 'utf8' });
		const model = join(dir, 'model.json');
		const b = run('build', '--train', fixture('gasoline_nir.csv'), '--family-components', '3', '--out', model);
		expect(b.status, b.stderr).toBe(0);
		const original = readFileSync(fixture('gasoline_nir.csv'), 'utf8');
		const european = join(dir, 'gasoline-semicolon.csv');
		writeFileSync(european, original.replace(/,/g, ';').replace(/(\d)\.(\d)/g, '$1,$2'));
		expect(readFileSync(european, 'utf8')).toMatch(/;-0,050193;/);
		const screen = (file: string) => run('screen', '--model', model, '--input', file, '--json');
		const a = screen(fixture('gasoline_nir.csv'));
		const e = screen(european);
		expect(a.status, a.stderr).toBe(0);
		expect(e.status, e.stderr).toBe(0);
		const results = (out: string) => JSON.parse(out).results.map((r: { id: string; verdict: string; family: { c: number } }) => [r.id, r.verdict, r.family.c]);
		expect(results(e.stdout)).toHaveLength(60);
		expect(results(e.stdout)).toEqual(results(a.stdout));
	});
});
