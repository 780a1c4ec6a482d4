// Reading side of the result policy: the invalidations of a lot's scans and each container's result, computed with
// the pure rule in $lib/analysis/container-result. No mutation here (see invalidations.ts), so lots.ts and scans.ts
// can both use it without an import cycle.
import { QueryTypes, type Transaction } from 'sequelize';
import { containerResult, lotIdentity, type ContainerResult, type ContainerResultWord, type ScanVerdictWord } from '../../analysis/container-result';

export type { ContainerResult, ContainerResultWord };
import { sequelize } from '../db';

export type InvalidationCause = 'sample-presentation' | 'instrument-fault' | 'wrong-container' | 'data-transfer' | 'other';
export const INVALIDATION_CAUSES: InvalidationCause[] = ['sample-presentation', 'instrument-fault', 'wrong-container', 'data-transfer', 'other'];
export const CAUSE_LABELS: Record<InvalidationCause, string> = {
	'sample-presentation': 'sample presentation (container not opened, probe not in contact …)',
	'instrument-fault': 'instrument fault',
	'wrong-container': 'wrong container scanned',
	'data-transfer': 'data transfer error',
	other: 'other'
};
export type InvalidationState = 'proposed' | 'approved' | 'refused';

export interface InvalidationView {
	id: number;
	scanId: number;
	lotId: number;
	cause: InvalidationCause;
	causeLabel: string;
	description: string;
	state: InvalidationState;
	proposedBy: string;
	proposedById: number;
	proposedAt: string;
	decidedBy: string | null;
	decidedById: number | null;
	decidedAt: string | null;
	/** The decision's signature: meaning and reason as signed. */
	signature: { id: number; meaning: string; reason: string; signedAt: string } | null;
}

/** What the API shows on a scan whose invalidation was approved (null otherwise). */
export interface Invalidated {
	cause: InvalidationCause;
	description: string;
	proposedBy: string;
	approvedBy: string;
	at: string;
}

interface Row {
	id: number;
	scan_id: number;
	lot_id: number;
	cause: InvalidationCause;
	description: string;
	state: InvalidationState;
	proposed_by: number;
	proposed_by_name: string | null;
	proposed_at: Date;
	decided_by: number | null;
	decided_by_name: string | null;
	decided_at: Date | null;
	signature_id: number | null;
	meaning: string | null;
	reason: string | null;
	signed_at: Date | null;
}

const SELECT = `SELECT iv.*, pu.name AS proposed_by_name, du.name AS decided_by_name, sg.meaning, sg.reason, sg.signed_at
	  FROM scan_invalidations iv JOIN users pu ON pu.id = iv.proposed_by LEFT JOIN users du ON du.id = iv.decided_by
	  LEFT JOIN signatures sg ON sg.id = iv.signature_id`;

function view(r: Row): InvalidationView {
	return {
		id: r.id,
		scanId: r.scan_id,
		lotId: r.lot_id,
		cause: r.cause,
		causeLabel: CAUSE_LABELS[r.cause],
		description: r.description,
		state: r.state,
		proposedBy: r.proposed_by_name ?? `user ${r.proposed_by}`,
		proposedById: r.proposed_by,
		proposedAt: new Date(r.proposed_at).toISOString(),
		decidedBy: r.decided_by == null ? null : (r.decided_by_name ?? `user ${r.decided_by}`),
		decidedById: r.decided_by,
		decidedAt: r.decided_at ? new Date(r.decided_at).toISOString() : null,
		signature: r.signature_id ? { id: r.signature_id, meaning: r.meaning ?? '', reason: r.reason ?? '', signedAt: new Date(r.signed_at!).toISOString() } : null
	};
}

/** Every invalidation (proposed, approved, refused) of a lot's scans, oldest first. */
export async function forLot(lotId: number, tx?: Transaction): Promise<InvalidationView[]> {
	const rows = await sequelize().query<Row>(`${SELECT} WHERE iv.lot_id = :lotId ORDER BY iv.id`, { replacements: { lotId }, type: QueryTypes.SELECT, transaction: tx });
	return rows.map(view);
}

