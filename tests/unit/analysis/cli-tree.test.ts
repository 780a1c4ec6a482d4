// `lotgate build` with label paths and --node, `lotgate screen --json` with path and levels, and `--library`
// identification (issue 13 §4, an exact contract). The spectra are the invented demo generator's: they test the
// command line's wiring, not a formula.
import { beforeAll, describe, expect, test } from 'vitest';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../../src/lib/cli/main';
import { treeLibrary, writeCsvMatrix } from '../../../src/lib/demo';
import { root } from './fixtures';

const dir = mkdtempSync(join(tmpdir(), 'lotgate-cli-tree-'));
async function run(...args: string[]): Promise<{ status: number; stdout: string; stderr: string }> {
	let stdout = '';
	let stderr = '';
	const status = await main(args, { stdout: (t) => (stdout += t), stderr: (t) => (stderr += t) });
	return { status, stdout, stderr };
}

const lib = treeLibrary();
const csv = (name: string, rows: typeof lib, label: (c: string) => string = (c) => c) => {
	const file = join(dir, name);
	writeFileSync(file, writeCsvMatrix(['id', 'class', 'lot'], rows[0].axis, rows.map((r) => ({ meta: { id: r.id, class: label(r.className), lot: r.group }, values: r.values })), 6));
	return file;
};
const train = csv('train.csv', lib.filter((r) => r.role === 'training'));
const flatTrain = csv('flat.csv', lib.filter((r) => r.role === 'training'), (c) => c.split('/')[0]);
const tests = lib.filter((r) => r.role !== 'training');
const input = csv('input.csv', tests);
// wrong-material containers on the instruments' 2 nm grid, the grid of the demo MCC library the other model is built on
const mccInput = csv('mcc.csv', treeLibrary({ step: 2 }).filter((r) => r.className === 'mcc'));
const RECIPE = 'snv, savgol(5,2,1), center';
const tree = join(dir, 'lactose.json');
const json = (text: string) => JSON.parse(text) as { results: Record<string, unknown>[] };

beforeAll(async () => {
	const b = await run('build', '--train', train, '--class-column', 'class', '--group-column', 'lot', '--genuine', 'genuine', '--recipe', RECIPE, '--meta', 'material=LAC-TREE', '--out', tree);
	expect(b.status, b.stderr).toBe(0);
}, 120_000);

describe('lotgate build with label paths', () => {
	test('the tree follows from the labels; one-class nodes by default; the build names each split', () => {
		const a = JSON.parse(readFileSync(tree, 'utf8'));
		expect(a.classes).toEqual(['genuine', 'diluted', 'substituted']);
		expect(a.splits.map((s: { path: string[]; method: string }) => `${s.path.join('/')}:${s.method}`)).toEqual(['genuine:one-class', 'diluted:one-class']);
		expect(a.meta.material).toBe('LAC-TREE');
	});
	test('--node PATH=plsda|knn makes those nodes discriminant', { timeout: 120_000 }, async () => {
		const out = join(dir, 'disc.json');
		const b = await run('build', '--train', train, '--class-column', 'class', '--genuine', 'genuine', '--recipe', RECIPE, '--node', 'diluted=plsda', '--node', 'genuine=knn', '--out', out);
		expect(b.status, b.stderr).toBe(0);
		expect(b.stderr).toMatch(/diluted \(30 spectra\): PLS-DA, \d+ components \(cv\)/);
		expect(b.stderr).toMatch(/genuine \(30 spectra\): kNN, k = \d+ \(cv\)/);
		const a = JSON.parse(readFileSync(out, 'utf8'));
		expect(a.splits.map((s: { method: string }) => s.method)).toEqual(['knn', 'plsda']);
		const s = json((await run('screen', '--model', out, '--input', input, '--json')).stdout);
		const diluted = s.results.filter((x) => String(x.id).startsWith('diluted-'));
		expect(diluted).toHaveLength(6);
		for (const r of diluted) expect((r.levels as { method: string }[])[1].method).toBe('plsda');
	});
	test.each([
		[['--node', 'diluted'], /--node must be PATH=plsda or PATH=knn \(e\.g\. diluted=plsda\), got "diluted"/],
		[['--node', 'diluted=svm'], /--node must be PATH=plsda or PATH=knn/],
		[['--node', 'substituted=knn'], /node "substituted" has no children in the training labels/],
		[['--node', 'diluted=knn', '--node', 'diluted=plsda'], /--node names "diluted" twice/]
	])('bad --node %j is refused (exit 1) with the reason', { timeout: 60_000 }, async (extra, message) => {
		const b = await run('build', '--train', train, '--class-column', 'class', '--genuine', 'genuine', ...extra, '--out', join(dir, 'x.json'));
		expect(b.status).toBe(1);
		expect(b.stderr).toMatch(message);
	});
	test('flat labels still give the two-level model', { timeout: 60_000 }, async () => {
		const out = join(dir, 'flat.json');
		expect((await run('build', '--train', flatTrain, '--class-column', 'class', '--recipe', RECIPE, '--out', out)).status).toBe(0);
		const a = JSON.parse(readFileSync(out, 'utf8'));
		expect(a.classes).toEqual(['genuine', 'diluted', 'substituted']);
		expect(a.splits).toEqual([]);
		const s = json((await run('screen', '--model', out, '--input', input, '--json')).stdout);
		for (const r of s.results) expect((r.path as string[]).length).toBeLessThanOrEqual(1);
	});
});

