import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { chooseContainers, makePlan, mulberry32, nPlan, planCount, pPlan, rPlan, type PlanKind } from '../../src/lib/analysis/sampling';

// WHO TRS 929 (2005), Annex 4, Appendix 5 (rounding notes read in a public copy, quoted in docs/methods.md §15):
// n = 1 + √N by simple rounding; p = 0.4·√N and r = 1.5·√N rounded up to the next highest integer.
// Expected values below are computed by hand from those formulas.
describe('WHO TRS 929 Annex 4 plan sizes', () => {
	it.each([
		// N, n, p, r
		[1, 1, 1, 1], // n = round(2) capped at N = 1
		[2, 2, 1, 2], // n = round(2.414) = 2; r = ⌈2.121⌉ = 3 capped at 2
		[3, 3, 1, 3], // n = round(2.732) = 3 (Appendix 5's table says 2 "up to 3", from memory; the formula wins)
		[4, 3, 1, 3], // √4 = 2: n = 3 exactly, p = ⌈0.8⌉, r = 3 exactly
		[10, 4, 2, 5], // √10 = 3.162: n = round(4.162) = 4 (rounding up would give 5), p = ⌈1.265⌉, r = ⌈4.743⌉
		[12, 4, 2, 6], // √12 = 3.464: n = round(4.464) = 4, r = ⌈5.196⌉
		[13, 5, 2, 6], // √13 = 3.606: n = round(4.606) = 5 (the table's 7–13 → 4 disagrees at 13), r = ⌈5.408⌉
		[25, 6, 2, 8], // √25 = 5: n = 6, p = 2 exactly, r = ⌈7.5⌉
		[40, 7, 3, 10], // √40 = 6.325: n = round(7.325) = 7, p = ⌈2.530⌉, r = ⌈9.487⌉
		[100, 11, 4, 15], // √100 = 10: exact values, nothing to round
		[225, 16, 6, 23] // √225 = 15: 0.4·15 = 6.000000000000001 in floating point must stay 6; r = ⌈22.5⌉
	])('N = %i → n %i, p %i, r %i', (N, n, p, r) => {
		expect(nPlan(N)).toBe(n);
		expect(pPlan(N)).toBe(p);
		expect(rPlan(N)).toBe(r);
	});

	it('never exceeds N and grows with N', () => {
		let last = 0;
		for (let N = 1; N <= 2000; N++) {
			const n = nPlan(N);
			expect(n).toBeLessThanOrEqual(N);
			expect(n).toBeGreaterThanOrEqual(last);
			expect(rPlan(N)).toBeLessThanOrEqual(N);
			last = n;
		}
	});

	it('refuses a container count outside 1..10000', () => {
		expect(() => nPlan(0)).toThrow(/1 to 10000/);
		expect(() => nPlan(2.5)).toThrow(/whole number/);
		expect(() => makePlan({ containers: 10, kind: 'q' as PlanKind, seed: 1 })).toThrow(/plan must be one of/);
	});
});

describe('reproducible random choice', () => {
	it('mulberry32 is deterministic and uniform-looking on [0, 1)', () => {
		const a = mulberry32(42);
		const b = mulberry32(42);
		const xs = Array.from({ length: 10_000 }, () => a());
		expect(xs.slice(0, 5)).toEqual(Array.from({ length: 5 }, () => b()));
		expect(Math.min(...xs)).toBeGreaterThanOrEqual(0);
		expect(Math.max(...xs)).toBeLessThan(1);
		const mean = xs.reduce((s, x) => s + x, 0) / xs.length;
		expect(Math.abs(mean - 0.5)).toBeLessThan(0.02);
	});

	it('the same seed gives the same containers; the choice is distinct, sorted and in 1..N', () => {
		const one = chooseContainers(500, 24, 7);
		expect(chooseContainers(500, 24, 7)).toEqual(one);
		expect(new Set(one).size).toBe(24);
		expect([...one].sort((x, y) => x - y)).toEqual(one);
		expect(one.every((c) => c >= 1 && c <= 500)).toBe(true);
		expect(chooseContainers(500, 24, 8)).not.toEqual(one);
	});

	it('every container and the p-plan test all N containers', () => {
		expect(makePlan({ containers: 7, seed: 3 }).sampled).toEqual([1, 2, 3, 4, 5, 6, 7]);
		const p = makePlan({ containers: 7, kind: 'p', seed: 3 });
		expect(p.sampled).toHaveLength(7);
		expect(p.pooled).toBe(2);
		expect(planCount('p', 7)).toEqual({ count: 7, pooled: 2 });
	});

	it('the r-plan identity-tests every container, then picks r at random for individual testing', () => {
		const r = makePlan({ containers: 40, kind: 'r', seed: 5 });
		expect(r.count).toBe(40);
		expect(r.sampled).toEqual(Array.from({ length: 40 }, (_, i) => i + 1));
		expect(r.furtherTesting).toHaveLength(10);
		expect(r.furtherTesting).toEqual(chooseContainers(40, 10, 5));
		expect(planCount('r', 40)).toEqual({ count: 40, pooled: null, further: 10 });
	});

	it('only the n-plan screens fewer than N containers', () => {
		expect(makePlan({ containers: 40, kind: 'n', seed: 5 }).sampled).toHaveLength(7);
		for (const kind of ['every', 'p', 'r'] as const) expect(makePlan({ containers: 40, kind, seed: 5 }).sampled).toHaveLength(40);
	});
});

describe('docs/methods.md §15 worked example is executed', () => {
	const doc = readFileSync(join(__dirname, '../../docs/methods.md'), 'utf8');
	const block = /```sampling-example\n([\s\S]*?)```/.exec(doc);
	const cases = (block?.[1] ?? '')
		.split('\n')
		.filter((l) => l.trim())
		.map((l) => JSON.parse(l) as { containers: number; seed: number; kind: PlanKind; count: number; pooled?: number; sampled?: number[]; further?: number[] });

	it('the document holds the example', () => expect(cases.length).toBeGreaterThanOrEqual(3));
	it.each(cases.map((c) => [c.kind, c] as const))('%s-plan', (_kind, c) => {
		const plan = makePlan({ containers: c.containers, kind: c.kind, seed: c.seed });
		expect(plan.count).toBe(c.count);
		expect(plan.sampled).toHaveLength(c.count);
		if (c.pooled !== undefined) expect(plan.pooled).toBe(c.pooled);
		if (c.sampled) expect(plan.sampled).toEqual(c.sampled);
		if (c.further) expect(plan.furtherTesting).toEqual(c.further);
	});
});
