// An artefact without splits screens exactly as before model trees: the artefacts and results in fixtures/v1
// were made by the engine at commit e8fa96b (scripts/v1-golden.ts), before this code existed. Version 1 has no
// integrity field; it loads with every derivable quantity recomputed (methods §12.1) and screens as a two-level tree.
// Sealing the same content as version 2 (what a rebuild of that time gives) must not change a result.
import { readFileSync } from 'node:fs';
import { describe, expect, test } from 'vitest';
import { parseArtefact, screen, treeOf, treeDepth, type TrainingSpectrum } from '../../../src/lib/analysis';
import { sealArtefact } from '../../../src/lib/analysis/integrity';
import { iris, root } from './fixtures';
import { resolve } from 'node:path';

const v1 = (name: string) => readFileSync(resolve(root, 'fixtures/v1', name), 'utf8');

function lactoseLibrary(): TrainingSpectrum[] {
	const lines = readFileSync(resolve(root, 'fixtures/demo/library/LAC-200.csv'), 'utf8').trim().split(/\r?\n/);
	const head = lines[0].split(',');
	const first = head.findIndex((h) => /^\d/.test(h));
	const axis = head.slice(first).map(Number);
	// the 12 held-out genuine spectra added later for the acceptance criteria (ids …-genuine-hNN) were not in the
	// library when the stored results were made
	return lines.slice(1).filter((l) => !/^[^,]*-genuine-h\d/.test(l)).map((l) => {
		const c = l.split(',');
		return { id: c[0], className: c[1], axis, values: c.slice(first).map(Number), unit: 'nm' as const };
	});
}

/** Same rounding as the script that stored the results (12 significant digits). */
const round = (x: unknown): unknown =>
	typeof x === 'number'
		? Number.isFinite(x)
			? Number(x.toPrecision(12))
			: null
		: Array.isArray(x)
			? x.map(round)
			: x && typeof x === 'object'
				? Object.fromEntries(Object.entries(x).map(([k, v]) => [k, round(v)]))
				: x;

describe.each([
	['iris', iris],
	['lac', lactoseLibrary]
])('stored schemaVersion 1 artefact "%s"', (name, spectra) => {
	const text = v1(`${name}.model.json`);
	const artefact = parseArtefact(text);
	const sealed = parseArtefact(JSON.stringify(sealArtefact({ ...JSON.parse(text), schemaVersion: 2 })));
	const stored = JSON.parse(v1(`${name}.results.json`)) as Record<string, unknown>[];
	test('version 1 itself loads as a two-level tree, and its sealed copy screens the same', () => {
		expect(artefact.schemaVersion).toBe(1);
		expect(sealed.schemaVersion).toBe(2);
		expect(artefact.splits).toBeUndefined();
		expect(treeDepth(treeOf(artefact))).toBe(2);
		const first = spectra()[0];
		expect(screen(sealed, first)).toEqual(screen(artefact, first));
	});
	test('every spectrum screens to the stored verdict, profile, reason and statistics', () => {
		const input = spectra();
		expect(input.length).toBe(stored.length);
		input.forEach((s, i) => {
			const r = screen(artefact, s);
			const { path, levels, ...before } = r;
			expect(round(before)).toEqual(stored[i]);
			// the new fields agree with the old ones
			expect(path).toEqual(r.verdict === 'genuine' ? [artefact.genuine] : r.verdict === 'suspect' ? [r.profile] : []);
			expect(levels.length).toBe(1);
			expect(levels[0].chosen).toBe(path[0] ?? null);
		});
	});
});