describe('lotgate screen --json on a tree', () => {
	test('each result keeps verdict and profile and adds path and levels', async () => {
		const s = await run('screen', '--model', tree, '--input', input, '--json');
		expect(s.status, s.stderr).toBe(0);
		const results = json(s.stdout).results;
		expect(results).toHaveLength(tests.length);
		results.forEach((r, i) => {
			const truth = tests[i].className;
			expect(Object.keys(r)).toEqual(['id', 'verdict', 'profile', 'ambiguous', 'reason', 'family', 'classes', 'path', 'levels']);
			if (truth === 'mcc') {
				expect(r.verdict).toBe('not-this-material');
				expect(r.path).toEqual([]);
				return;
			}
			const path = truth.split('/');
			expect(r.path).toEqual(path);
			expect(r.verdict).toBe(path[0] === 'genuine' ? 'genuine' : 'suspect');
			expect(r.profile).toBe(path[0] === 'genuine' ? null : path[0]);
			const levels = r.levels as { node: string[]; chosen: string; accepted: string[]; stats: Record<string, { cCrit: number; accepted: boolean }> }[];
			expect(levels.map((l) => l.chosen)).toEqual(path);
			expect(levels.map((l) => l.node)).toEqual(path.map((_, k) => path.slice(0, k)));
			for (const l of levels) for (const a of l.accepted) expect(l.stats[a].accepted).toBe(true);
		});
	});
	test('the table shows the path when the tree is deeper than two levels', async () => {
		const s = await run('screen', '--model', tree, '--input', input);
		expect(s.stdout).toMatch(/^id\s+verdict\s+path\s+family c\/crit/m);
		expect(s.stdout).toMatch(/diluted-starch-1-6\s+suspect:diluted\s+suspect › diluted › starch/);
	});
});

describe('lotgate screen --library', () => {
	const mccCsv = join(root, 'fixtures/demo/library/MCC-100.csv');
	const mccNamed = join(dir, 'mcc-named.json');
	const mccPlain = join(dir, 'mcc-plain.json');
	const flat = join(dir, 'flat.json');
	beforeAll(async () => {
		const a = await run('build', '--train', mccCsv, '--recipe', RECIPE, '--meta', 'material=MCC-100', '--out', mccNamed);
		expect(a.status, a.stderr).toBe(0);
		const b = await run('build', '--train', mccCsv, '--recipe', RECIPE, '--out', mccPlain);
		expect(b.status, b.stderr).toBe(0);
	}, 180_000);
	const mccRows = () => Array.from({ length: 6 }, (_, i) => tests.length + i);
	test('a not-this-material result names the other material (meta.material) and its c/c_crit; other results have no resembles', async () => {
		const s = await run('screen', '--model', tree, '--input', input, '--input', mccInput, '--library', mccNamed, '--json');
		expect(s.status, s.stderr).toBe(0);
		const results = json(s.stdout).results;
		expect(results).toHaveLength(tests.length + 6);
		for (const i of mccRows()) {
			expect(results[i].verdict).toBe('not-this-material');
			const r = results[i].resembles as { material: string; ratio: number };
			expect(Object.keys(r)).toEqual(['material', 'ratio']);
			expect(r.material).toBe('MCC-100');
			expect(r.ratio).toBeGreaterThan(0);
			expect(r.ratio).toBeLessThanOrEqual(1);
		}
		for (const r of results) expect('resembles' in r).toBe(r.verdict === 'not-this-material');
		expect(results.filter((r) => r.verdict !== 'not-this-material').length).toBe(15);
	});
	test('without meta.material the file name names the material; a table column shows it', async () => {
		const s = json((await run('screen', '--model', tree, '--input', input, '--input', mccInput, '--library', mccPlain, '--json')).stdout);
		expect((s.results[mccRows()[0]].resembles as { material: string }).material).toBe('mcc-plain');
		const t = await run('screen', '--model', tree, '--input', mccInput, '--library', mccPlain);
		expect(t.stdout).toMatch(/mcc-1-1\s+not-this-material\s+.*mcc-plain \(0\.\d{3}\)/);
	});
	test('null when no other material accepts it', async () => {
		const s = json((await run('screen', '--model', tree, '--input', input, '--input', mccInput, '--library', flat, '--json')).stdout);
		for (const i of mccRows()) expect(s.results[i].resembles).toBeNull();
	});
	test('an unreadable library is refused naming the file', async () => {
		const bad = join(dir, 'bad.json');
		writeFileSync(bad, '{"schemaVersion": 3}');
		const s = await run('screen', '--model', tree, '--input', input, '--library', bad);
		expect(s.status).toBe(1);
		expect(s.stderr).toMatch(/bad\.json: model artefact: /);
	});
});
