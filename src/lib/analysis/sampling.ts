// Sampling plans for incoming containers (pure). Formulas: WHO TRS 929 (2005), Annex 4, §5.1 and Appendix 5;
// the wording and where it was read are quoted in docs/methods.md §15.
//   n-plan  n = round(1 + √N)  simple rounding; uniform material from a recognised source: identity-test n containers
//   p-plan  p = ⌈0.4·√N⌉      rounded up; identity-test EVERY container, then pool into p samples for further tests
//   r-plan  r = ⌈1.5·√N⌉      rounded up; non-uniform or poorly known material: identity-test EVERY container, then
//                             r containers chosen at random are tested individually (the other tests)
// Every count is capped at N. Only the n-plan identity-tests fewer than N containers.
import { mulberry32 } from './prng';
export { mulberry32 };

export type PlanKind = 'every' | 'n' | 'p' | 'r';
export const PLAN_KINDS: PlanKind[] = ['every', 'n', 'p', 'r'];
export const MAX_CONTAINERS = 10_000;

export const PLAN_LABELS: Record<PlanKind, string> = {
	every: 'Every container',
	n: 'n-plan (n = 1 + √N, identity on n containers)',
	p: 'p-plan (p = 0.4·√N, identity on every container)',
	r: 'r-plan (r = 1.5·√N, identity on every container)'
};

export interface SamplingPlan {
	kind: PlanKind;
	/** Containers received (N). */
	containers: number;
	/** Containers to identity-test. */
	count: number;
	/** p-plan only: pooled samples formed after identity testing every container. */
	pooled: number | null;
	/** r-plan only: the r containers (1..N, ascending) chosen at random for individual further testing, after every container passed identity. */
	furtherTesting: number[] | null;
	/** Unsigned 32-bit seed of the random choice (recorded so the choice can be reproduced). */
	seed: number;
	/** Container numbers (1..N, ascending) to identity-test. */
	sampled: number[];
	/** The formula as applied, e.g. "n = ⌈1 + √40⌉ = ⌈7.325⌉ = 8". */
	formula: string;
	/** Why this plan: the standard and the rule. */
	basis: string;
}

// Values within 1e-9 of an integer count as that integer: 0.4·15 is 6.000000000000001 in binary floating point.
const ceilSafe = (x: number) => Math.ceil(x - 1e-9);

function checkN(N: number) {
	if (!Number.isInteger(N) || N < 1 || N > MAX_CONTAINERS) throw new RangeError(`containers must be a whole number from 1 to ${MAX_CONTAINERS}, got ${N}`);
}

// Simple rounding to the nearest integer. 1 + √N is never exactly k + ½ for a whole N ((k − ½)² is not whole), so the
// tie rule does not matter.
const roundPlain = (x: number) => Math.round(x);

/** n = round(1 + √N) (Annex 4: "simple rounding"), capped at N. */
export function nPlan(N: number): number {
	checkN(N);
	return Math.min(N, roundPlain(1 + Math.sqrt(N)));
}

/** p = ⌈0.4·√N⌉, capped at N (at least 1). */
export function pPlan(N: number): number {
	checkN(N);
	return Math.min(N, Math.max(1, ceilSafe(0.4 * Math.sqrt(N))));
}

/** r = ⌈1.5·√N⌉ (Annex 4: rounded up to the next highest integer), capped at N. Identity is tested on every container regardless. */
export function rPlan(N: number): number {
	checkN(N);
	return Math.min(N, ceilSafe(1.5 * Math.sqrt(N)));
}

/** `count` distinct containers of 1..N chosen by a partial Fisher–Yates shuffle driven by mulberry32(seed); ascending. */
export function chooseContainers(N: number, count: number, seed: number): number[] {
	checkN(N);
	if (!Number.isInteger(count) || count < 0 || count > N) throw new RangeError(`count must be a whole number from 0 to ${N}, got ${count}`);
	const all = Array.from({ length: N }, (_, i) => i + 1);
	if (count === N) return all;
	const random = mulberry32(seed);
	for (let i = 0; i < count; i++) {
		const j = i + Math.floor(random() * (N - i));
		[all[i], all[j]] = [all[j], all[i]];
	}
	return all.slice(0, count).sort((a, b) => a - b);
}

