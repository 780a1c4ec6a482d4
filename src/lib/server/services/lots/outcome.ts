// Lots: closed or open, the supplier flag text and the outcome shown in the lot header.
import { type LotStatus, type Identity, type ScanVerdict } from './schema';
import { type ContainerView } from './view';

export function isClosed(lot: { status: string }): boolean {
	// Quarantine is an interim decision: screening may continue while the lot is held.
	return lot.status === 'released' || lot.status === 'rejected';
}

export function supplierFlagText(flag: string | null, supplierCode: string) {
	if (flag === 'blocked') return `Supplier ${supplierCode} is blocked: hold the delivery in quarantine and inform procurement and QA.`;
	if (flag === 'on-watch') return `Supplier ${supplierCode} is on watch: screen with care; QA reviews this lot closely.`;
	return null;
}

/** The outcome shown in the lot header: identity, what it means, and which containers fail and why. */
export function outcomeOf(status: LotStatus, identity: Identity, sampledContainers: Pick<ContainerView, 'number' | 'result' | 'profile' | 'decided' | 'replicates' | 'scans'>[], replicates = 1) {
	const failures = sampledContainers
		.filter((c) => c.decided && c.result !== 'genuine')
		.map((c) => {
			const decisive = [...c.scans].reverse().find((s) => s.counts && s.verdict === c.result);
			return { container: c.number, verdict: c.result as ScanVerdict, profile: c.profile, ambiguous: decisive?.ambiguous ?? false, reason: decisive?.reason ?? null };
		});
	const waiting = sampledContainers.filter((c) => !c.decided).map((c) => c.number);
	const sampledCount = sampledContainers.length;
	const investigation = failures.some((f) => f.verdict === 'unknown' || f.verdict === 'not-this-material');
	let summary: string;
	if (identity === 'meets') summary = `Meets identity: every sampled container is genuine${replicates > 1 ? ` in all ${replicates} replicates` : ''}.`;
	else if (identity === 'fails')
		summary = `Fails identity, quarantine recommended: ${failures.map((f) => `container ${f.container} ${f.verdict}${f.profile ? ` (${f.profile})` : ''}`).join('; ')}.`;
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
		investigationNote: investigation ? 'Unknown and not-this-material results call for investigation (further testing) before any decision; they are not an automatic rejection.' : null
	};
}
