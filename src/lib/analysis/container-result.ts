// The result of one container from all of its scans (docs/methods.md §16). Pure: no database.
//
// Every valid scan keeps its verdict; a later scan never replaces an earlier one. The container is `genuine` only when
// every valid, non-invalidated scan is genuine and the required number of replicates is reached; otherwise its result
// is its worst non-invalidated verdict, in the order not-this-material > unknown > suspect > unusable. Invalidation
// (approved by QA) is the only way a scan stops counting. Rationale: FDA (2006), "Guidance for Industry: Investigating
// Out-of-Specification (OOS) Test Results for Pharmaceutical Production" — a result is invalidated only on an assignable
// laboratory cause; a retest does not replace a failing result by majority or by the latest value.
import { AnalysisError } from './errors';

export type ScanVerdictWord = 'genuine' | 'suspect' | 'unknown' | 'not-this-material' | 'unusable' | 'not-screened';
export type ContainerResultWord = 'genuine' | 'suspect' | 'unknown' | 'not-this-material' | 'unusable' | 'not-screened' | 'awaiting-scan';

/** Verdicts that are a material result (valid scans); `unusable` and `not-screened` are not. */
export const MATERIAL_VERDICTS = ['genuine', 'suspect', 'unknown', 'not-this-material'] as const;

/** Worst first: the rank used when a container has several non-genuine results. */
export const FAILURE_ORDER = ['not-this-material', 'unknown', 'suspect', 'unusable'] as const;

export const MIN_REPLICATES = 1;
export const MAX_REPLICATES = 5;

export interface ScanForResult {
	id: number;
	verdict: ScanVerdictWord;
	profile?: string | null;
	/** True only once an invalidation of this scan was approved by QA. A proposal alone does not count. */
	invalidated: boolean;
}

export interface ContainerResult {
	result: ContainerResultWord;
	/** The suspect profile when the result is `suspect` (of the worst counting suspect scan, the earliest). */
	profile: string | null;
	/** The container is decided: genuine with every replicate done, or failing (a failure cannot be undone by more scans). */
	decided: boolean;
	/** Valid, non-invalidated scans (each one a replicate). */
	replicatesDone: number;
	replicatesRequired: number;
	/** The scans whose verdict makes the result (all counting genuine scans, or the worst failing ones). */
	decisive: number[];
	/** Some valid scan of this container was ever non-genuine, invalidated or not (the two-signature rule). */
	everFailed: boolean;
}

const isMaterial = (v: string): boolean => (MATERIAL_VERDICTS as readonly string[]).includes(v);

export function checkReplicates(k: number): number {
	if (!Number.isInteger(k) || k < MIN_REPLICATES || k > MAX_REPLICATES) {
		throw new AnalysisError('replicates', `Replicates per container must be a whole number from ${MIN_REPLICATES} to ${MAX_REPLICATES}, got ${k}`);
	}
	return k;
}

/**
 * The container's result from every scan of it, in upload order. `replicates` (k, 1–5) is the number of valid genuine
 * scans a genuine result needs. Spectra and statistics are never averaged: each replicate is judged on its own.
 */
export function containerResult(scans: readonly ScanForResult[], replicates = 1): ContainerResult {
	const k = checkReplicates(replicates);
	if (!Array.isArray(scans)) throw new AnalysisError('scans', 'scans must be an array');
	for (const s of scans) {
		if (!s || typeof s.verdict !== 'string' || !['genuine', 'suspect', 'unknown', 'not-this-material', 'unusable', 'not-screened'].includes(s.verdict)) {
			throw new AnalysisError('verdict', `Unknown scan verdict ${JSON.stringify(s?.verdict)}`);
		}
	}
	const everFailed = scans.some((s) => isMaterial(s.verdict) && s.verdict !== 'genuine');
	const counting = scans.filter((s) => isMaterial(s.verdict) && !s.invalidated);
	const failing = counting.filter((s) => s.verdict !== 'genuine');
	const base = { replicatesDone: counting.length, replicatesRequired: k, everFailed };
	if (failing.length) {
		const worst = FAILURE_ORDER.find((w) => failing.some((s) => s.verdict === w))!;
		const decisive = failing.filter((s) => s.verdict === worst);
		return { ...base, result: worst, profile: worst === 'suspect' ? (decisive[0].profile ?? null) : null, decided: true, decisive: decisive.map((s) => s.id) };
	}
	if (counting.length >= k) return { ...base, result: 'genuine', profile: null, decided: true, decisive: counting.map((s) => s.id) };
	// Not decided yet: some genuine replicates may be done; say why the container still waits.
	const open = scans.filter((s) => !isMaterial(s.verdict));
	let result: ContainerResultWord = 'awaiting-scan';
	if (counting.length === 0 && open.length) result = open.some((s) => s.verdict === 'not-screened') ? 'not-screened' : 'unusable';
	return { ...base, result, profile: null, decided: false, decisive: [] };
}

export type LotIdentity = 'meets' | 'fails' | 'not-screened' | null;

/**
 * A lot's identity from its sampled containers' results: `meets` when every one is decided genuine, `fails` when
 * every one is decided and one is not genuine, `not-screened` when one waits only because no model was approved,
 * else null (screening incomplete).
 */
export function lotIdentity(results: readonly Pick<ContainerResult, 'result' | 'decided'>[]): LotIdentity {
	if (results.length > 0 && results.every((r) => r.decided)) return results.every((r) => r.result === 'genuine') ? 'meets' : 'fails';
	if (results.some((r) => !r.decided && r.result === 'not-screened')) return 'not-screened';
	return null;
}
