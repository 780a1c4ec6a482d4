// `lotgate screen` on a batch (issue #11 §4): several files after one --input (what a shell glob gives), an unreadable
// file reported as unusable while the rest are screened, exit code 3 for "some inputs unusable", and a cm⁻¹ file with
// a 2-decimal axis accepted on a 900–1700 nm model. Data: the gasoline NIR set (Kalivas 1997, fixtures/open).
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, test } from 'vitest';
import { expandInputs } from '../../../src/lib/cli/main';
import { writeJcampAffn } from '../../../src/lib/demo/jcamp-writer';
import { fixture, gasoline, root } from './fixtures';

const run = (...args: string[]) => spawnSync(process.execPath, [join(root, 'bin/lotgate.js'), ...args], { cwd: root, encoding: 'utf8' });

describe('expandInputs', () => {
	test('every word after --input up to the next option is an input', () => {
		expect(expandInputs(['--model', 'm.json', '--input', 'a.jdx', 'b.jdx', 'c.jdx', '--json'])).toEqual(['--model', 'm.json', '--input', 'a.jdx', '--input', 'b.jdx', '--input', 'c.jdx', '--json']);
		expect(expandInputs(['--input', 'a.jdx', '--input', 'b.jdx'])).toEqual(['--input', 'a.jdx', '--input', 'b.jdx']);
		// A stray word before any --input stays a positional (the strict parser refuses it, as before).
		expect(expandInputs(['stray', '--input', 'a'])).toEqual(['stray', '--input', 'a']);
	});
});

describe('lotgate screen --input a.jdx b.jdx … (gasoline NIR, Kalivas 1997)', () => {
	test('screens every file, reports the unreadable one as unusable, exits 3; a 2-decimal cm⁻¹ file is not refused', { timeout: 120_000 }, () => {
		const dir = mkdtempSync(join(tmpdir(), 'lotgate-batch-'));
		const model = join(dir, 'model.json');
		const b = run('build', '--train', fixture('gasoline_nir.csv'), '--family-components', '3', '--out', model);
		expect(b.status, b.stderr).toBe(0);
		const g = gasoline();
		const q = (v: number) => Math.round(v * 1e6) / 1e6;
		const jdx = (name: string, axis: number[], values: number[], xUnits: 'NANOMETERS' | '1/CM') =>
			writeFileSync(join(dir, name), writeJcampAffn({ title: name, axis, values: values.map(q), xUnits, yUnits: 'ABSORBANCE', yFactor: 1e-6, dataType: 'NEAR INFRARED SPECTRUM', origin: 'test', owner: 'test' }));
		jdx('g01.jdx', g.axis, g.X[0], 'NANOMETERS');
		jdx('g02.jdx', g.axis, g.X[1], 'NANOMETERS');
		// G03 on a cm⁻¹ axis written with 2 decimals: 11111.11 cm⁻¹ is 900.00009 nm, short of 900 nm by 9·10⁻⁵ nm.
		const n = 1308;
		const wn = Array.from({ length: n }, (_, i) => +(5882.35 + (i * (11111.11 - 5882.35)) / (n - 1)).toFixed(2));
		wn[n - 1] = 11111.11;
		const at = (nm: number) => {
			const t = Math.min(Math.max(nm, 900), 1700);
			const j = Math.min(Math.floor((t - 900) / 2), 399);
			return g.X[2][j] + ((t - g.axis[j]) / 2) * (g.X[2][j + 1] - g.X[2][j]);
		};
		jdx('g03-cm.jdx', wn, wn.map((v) => at(1e7 / v)), '1/CM');
		const broken = readFileSync(join(dir, 'g02.jdx'), 'utf8');
		writeFileSync(join(dir, 'broken.jdx'), broken.slice(0, Math.floor(broken.length / 2)));
		const files = ['g01.jdx', 'broken.jdx', 'g02.jdx', 'g03-cm.jdx', 'missing.jdx'].map((f) => join(dir, f));
		const s = run('screen', '--model', model, '--input', ...files, '--json');
		expect(s.status, s.stderr).toBe(3);
		expect(s.stderr).toMatch(/2 of 5 inputs were unusable \(exit code 3\)/);
		const out = JSON.parse(s.stdout);
		expect(out.results.map((r: { id: string }) => r.id)).toEqual(['g01.jdx', 'broken.jdx', 'g02.jdx', 'g03-cm.jdx', 'missing.jdx']);
		const [r1, rb, r2, r3, rm] = out.results;
		expect(rb).toMatchObject({ verdict: 'unusable', reason: expect.stringMatching(/^the file could not be read: /), family: null });
		expect(rm).toMatchObject({ verdict: 'unusable', reason: expect.stringMatching(/cannot read \(ENOENT\)/) });
		for (const r of [r1, r2, r3]) expect(r.verdict, r.reason).not.toBe('unusable');
		expect(r3.reason ?? '').not.toMatch(/missing/);
		// The same batch without the bad files exits 0.
		const ok = run('screen', '--model', model, '--input', files[0], files[2], files[3]);
		expect(ok.status, ok.stderr).toBe(0);
		expect(ok.stdout.trim().split('\n')).toHaveLength(3 + 3);
	});
});