const r3 = (x: number) => Number(x.toFixed(3)).toString();

/** The plan for N containers: size, formula, basis and (for n and r) the seeded random choice. */
export function makePlan(input: { containers: number; kind?: PlanKind; seed: number }): SamplingPlan {
	const { containers: N, kind = 'every' } = input;
	checkN(N);
	if (!PLAN_KINDS.includes(kind)) throw new RangeError(`plan must be one of ${PLAN_KINDS.join(', ')}, got ${String(kind)}`);
	const seed = input.seed >>> 0;
	const rootN = Math.sqrt(N);
	switch (kind) {
		case 'every':
			return {
				kind,
				containers: N,
				count: N,
				pooled: null,
				furtherTesting: null,
				seed,
				sampled: chooseContainers(N, N, seed),
				formula: `every container: ${N} of ${N}`,
				basis: 'Identity test of every container (EU GMP Annex 8 default).'
			};
		case 'n': {
			const n = nPlan(N);
			return {
				kind,
				containers: N,
				count: n,
				pooled: null,
				furtherTesting: null,
				seed,
				sampled: chooseContainers(N, n, seed),
				formula: `n = round(1 + √${N}) = round(${r3(1 + rootN)}) = ${roundPlain(1 + rootN)}${n < roundPlain(1 + rootN) ? `, capped at N = ${N}` : ''}`,
				basis: `WHO TRS 929 Annex 4 n-plan: ${n} of ${N} containers chosen at random (seed ${seed}) for identity; uniform material from a qualified supplier.`
			};
		}
		case 'p': {
			const p = pPlan(N);
			return {
				kind,
				containers: N,
				count: N,
				pooled: p,
				furtherTesting: null,
				seed,
				sampled: chooseContainers(N, N, seed),
				formula: `p = ⌈0.4·√${N}⌉ = ⌈${r3(0.4 * rootN)}⌉ = ${p}`,
				basis: `WHO TRS 929 Annex 4 p-plan: every container is identity-tested; the samples are then pooled into ${p} composite sample${p === 1 ? '' : 's'}.`
			};
		}
		case 'r': {
			const r = rPlan(N);
			return {
				kind,
				containers: N,
				count: N,
				pooled: null,
				furtherTesting: chooseContainers(N, r, seed),
				seed,
				sampled: chooseContainers(N, N, seed),
				formula: `r = ⌈1.5·√${N}⌉ = ⌈${r3(1.5 * rootN)}⌉ = ${ceilSafe(1.5 * rootN)}${r < ceilSafe(1.5 * rootN) ? `, capped at N = ${N}` : ''}; identity on all ${N}`,
				basis: `WHO TRS 929 Annex 4 r-plan: every container is identity-tested; then ${r} of ${N} containers chosen at random (seed ${seed}) are tested individually; non-uniform or poorly known material.`
			};
		}
	}
}

/** Counts only (for a form preview before a seed exists). */
export function planCount(kind: PlanKind, N: number): { count: number; pooled: number | null; further?: number } {
	if (kind === 'n') return { count: nPlan(N), pooled: null };
	if (kind === 'r') return { count: N, pooled: null, further: rPlan(N) };
	if (kind === 'p') return { count: N, pooled: pPlan(N) };
	checkN(N);
	return { count: N, pooled: null };
}

/** Why a reduced plan is refused, or null when allowed: the material's policy allows it, the supplier is qualified, and a justification is written. */
export function reducedPlanRefusal(
	material: { code: string; samplingPolicy: string },
	supplier: { code: string; status: string },
	justification: string | undefined | null
): { message: string; field: 'plan' | 'justification' } | null {
	if (material.samplingPolicy !== 'reduced-allowed')
		return { message: `A reduced plan is not allowed for ${material.code}: its sampling policy is every container`, field: 'plan' };
	if (supplier.status !== 'qualified') return { message: `A reduced plan needs a qualified supplier; ${supplier.code} is ${supplier.status}`, field: 'plan' };
	if (!justification || justification.trim().length < 10) return { message: 'A reduced plan needs a recorded justification (at least 10 characters)', field: 'justification' };
	return null;
}
