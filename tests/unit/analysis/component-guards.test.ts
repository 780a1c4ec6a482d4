import { describe, expect, test } from 'vitest';
import { buildModel } from '../../../src/lib/analysis';
import { pca } from '../../../src/lib/analysis/pca';
import { ekfPressDirect } from '../../../src/lib/analysis/ekf';
import { blockedPressAccumulate, blockedPressDirect, blockFactors, variableBlocks } from '../../../src/lib/analysis/ekf-blocked';
import { scoresInto } from '../../../src/lib/analysis/projection';
import { centred, gasoline } from './fixtures';

// Issue 12 §4: component count with variables left out in contiguous blocks (Bro, Kjeldahl, Smilde & Kiers 2008,
// Anal. Bioanal. Chem. 390:1241–1251), a warning at the cap, and a warning at low degrees of freedom.

function foldSetup(A: number) {
	const g = gasoline();
	const p = g.axis.length;
	const train = centred(g.X.slice(5, 40));
	const fit = pca(train, A);
	const mean = new Float64Array(p);
	for (let i = 5; i < 40; i++) for (let j = 0; j < p; j++) mean[j] += g.X[i][j] / 35;
	const z = Float64Array.from(g.X[0], (v, j) => v - mean[j]);
	const t = new Float64Array(A);
	scoresInto(fit.loadings, z, A, p, t);
	return { p, fit, z, t };
}

describe('blocked ekf PRESS: closed form against the literal least-squares definition (gasoline, Kalivas 1997)', () => {
	test('blocks of ~40 variables: z_B − P_B M⁻¹(t − P_Bᵀz_B) equals solving (P₋ᴮᵀP₋ᴮ)t̂ = P₋ᴮᵀz₋ᴮ per block', () => {
		const A = 5;
		const { p, fit, z, t } = foldSetup(A);
		const blocks = variableBlocks(p, 10);
		const press = new Float64Array(A + 1);
		blockedPressAccumulate(z, fit.loadings, t, p, blockFactors(fit.loadings, A, p, blocks), press);
		for (const a of [1, 3, 5]) expect(Math.abs(press[a] / blockedPressDirect(z, fit.loadings, a, p, blocks) - 1)).toBeLessThan(1e-9);
	});
	test('blocks of one variable reduce to the element-wise form e_j/(1 − d_j)', () => {
		const A = 4;
		const { p, fit, z, t } = foldSetup(A);
		const press = new Float64Array(A + 1);
		blockedPressAccumulate(z, fit.loadings, t, p, blockFactors(fit.loadings, A, p, variableBlocks(p, p)), press);
		for (const a of [1, 2, 4]) expect(Math.abs(press[a] / ekfPressDirect(z, fit.loadings, a, p) - 1)).toBeLessThan(1e-9);
	});
	test('variable blocks are contiguous, cover every variable once, and never exceed p', () => {
		const b = variableBlocks(401, 100);
		expect(b.start[0]).toBe(0);
		expect(b.end[99]).toBe(401);
		for (let k = 1; k < 100; k++) expect(b.start[k]).toBe(b.end[k - 1]);
		expect(variableBlocks(4, 100).start.length).toBe(4);
	});
});

describe('suggested component count on densely sampled spectra', () => {
	const g = gasoline();
	const dense = (P: number) => {
		const ax = Array.from({ length: P }, (_, i) => 900 + (800 * i) / (P - 1));
		return g.X.map((x, k) => ({
			id: `g${k}`,
			axis: ax,
			values: ax.map((xx) => {
				const f = (xx - 900) / 2;
				const i = Math.min(Math.floor(f), 399);
				const w = f - i;
				return x[i] * (1 - w) + x[i + 1] * w;
			}),
			unit: 'nm' as const
		}));
	};
	test('gasoline resampled to 4000 points: one variable at a time runs into the cap (15) and warns; blocks do not', { timeout: 120_000 }, () => {
		const rows = dense(4000);
		const elementwise = buildModel(rows, { variableBlocks: 4000 }).family;
		expect(elementwise.components).toBe(15);
		expect(elementwise.warnings!.join('\n')).toMatch(/suggested component count equals the cap \(15\)/);
		const blocked = buildModel(rows).family;
		expect(blocked.variableBlocks).toBe(100);
		expect(blocked.components).toBeLessThan(15);
		expect(blocked.warnings!.join('\n')).not.toMatch(/equals the cap/);
		// the same data at its native 401 points gives a count within a few components of the dense one
		const native = buildModel(g.X.map((x, k) => ({ id: `g${k}`, axis: g.axis, values: x, unit: 'nm' as const }))).family;
		expect(Math.abs(native.components - blocked.components)).toBeLessThanOrEqual(4);
	});
});

describe('low degrees of freedom and the fitted χ² (Pomerantsev 2008)', () => {
	const g = gasoline();
	const model = (A: number) => buildModel(g.X.map((x, k) => ({ id: `g${k}`, axis: g.axis, values: x, unit: 'nm' as const })), { familyComponents: A }).family;
	test('gasoline with A = 2 has N_h = 1 and N_q = 2: both are named in a warning; with A = 6 (N_h = N_q = 3) none', () => {
		const m = model(2);
		expect([m.nh, m.nq]).toEqual([1, 2]);
		const w = m.warnings!.join('\n');
		expect(w).toContain('N_h = 1 (below 3)');
		expect(w).toContain('N_q = 2 (below 3)');
		const ok = model(6);
		expect([ok.nh, ok.nq]).toEqual([3, 3]);
		expect(ok.warnings!.join('\n')).not.toMatch(/below 3/);
	});
	test('the observed distance quantiles are stored beside the fitted χ²(N) ones', () => {
		const m = model(6);
		const fit = m.distanceFit!;
		expect(fit.p).toEqual([0.5, 0.75, 0.9, 0.95, 0.99]);
		// χ²(3): median 2.366, 95th percentile 7.815 (NIST/SEMATECH e-Handbook §1.3.6.7.4)
		expect(fit.h.fitted[0]).toBeCloseTo(2.366, 3);
		expect(fit.h.fitted[3]).toBeCloseTo(7.815, 3);
		for (let k = 1; k < 5; k++) expect(fit.v.observed[k]).toBeGreaterThanOrEqual(fit.v.observed[k - 1]);
		// observed = N·v/v₀ of the limit-setting (cross-validated) distances, median by R type 7
		const scaled = m.training.cv.v.map((v) => (m.nq * v) / m.v0).sort((x, y) => x - y);
		expect(fit.v.observed[0]).toBeCloseTo((scaled[29] + scaled[30]) / 2, 12);
	});
});
