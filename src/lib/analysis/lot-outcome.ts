// The outcome of a lot as the lot header states it: its identity in words, the failing containers with the scan that
// decided each, the containers still waiting, and whether an investigation is called for. Pure: no database.
import { containerLabel, verdictWord } from '../labels';
import { AnalysisError } from './errors';
import type { ContainerResultWord, ScanVerdictWord } from './container-result';

export type LotStatusWord = 'awaiting-scans' | 'screened' | 'released' | 'quarantined' | 'rejected';
export type IdentityWord = 'meets' | 'fails' | 'not-screened' | null;

/** A sampled container as the outcome needs it: its result, and its scans in upload order. */
export interface OutcomeContainer {
	number: number;
	result: ContainerResultWord | null;
	profile: string | null;
	decided: boolean;
	scans: { counts: boolean; verdict: string; ambiguous: boolean; reason: string | null }[];
}

/** A released or rejected lot is closed; quarantine is an interim decision, so screening may continue while it is held. */
export function isClosed(lot: { status: string }): boolean {
	return lot.status === 'released' || lot.status === 'rejected';
}

/** The outcome shown in the lot header: identity, what it means, and which containers fail and why. */
export function outcomeOf(status: LotStatusWord, identity: IdentityWord, sampledContainers: OutcomeContainer[], replicates = 1) {
	if (!Array.isArray(sampledContainers)) throw new AnalysisError('bad-input', 'The sampled containers must be a list');
	if (!Number.isInteger(replicates) || replicates < 1) throw new AnalysisError('bad-replicates', `Replicates must be a whole number of at least 1, got ${replicates}`);
	const failures = sampledContainers
		.filter((c) => c.decided && c.result !== 'genuine')
		.map((c) => {
			const decisive = [...c.scans].reverse().find((s) => s.counts && s.verdict === c.result);
			return { container: c.number, verdict: c.result as ScanVerdictWord, profile: c.profile, ambiguous: decisive?.ambiguous ?? false, reason: decisive?.reason ?? null };
		});
	const waiting = sampledContainers.filter((c) => !c.decided).map((c) => c.number);
	const sampledCount = sampledContainers.length;
	const investigation = failures.some((f) => f.verdict === 'unknown' || f.verdict === 'not-this-material');
	let summary: string;
	if (identity === 'meets') summary = `Meets identity: every sampled container is genuine${replicates > 1 ? ` in all ${replicates} replicates` : ''}.`;
	else if (identity === 'fails')
		summary = `Fails identity, quarantine recommended: ${failures.map((f) => `${containerLabel(f.container)} ${verdictWord(f.verdict, f.profile)}`).join('; ')}.`;
	else if (identity === 'not-screened') summary = 'Not screened: the material has no approved model version, so the lot cannot go forward.';
	else
		summary = `Awaiting scans: ${waiting.length} of ${sampledCount} sampled container${sampledCount === 1 ? '' : 's'} still need${waiting.length === 1 ? 's' : ''} ${replicates > 1 ? `${replicates} genuine replicate scans or a failing one` : 'a valid scan'}.`;
	return {
		status,
		identity,
		summary,
		failures,
		waiting,
		investigation,
		// USP NIR chapter: a result outside the model calls for further testing, not an automatic rejection.
		investigationNote: investigation ? 'Unknown and not this material results call for investigation (further testing) before any decision; they are not an automatic rejection.' : null
	};
}
