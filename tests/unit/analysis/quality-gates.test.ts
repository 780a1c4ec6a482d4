// Spectral quality gates (docs/methods.md §22). Each gate on a crafted spectrum; the thresholds are the documented
// defaults (common practice). The sweep over real and demo data checks the gates do not refuse good spectra:
// the gasoline NIR set (Kalivas 1997, fixtures/open) and every demo library and lot spectrum except the designed faults.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { defaultThresholds, libraryRangeOf, runGates } from '../../../src/lib/analysis/quality-gates';
import { demoScenario } from '../../../src/lib/demo';

/** A smooth NIR-like absorbance spectrum: baseline 0.3 plus three Gaussian bands (peak about 0.9), with small noise. */
function nir(n = 500, scale = 1, noise = 5e-4, seed = 7): Float64Array {
	let s = seed;
	const rnd = () => ((s = (s * 16807) % 2147483647) / 2147483647 - 0.5) * 2;
	return Float64Array.from({ length: n }, (_, i) => {
		const x = i / (n - 1);
		const band = (c: number, w: number, h: number) => h * Math.exp(-((x - c) ** 2) / (2 * w * w));
		return scale * (0.3 + band(0.3, 0.03, 0.5) + band(0.55, 0.05, 0.6) + band(0.8, 0.02, 0.3)) + noise * rnd();
	});
}
const LIB_RANGE = libraryRangeOf([nir(500, 1, 5e-4, 1), nir(500, 1.02, 5e-4, 2), nir(500, 0.98, 5e-4, 3)])!;

