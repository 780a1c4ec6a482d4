import { describe, expect, test } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fixture, root } from './fixtures';

const run = (...args: string[]) => spawnSync(process.execPath, [join(root, 'bin/lotgate.js'), ...args], { cwd: root, encoding: 'utf8' });

describe('lotgate command line on the gasoline CSV (Kalivas 1997)', () => {
	const dir = mkdtempSync(join(tmpdir(), 'lotgate-cli-'));
	const model = join(dir, 'model.json');
	test('build (family-only) then screen --json', { timeout: 60_000 }, () => {
		const b = run('build', '--train', fixture('gasoline_nir.csv'), '--out', model);
		expect(b.stderr).toContain('model written');
		expect(b.status).toBe(0);
		const art = JSON.parse(readFileSync(model, 'utf8'));
		expect(art.family.cvPress.length).toBeGreaterThan(2);
		const s = run('screen', '--model', model, '--input', fixture('gasoline_nir.csv'), '--json');
		expect(s.status).toBe(0);
		const out = JSON.parse(s.stdout);
		expect(out.modelVersion).toMatch(/^sha256:/);
		expect(out.results.length).toBe(60);
		const r = out.results[0];
		expect(Object.keys(r)).toEqual(['id', 'verdict', 'profile', 'ambiguous', 'reason', 'family', 'classes', 'path', 'levels']);
		expect(Object.keys(r.family)).toEqual(['scores', 't2', 'spe', 'h', 'v', 'c', 't2Limit', 'speLimit', 'cCrit', 'cOutlier', 'accepted']);
		expect(r.id).toBe('G01');
		// G01 trained the model: screening it again gives its fitted training distance, and the verdict follows c ≤ c_crit
		// (DD-SIMCA acceptance, Pomerantsev 2008). Both come from the artefact file, not from this screen's output.
		const at = art.family.training.ids.indexOf('G01');
		expect(at).toBeGreaterThanOrEqual(0);
		expect(r.family.c).toBeCloseTo(art.family.training.fitted.c[at], 9);
		expect(r.family.cCrit).toBe(art.family.cCrit);
		expect(r.verdict).toBe(art.family.training.fitted.c[at] <= art.family.cCrit ? 'genuine' : 'not-this-material');
	});
	test('build with classes and screen as a table', { timeout: 60_000 }, () => {
		const csv = readFileSync(fixture('gasoline_nir.csv'), 'utf8').trim().split('\n');
		const labelled = [csv[0].replace('"sample"', '"sample","grade"'), ...csv.slice(1).map((l, i) => l.replace(/^("[^"]*")/, `$1,"${i < 30 ? 'genuine' : 'blend'}"`))];
		const train = join(dir, 'labelled.csv');
		writeFileSync(train, labelled.join('\n'));
		const m2 = join(dir, 'm2.json');
		const b = run('build', '--train', train, '--class-column', 'grade', '--components', '3', '--out', m2);
		expect(b.status, b.stderr).toBe(0);
		const s = run('screen', '--model', m2, '--input', train);
		expect(s.status).toBe(0);
		expect(s.stdout).toMatch(/genuine c\/crit/);
		expect(s.stdout.split('\n').length).toBeGreaterThan(60);
	});
	test('a tampered model is refused by screen, naming the integrity check (issue 12 §2)', { timeout: 60_000 }, () => {
		const art = JSON.parse(readFileSync(model, 'utf8'));
		art.family.cCrit = 1e9;
		const tampered = join(dir, 'tampered.json');
		writeFileSync(tampered, JSON.stringify(art));
		const s = run('screen', '--model', tampered, '--input', fixture('gasoline_nir.csv'));
		expect(s.status).toBe(1);
		expect(s.stdout).toBe('');
		expect(s.stderr).toContain(`${tampered}: model artefact: integrity check failed`);
	});
	test('errors go to stderr with a non-zero exit, naming file, line and column', { timeout: 60_000 }, () => {
		const bad = join(dir, 'bad.csv');
		writeFileSync(bad, 'id,900,902,904\na,1,2,3\nb,1,x,3\n');
		const r = run('build', '--train', bad, '--out', join(dir, 'x.json'));
		expect(r.status).toBe(1);
		expect(r.stderr).toContain(`${bad}: line 3: column 3 ("902") holds "x", which is not a number`);
		const u = run('build', '--train', fixture('gasoline_nir.csv'));
		expect(u.status).not.toBe(0);
		expect(u.stderr).toMatch(/--out/);
		const m = run('screen', '--model', join(dir, 'missing.json'), '--input', bad);
		expect(m.status).toBe(1);
		expect(m.stderr).toContain('missing.json: cannot read the model');
	});
});
