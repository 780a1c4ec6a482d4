// Sampling plans for incoming containers (pure). Formulas: WHO TRS 929 (2005), Annex 4; see docs/methods.md §15.
//   n-plan  n = ⌈1 + √N⌉     uniform material from a recognised, qualified source: identity-test n containers
//   p-plan  p = ⌈0.4·√N⌉     uniform material: identity-test EVERY container, then pool into p samples for further tests
//   r-plan  r = ⌈1.5·√N⌉     non-uniform or poorly known material: identity-test r containers
// Every count is capped at N. The containers of an n- or r-plan are drawn at random from a recorded seed.

export type PlanKind = 'every' | 'n' | 'p' | 'r';
export const PLAN_KINDS: PlanKind[] = ['every', 'n', 'p', 'r'];
export const MAX_CONTAINERS = 10_000;

export const PLAN_LABELS: Record<PlanKind, string> = {
	every: 'Every container',
	n: 'n-plan (n = 1 + √N)',
	p: 'p-plan (p = 0.4·√N, identity on every container)',
	r: 'r-plan (r = 1.5·√N)'
};

export interface SamplingPlan {
	kind: PlanKind;
	/** Containers received (N). */
	containers: number;
	/** Containers to identity-test. */
	count: number;
	/** p-plan only: pooled samples formed after identity testing every container. */
	pooled: number | null;
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

/** n = ⌈1 + √N⌉, capped at N. */
export function nPlan(N: number): number {
	checkN(N);
	return Math.min(N, ceilSafe(1 + Math.sqrt(N)));
}

/** p = ⌈0.4·√N⌉, capped at N (at least 1). */
export function pPlan(N: number): number {
	checkN(N);
	return Math.min(N, Math.max(1, ceilSafe(0.4 * Math.sqrt(N))));
}

/** r = ⌈1.5·√N⌉, capped at N. */
export function rPlan(N: number): number {
	checkN(N);
	return Math.min(N, ceilSafe(1.5 * Math.sqrt(N)));
}

/**
 * mulberry32 (Tommy Ettinger, public domain): a 32-bit seeded generator, uniform on [0, 1).
 * Used only to pick containers reproducibly from a recorded seed, never for statistics.
 */
export function mulberry32(seed: number): () => number {
	let a = seed >>> 0;
	return () => {
		a = (a + 0x6d2b79f5) >>> 0;
		let t = a;
		t = Math.imul(t ^ (t >>> 15), t | 1);
		t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
		return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
	};
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
				seed,
				sampled: chooseContainers(N, n, seed),
				formula: `n = ⌈1 + √${N}⌉ = ⌈${r3(1 + rootN)}⌉ = ${ceilSafe(1 + rootN)}${n < ceilSafe(1 + rootN) ? `, capped at N = ${N}` : ''}`,
				basis: `WHO TRS 929 Annex 4 n-plan: ${n} of ${N} containers chosen at random (seed ${seed}); uniform material from a qualified supplier.`
			};
		}
		case 'p': {
			const p = pPlan(N);
			return {
				kind,
				containers: N,
				count: N,
				pooled: p,
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
				count: r,
				pooled: null,
				seed,
				sampled: chooseContainers(N, r, seed),
				formula: `r = ⌈1.5·√${N}⌉ = ⌈${r3(1.5 * rootN)}⌉ = ${ceilSafe(1.5 * rootN)}${r < ceilSafe(1.5 * rootN) ? `, capped at N = ${N}` : ''}`,
				basis: `WHO TRS 929 Annex 4 r-plan: ${r} of ${N} containers chosen at random (seed ${seed}); non-uniform or poorly known material.`
			};
		}
	}
}

/** Counts only (for a form preview before a seed exists). */
export function planCount(kind: PlanKind, N: number): { count: number; pooled: number | null } {
	if (kind === 'n') return { count: nPlan(N), pooled: null };
	if (kind === 'r') return { count: rPlan(N), pooled: null };
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