export async function byId(id: number, tx?: Transaction): Promise<InvalidationView | null> {
	const rows = await sequelize().query<Row>(`${SELECT} WHERE iv.id = :id`, { replacements: { id }, type: QueryTypes.SELECT, transaction: tx });
	return rows[0] ? view(rows[0]) : null;
}

export function invalidatedOf(v: InvalidationView | undefined | null): Invalidated | null {
	if (!v || v.state !== 'approved') return null;
	return { cause: v.cause, description: v.description, proposedBy: v.proposedBy, approvedBy: v.decidedBy!, at: v.decidedAt! };
}

/** The latest invalidation of each scan (the live one when there is one: at most one is proposed or approved). */
export function latestByScan(list: InvalidationView[]): Map<number, InvalidationView> {
	const out = new Map<number, InvalidationView>();
	for (const v of list) {
		const prev = out.get(v.scanId);
		if (!prev || prev.state === 'refused') out.set(v.scanId, v);
	}
	return out;
}

export async function replicatesOf(lotId: number, tx?: Transaction): Promise<number> {
	// The k recorded in the lot's plan at receipt; lots received before replicates existed need one scan.
	const rows = await sequelize().query<{ replicates: number }>("SELECT coalesce((l.plan->>'replicates')::integer, 1) AS replicates FROM lots l WHERE l.id = :lotId", {
		replacements: { lotId },
		type: QueryTypes.SELECT,
		transaction: tx
	});
	return rows[0]?.replicates ?? 1;
}

export interface ScanLike {
	id: number;
	container: number;
	verdict: string;
	profile?: string | null;
}

/** Each container's result from its scans (upload order) and the approved invalidations. */
export function resultsOf(scans: ScanLike[], invalidations: InvalidationView[], containers: number[], replicates: number): Map<number, ContainerResult> {
	const approved = new Set(invalidations.filter((v) => v.state === 'approved').map((v) => v.scanId));
	const byContainer = new Map<number, ScanLike[]>();
	for (const s of [...scans].sort((a, b) => a.id - b.id)) byContainer.set(s.container, [...(byContainer.get(s.container) ?? []), s]);
	return new Map(
		containers.map((c) => [
			c,
			containerResult(
				(byContainer.get(c) ?? []).map((s) => ({ id: s.id, verdict: s.verdict as ScanVerdictWord, profile: s.profile ?? null, invalidated: approved.has(s.id) })),
				replicates
			)
		])
	);
}

/** The lot's identity and per-container results straight from the database, inside the caller's transaction. */
export async function lotOutcome(tx: Transaction, lotId: number, sampled: number[]) {
	const scans = await sequelize().query<ScanLike>('SELECT id, container, verdict, profile FROM scans WHERE lot_id = :lotId ORDER BY id', {
		replacements: { lotId },
		type: QueryTypes.SELECT,
		transaction: tx
	});
	const results = resultsOf(
		scans,
		await forLot(lotId, tx),
		sampled,
		await replicatesOf(lotId, tx)
	);
	const list = sampled.map((c) => results.get(c)!);
	return { results, identity: lotIdentity(list), complete: list.length > 0 && list.every((r) => r.decided) };
}

/** Some container of the lot ever had a valid non-genuine scan (invalidated or not): a release then needs two signatures. */
export async function hasFailingHistory(lotId: number, tx?: Transaction): Promise<boolean> {
	const rows = await sequelize().query<{ n: number }>(
		"SELECT count(*) AS n FROM scans sc JOIN lots l ON l.id = sc.lot_id WHERE sc.lot_id = :lotId AND sc.container = ANY(l.sampled) AND sc.verdict IN ('suspect','unknown','not-this-material')",
		{ replacements: { lotId }, type: QueryTypes.SELECT, transaction: tx }
	);
	return (rows[0]?.n ?? 0) > 0;
}
