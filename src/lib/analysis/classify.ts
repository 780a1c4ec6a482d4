export type Verdict = 'genuine' | 'suspect' | 'unknown' | 'not-this-material' | 'unusable';

export interface Decision {
	verdict: Verdict;
	profile: string | null;
	ambiguous: boolean;
	reason: string | null;
}

interface Outcome {
	accepted: boolean;
	c: number;
	cCrit: number;
}

const ratio = (o: Outcome): number => o.c / o.cCrit;
const r3 = (x: number): string => (Number.isFinite(x) ? x.toFixed(3) : String(x));

/**
 * Two-stage decision. Stage 1: the family model must accept, else not-this-material.
 * Stage 2 on the class models:
 *   only genuine accepts → genuine;
 *   only suspect profiles accept → suspect, the profile with the smallest c/c_crit;
 *   genuine and a suspect accept → suspect (that profile), ambiguous — a wrong "genuine" can reach patients;
 *   none accepts → unknown.
 * ambiguous is also set when several suspect profiles accept. A family-only model answers
 * genuine or not-this-material.
 */
export function decide(family: Outcome, classes: { name: string; kind: 'genuine' | 'suspect'; stats: Outcome }[]): Decision {
	if (!family.accepted)
		return { verdict: 'not-this-material', profile: null, ambiguous: false, reason: `family model rejects: c/c_crit = ${r3(ratio(family))} > 1` };
	if (classes.length === 0) return { verdict: 'genuine', profile: null, ambiguous: false, reason: null };
	const accepted = classes.filter((c) => c.stats.accepted);
	const genuine = accepted.find((c) => c.kind === 'genuine');
	const suspects = accepted.filter((c) => c.kind === 'suspect').sort((a, b) => ratio(a.stats) - ratio(b.stats) || (a.name < b.name ? -1 : 1));
	if (accepted.length === 0) {
		const best = [...classes].sort((a, b) => ratio(a.stats) - ratio(b.stats))[0];
		return { verdict: 'unknown', profile: null, ambiguous: false, reason: `no class model accepts (closest: ${best.name}, c/c_crit = ${r3(ratio(best.stats))})` };
	}
	if (suspects.length === 0) return { verdict: 'genuine', profile: null, ambiguous: false, reason: null };
	const best = suspects[0];
	const others = accepted.filter((c) => c !== best).map((c) => `${c.name} (c/c_crit = ${r3(ratio(c.stats))})`);
	const ambiguous = accepted.length > 1;
	const reason = ambiguous
		? `several class models accept: ${best.name} (c/c_crit = ${r3(ratio(best.stats))}), ${others.join(', ')}${genuine ? '; a suspect profile accepting outranks genuine' : ''}`
		: `suspect profile ${best.name} accepts (c/c_crit = ${r3(ratio(best.stats))})`;
	return { verdict: 'suspect', profile: best.name, ambiguous, reason };
}
