// Property tests: whatever bytes arrive, the parser refuses with SpectrumFileError or returns
// finite values (non-finite ones only when gaps are allowed, and then listed in `missing`),
// and it returns promptly. Inputs are bounded (≤ 8 KB) so every run stays fast.
import fc from 'fast-check';
import { readdirSync } from 'node:fs';
import { describe, expect, test } from 'vitest';
import { demoScenario } from '../../../src/lib/demo';
import { parseSpectrumFile, SpectrumFileError } from '../../../src/lib/spectra';
import { fixture } from './helpers';

const names = readdirSync(new URL('../../../fixtures/spectra/', import.meta.url)).filter((n) => /\.(jdx|csv|tsv)$/.test(n) && !n.startsWith('err-'));
const demo = demoScenario();
const seeds: Uint8Array[] = [
	...names.map(fixture),
	demo.lots.find((l) => l.lotKey === 'lac-good')!.files[0].bytes,
	demo.lots.find((l) => l.lotKey === 'mcc-good')!.files[0].bytes,
	demo.lots.find((l) => l.lotKey === 'cit-good')!.files[0].bytes
];

const options = fc.record({ allowGaps: fc.boolean(), minPoints: fc.constantFrom(1, 3, 50) });

function outcome(bytes: Uint8Array, opts: { allowGaps: boolean; minPoints: number }): 'ok' | 'refused' {
	const t0 = performance.now();
	try {
		const r = parseSpectrumFile(bytes, 'fuzz.dat', opts);
		for (const s of r.spectra) {
			expect(s.axis.length).toBe(s.values.length);
			expect(s.axis.every(Number.isFinite)).toBe(true);
			const bad = Array.from(s.values).flatMap((v, i) => (Number.isFinite(v) ? [] : [i]));
			expect(bad).toEqual(s.missing);
			if (!opts.allowGaps) expect(bad).toEqual([]);
		}
		return 'ok';
	} catch (e) {
		if (!(e instanceof SpectrumFileError)) throw e;
		expect(typeof e.code).toBe('string');
		return 'refused';
	} finally {
		expect(performance.now() - t0).toBeLessThan(1000);
	}
}

// Characters that matter to the parsers, so mutations reach deep into the decoders.
const ALPHABET = '0123456789+-.,; \t\n\r@ABCDEFGHIabcdefghi%JKLMNOPQRjklmnopqrSTUVWXYZs?$#=()Ee';
const interesting = fc.constantFrom(...Array.from(ALPHABET, (c) => c.charCodeAt(0)));

describe('robustness (fast-check)', () => {
	test('every seed file parses as it stands', () => {
		for (const s of seeds) expect(outcome(s, { allowGaps: true, minPoints: 3 })).toBe('ok');
	});

	test('random bytes', () => {
		fc.assert(fc.property(fc.uint8Array({ maxLength: 8192 }), options, (b, o) => void outcome(b, o)), { numRuns: 300 });
	});

	test('random text made of JCAMP-DX and CSV characters', () => {
		const text = fc.string({ unit: fc.constantFrom(...ALPHABET), maxLength: 2000 });
		fc.assert(fc.property(text, options, (t, o) => void outcome(new TextEncoder().encode(`##TITLE=x\n##JCAMP-DX=5.01\n${t}`), o)), { numRuns: 200 });
		fc.assert(fc.property(text, options, (t, o) => void outcome(new TextEncoder().encode(t), o)), { numRuns: 200 });
	});

	test('truncations of valid files', () => {
		fc.assert(
			fc.property(fc.nat(seeds.length - 1), fc.nat(), options, (k, cut, o) => {
				const s = seeds[k];
				void outcome(s.subarray(0, cut % (s.length + 1)), o);
			}),
			{ numRuns: 300 }
		);
	});

	test('single-byte mutations of valid files (any byte, or a parser-relevant character)', () => {
		fc.assert(
			fc.property(fc.nat(seeds.length - 1), fc.nat(), fc.oneof(fc.integer({ min: 0, max: 255 }), interesting), options, (k, pos, byte, o) => {
				const b = seeds[k].slice();
				b[pos % b.length] = byte;
				void outcome(b, o);
			}),
			{ numRuns: 600 }
		);
	});

	test('a truncated demo file is refused as truncated', () => {
		const corrupt = demo.lots.find((l) => l.lotKey === 'lac-corrupt')!.files[1];
		expect(() => parseSpectrumFile(corrupt.bytes, corrupt.name)).toThrow(SpectrumFileError);
		expect(outcome(corrupt.bytes, { allowGaps: false, minPoints: 50 })).toBe('refused');
	});
});
