import { describe, expect, test } from 'vitest';
import { AnalysisError, linearity, peakPositions, quadraticVertex, rmsNoise } from '../../../src/lib/analysis';

describe('quadratic vertex (least squares, exact on a parabola)', () => {
	test('y = 3 − 2(x − 1.3)² sampled at 0,1,2,3 → vertex 1.3, height 3 (algebra)', () => {
		const x = [0, 1, 2, 3];
		const v = quadraticVertex(x, x.map((t) => 3 - 2 * (t - 1.3) ** 2));
		expect(v.position).toBeCloseTo(1.3, 12);
		expect(v.height).toBeCloseTo(3, 12);
		expect(v.curvature).toBeCloseTo(-2, 12);
	});
});

// A synthetic standard: Gaussian bands (FWHM 20 nm) at positions off the 2-nm grid, like the certified bands of a
// wavelength standard. The five-point parabola on a Gaussian this wide is biased by less than 0.01 nm when the
// band sits between grid points (Taylor expansion of the Gaussian's log: the fit sees a near-parabola over ±4 nm,
// i.e. ±0.2 FWHM) — the test asserts 0.02 nm.
describe('peak positions on a synthetic standard', () => {
	const centres = [1261.3, 1681.7, 1935.1];
	const axis = Array.from({ length: 551 }, (_, i) => 1200 + 2 * i); // 1200–2300 nm, 2-nm step
	const g = (x: number, c: number) => Math.exp((-4 * Math.log(2) * (x - c) ** 2) / 20 ** 2);
	const values = axis.map((x) => 0.1 + centres.reduce((s, c) => s + 0.5 * g(x, c), 0));
	test('each band is found within 0.02 nm of its true centre', () => {
		const found = peakPositions(axis, values, [1262, 1680, 1936], { window: 8 });
		found.forEach((p, i) => expect(Math.abs(p.position - centres[i])).toBeLessThan(0.02));
		expect(found[0].error).toBeCloseTo(found[0].position - 1262, 12);
	});
	test('a shifted instrument shows the shift (every band +0.8 nm)', () => {
		const shifted = axis.map((x) => 0.1 + centres.reduce((s, c) => s + 0.5 * g(x, c + 0.8), 0));
		const found = peakPositions(axis, shifted, centres, { window: 8 });
		for (const p of found) expect(p.error).toBeGreaterThan(0.78), expect(p.error).toBeLessThan(0.82);
	});
	test('a band outside the window or outside the spectrum is refused with a reason', () => {
		expect(() => peakPositions(axis, values, [1400], { window: 8 })).toThrow(/edge of the window/);
		expect(() => peakPositions(axis, values, [2600], { window: 8 })).toThrow(AnalysisError);
	});
});

describe('photometric figures', () => {
	test('linearity of y = 0.98x + 0.01 on four standards is exact (OLS)', () => {
		const ref = [0.02, 0.1, 0.5, 0.99];
		const r = linearity(ref, ref.map((x) => 0.98 * x + 0.01));
		expect(r.slope).toBeCloseTo(0.98, 12);
		expect(r.intercept).toBeCloseTo(0.01, 12);
		expect(() => linearity([1, 1, 1], [1, 2, 3])).toThrow(/not all be equal/);
	});
	test('RMS noise removes a straight baseline: ±e alternating on a slope gives e', () => {
		const x = Array.from({ length: 100 }, (_, i) => 1000 + i);
		// Alternating ±e is orthogonal to a line only approximately; with an even count the fitted slope is tiny.
		const y = x.map((t, i) => 0.001 * t + (i % 2 ? 2e-4 : -2e-4));
		expect(rmsNoise(x, y)).toBeCloseTo(2e-4, 6);
	});
});
