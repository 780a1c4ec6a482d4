import { describe, expect, test } from 'vitest';
import { t2LimitNew, t2LimitTraining } from '../../../src/lib/analysis/limits/hotelling';
import { speBox, speJacksonMudholkar, speMoments } from '../../../src/lib/analysis/limits/spe';
import { cCritical, cOutlier, dofMoments, dofRobust, robustFromMedianIqr, ddStatistic } from '../../../src/lib/analysis/limits/ddsimca';
import { chi2Inv, normalInv } from '../../../src/lib/analysis/quantiles';
import { createRng } from '../../../src/lib/analysis/prng';

describe('Hotelling T² limits', () => {
	// NIST/SEMATECH e-Handbook §6.5.4.3 (Phase II, new observation) and Tracy, Young & Mason 1992
	// (training objects); n = 30, k = 3, α = 0.05 verified numerically in docs/methods.md §7.1 [chk].
	test('n=30, k=3, α=0.05: F-limit 9.857 (new sample), Beta-limit 7.164 (training)', () => {
		expect(t2LimitNew(30, 3, 0.05)).toBeCloseTo(9.857, 3);
		expect(t2LimitTraining(30, 3, 0.05)).toBeCloseTo(7.164, 3);
	});
	test('F limit approaches χ²_k as n → ∞ (docs/methods.md §7.1: χ² only as n → ∞)', () => {
		expect(t2LimitNew(1e6, 3, 0.05)).toBeCloseTo(chi2Inv(0.95, 3), 2);
	});
	test('refuses n ≤ k + 1', () => {
		expect(() => t2LimitNew(4, 3, 0.05)).toThrow(/n > k \+ 1/);
	});
});

describe('SPE limits', () => {
	// With m equal residual eigenvalues λ, Q/λ ~ χ²_m exactly (sum of m independent λ·χ²₁), and Box's
	// eigenvalue form g = θ₂/θ₁ = λ, h = θ₁²/θ₂ = m reduces to that exact law (Box 1954, Thm 1).
	test('Box eigenvalue form is exact for equal residual eigenvalues', () => {
		const lam = 0.3;
		const m = 12;
		expect(speBox(m * lam, m * lam ** 2, 0.05)).toBeCloseTo(lam * chi2Inv(0.95, m), 12);
	});
	// Jackson & Mudholkar 1979: h₀ = 1 − 2θ₁θ₃/(3θ₂²) = 1/3 for equal eigenvalues, i.e. the
	// Wilson–Hilferty cube-root normal approximation of χ²_m, accurate to well under 1 % for m ≥ 10.
	test('Jackson–Mudholkar matches the exact χ² law within 0.5 % for equal eigenvalues (m = 20)', () => {
		const lam = 2;
		const m = 20;
		const jm = speJacksonMudholkar(m * lam, m * lam ** 2, m * lam ** 3, 0.05);
		expect(Math.abs(jm / (lam * chi2Inv(0.95, m)) - 1)).toBeLessThan(0.005);
	});
	test('Jackson–Mudholkar uses the one-sided z_{1−α} (formula in docs/methods.md §7.2)', () => {
		const [t1, t2, t3] = [1.7, 0.9, 0.6];
		const h0 = 1 - (2 * t1 * t3) / (3 * t2 * t2);
		const z = normalInv(0.99);
		const expected = t1 * ((z * Math.sqrt(2 * t2 * h0 * h0)) / t1 + 1 + (t2 * h0 * (h0 - 1)) / (t1 * t1)) ** (1 / h0);
		expect(speJacksonMudholkar(t1, t2, t3, 0.01)).toBeCloseTo(expected, 12);
	});
	// Q = Σ λ_j z_j² has the exact law used by JM; a seeded simulation checks the exceedance rate.
	test('Jackson–Mudholkar exceedance ≈ α for Q = Σ λ_j z_j² (simulation of the defining law)', () => {
		const lam = Array.from({ length: 30 }, (_, j) => 0.8 ** j);
		const th = [1, 2, 3].map((i) => lam.reduce((s, l) => s + l ** i, 0));
		const lim = speJacksonMudholkar(th[0], th[1], th[2], 0.05);
		const gauss = createRng(12345).normal;
		let over = 0;
		const N = 20000;
		for (let r = 0; r < N; r++) {
			let q = 0;
			for (const l of lam) q += l * gauss() ** 2;
			if (q > lim) over++;
		}
		expect(Math.abs(over / N - 0.05)).toBeLessThan(0.006);
	});
	test('moment form: g = v/(2m), h = 2m²/v with v on n − 1 (Nomikos & MacGregor 1995)', () => {
		const q = [1, 2, 3, 4, 5];
		// m = 3, v = 2.5 → g = 5/12, h = 7.2
		expect(speMoments(q, 0.05)).toBeCloseTo((2.5 / 6) * chi2Inv(0.95, 7.2), 12);
	});
});

describe('DD-SIMCA estimators and boundaries', () => {
	test('method of moments on hand-computable distances: 1..5 → x₀ = 3, N = round(2·9/2.5) = 7 (Pomerantsev 2008)', () => {
		expect(dofMoments([1, 2, 3, 4, 5])).toEqual({ x0: 3, dof: 7 });
		expect(dofMoments([1, 100]).dof).toBe(1);
	});
	// An earlier NumPy/SciPy check for this project (docs/methods.md §7.3) said the robust estimator's constants recover N = 1…70 and u₀ within 0.5 %
	// when M and S are the exact median and IQR of u₀·χ²(N)/N (Pomerantsev & Rodionova 2014).
	// Found here: with the constants as printed, N = 1…51 come back exactly and N = 52…70 come back
	// as N + 1 (the exponent gives 52.53 for N = 52); u₀ stays within 0.5 % throughout.
	test('robust estimator constants recover N = 1..51 exactly, N = 52..70 within one, u₀ within 0.5 %', () => {
		const u0 = 3.7;
		for (let N = 1; N <= 70; N++) {
			const M = (u0 * chi2Inv(0.5, N)) / N;
			const S = (u0 * (chi2Inv(0.75, N) - chi2Inv(0.25, N))) / N;
			const r = robustFromMedianIqr(M, S);
			if (N <= 51) expect(r.dof, `N = ${N}`).toBe(N);
			else expect(Math.abs(r.dof - N), `N = ${N}`).toBeLessThanOrEqual(1);
			expect(Math.abs(r.x0 / u0 - 1)).toBeLessThan(0.005);
		}
	});
	test('robust estimator boundaries: N = 1 when S/M > 2.685592, N = 100 when S/M < 0.194566', () => {
		expect(robustFromMedianIqr(1, 3).dof).toBe(1);
		expect(robustFromMedianIqr(1, 0.1).dof).toBe(100);
		expect(dofRobust([1, 2, 3, 4, 5, 6, 7, 8, 9, 10]).dof).toBeGreaterThan(0);
	});
	test('c = N_h·h/h₀ + N_q·v/v₀; c_crit = χ²_{1−α}(N_h+N_q); c_out = χ²((1−γ)^{1/I}; N_h+N_q)', () => {
		expect(ddStatistic(2, 0.5, { h0: 4, v0: 0.25, nh: 3, nq: 5 })).toBeCloseTo(1.5 + 10, 12);
		expect(cCritical(8, 0.05)).toBeCloseTo(15.507, 3); // χ²_0.95(8), NIST §1.3.6.7.4, from memory
		expect(cOutlier(8, 0.01, 50)).toBeCloseTo(chi2Inv(0.99 ** (1 / 50), 8), 12);
	});
});