describe('quality gates on crafted spectra', () => {
	it('passes a good absorbance spectrum through every gate', () => {
		expect(runGates({ values: nir(), technique: 'NIR', yUnits: 'ABSORBANCE', libraryRange: LIB_RANGE })).toEqual({ ok: true, checked: ['flat', 'wrong-ordinate', 'saturation', 'no-sample'] });
	});

	it('flat: a constant spectrum is unusable whatever the recipe (also Raman)', () => {
		const out = runGates({ values: new Float64Array(400).fill(0.42), technique: 'NIR' });
		expect(out).toMatchObject({ ok: false, gate: 'flat', value: 0 });
		expect(!out.ok && out.reason).toMatch(/^quality gate flat: the spectrum is flat \(max − min = 0/);
		expect(runGates({ values: new Float64Array(400).fill(1200), technique: 'Raman' })).toMatchObject({ ok: false, gate: 'flat' });
	});

	it('saturation: a run of 8 points clipped at one maximum value', () => {
		const y = nir();
		const top = Math.max(...y) + 0.2;
		for (let i = 270; i < 278; i++) y[i] = top;
		const out = runGates({ values: y, technique: 'NIR' });
		expect(out).toMatchObject({ ok: false, gate: 'saturation', value: 8 });
		expect(!out.ok && out.reason).toMatch(/8 consecutive points sit at the maximum value/);
		// Four points at the top are below the default run of 5: not saturation by the run rule.
		const y4 = nir();
		for (let i = 270; i < 274; i++) y4[i] = top;
		expect(runGates({ values: y4, technique: 'NIR' }).ok).toBe(true);
	});

	it('saturation: a value above the instrument ordinate ceiling (default 3.0 AU; the instrument may declare its own)', () => {
		const y = nir(500, 3.5);
		expect(runGates({ values: y, technique: 'NIR' })).toMatchObject({ ok: false, gate: 'saturation', value: Math.max(...y) });
		expect(runGates({ values: y, technique: 'NIR', thresholds: { ordinateCeiling: 4.5 } }).ok).toBe(true);
		expect(defaultThresholds('Raman').ordinateCeiling).toBe(65535);
	});

	it('no sample: an empty measurement at noise level compared with the library', () => {
		let s = 3;
		const rnd = () => ((s = (s * 16807) % 2147483647) / 2147483647 - 0.5) * 2;
		const empty = Float64Array.from({ length: 500 }, () => 0.002 + 5e-4 * rnd());
		const out = runGates({ values: empty, technique: 'NIR', libraryRange: LIB_RANGE });
		expect(out).toMatchObject({ ok: false, gate: 'no-sample' });
		expect(!out.ok && (out.value as number)).toBeLessThan(0.05);
		// Without a library the gate is not run (and says so in `checked`).
		expect(runGates({ values: empty, technique: 'NIR' })).toEqual({ ok: true, checked: ['flat', 'wrong-ordinate', 'saturation'] });
		// A weak but real spectrum (30 % of the library's range) is not "no sample".
		expect(runGates({ values: nir(500, 0.3), technique: 'NIR', libraryRange: LIB_RANGE }).ok).toBe(true);
	});

	it('wrong ordinate: percent reflectance by value range, and by ##YUNITS', () => {
		// R = 100·10^(−A): the same spectrum as percent reflectance runs from about 13 to 50.
		const pctR = nir().map((a) => 100 * 10 ** -a);
		const byRange = runGates({ values: pctR, technique: 'NIR' });
		expect(byRange).toMatchObject({ ok: false, gate: 'wrong-ordinate' });
		expect(!byRange.ok && byRange.reason).toMatch(/percent reflectance or transmittance/);
		// Fractional reflectance has an absorbance-like range: only the file's ##YUNITS gives it away.
		const fraction = nir().map((a) => 10 ** -a);
		expect(runGates({ values: fraction, technique: 'NIR' }).ok).toBe(true);
		expect(runGates({ values: fraction, technique: 'NIR', yUnits: 'REFLECTANCE' })).toMatchObject({ ok: false, gate: 'wrong-ordinate', value: 'REFLECTANCE' });
		expect(runGates({ values: fraction, technique: 'mid-IR', yUnits: '%T' })).toMatchObject({ ok: false, gate: 'wrong-ordinate' });
		expect(runGates({ values: nir(), technique: 'NIR', yUnits: 'LOG(1/R)' }).ok).toBe(true);
		// Raman has no absorbance to expect: the gate does not apply.
		expect(runGates({ values: pctR, technique: 'Raman', yUnits: 'COUNTS' }).ok).toBe(true);
	});

	it('refuses nonsense thresholds and input', () => {
		expect(() => runGates({ values: nir(), technique: 'NIR', thresholds: { saturationRun: 1 } })).toThrow(/saturationRun/);
		expect(() => runGates({ values: nir(), technique: 'NIR', thresholds: { noSampleRatio: 2 } })).toThrow(/below 1/);
		expect(() => runGates({ values: nir(), technique: 'UV' as never })).toThrow(/Unknown technique/);
		expect(() => runGates({ values: nir(), technique: 'NIR', libraryRange: -1 })).toThrow(/libraryRange/);
	});
});

describe('quality gates do not refuse good spectra', () => {
	it('the gasoline NIR set (Kalivas 1997): 60 of 60 pass, with the set itself as library', () => {
		const lines = readFileSync(join(__dirname, '../../../fixtures/open/gasoline_nir.csv'), 'utf8').trim().split('\n').slice(1);
		const rows = lines.map((l) => Float64Array.from(l.split(',').slice(2).map(Number)));
		expect(rows).toHaveLength(60);
		const lib = libraryRangeOf(rows)!;
		const refused = rows.map((y) => runGates({ values: y, technique: 'NIR', libraryRange: lib })).filter((o) => !o.ok);
		expect(refused).toEqual([]);
	});

	it('every demo library spectrum and every demo lot file except the truncated one', () => {
		const sc = demoScenario();
		const tech = new Map(sc.materials.map((m) => [m.code, m.technique as 'NIR' | 'Raman' | 'mid-IR']));
		const libRange = new Map([...tech.keys()].map((code) => [code, libraryRangeOf(sc.library.filter((r) => r.material === code && r.role === 'training').map((r) => r.values))]));
		const refusedLib = sc.library.filter((r) => !runGates({ values: r.values, technique: tech.get(r.material)!, libraryRange: libRange.get(r.material) }).ok);
		expect(refusedLib.map((r) => r.id)).toEqual([]);
		const files = sc.lots.flatMap((l) => l.files.filter((f) => !f.corrupt).map((f) => ({ lot: l, f })));
		expect(files.length).toBeGreaterThan(20);
		const refused = files.filter(({ lot, f }) => !runGates({ values: f.values, technique: tech.get(lot.material)!, libraryRange: libRange.get(lot.material) }).ok);
		expect(refused.map(({ f }) => f.name)).toEqual([]);
	});
});
