// Invalidation of a scan's result: the only way a valid scan stops counting toward its container's result (FDA 2006
// OOS guidance: only an assignable laboratory cause, found by investigation, invalidates a result). A technician,
// chemometrician or admin proposes it with a cause category and a description; a QA user who did not propose it
// approves or refuses it with an electronic signature. Each step is one transaction with its audit event; nothing is
// deleted, and every step stays visible on the lot page, in the API, on the alert and on the certificate.
import { containerLabel } from '../../labels';
import { can } from '../../permissions';
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { proseText } from '../../validation/text';
import { sequelize, transaction } from '../db';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { byId, CAUSE_LABELS, INVALIDATION_CAUSES, type InvalidationCause, type InvalidationView } from './container-results';
import { conflict, forbidden, invalid, notFound, ServiceError } from './errors';
import * as lots from './lots';
import { recomputeStatus } from './scans';
import * as signatures from './signatures';
import { noteInvalidation } from './model-reviews';

export { CAUSE_LABELS, INVALIDATION_CAUSES };
export type { InvalidationCause, InvalidationView };

/** Suggested meanings for the decision; the signer may word their own. */
export const APPROVE_MEANINGS = ['invalidation approved: assignable laboratory cause'];
export const REFUSE_MEANINGS = ['invalidation refused: the result stands'];

export const proposalSchema = z.object({
	cause: z.enum(INVALIDATION_CAUSES as [InvalidationCause, ...InvalidationCause[]], {
		errorMap: () => ({ message: `Choose a cause: ${INVALIDATION_CAUSES.join(', ')}` })
	}),
	description: proseText(
		z
			.string({ required_error: 'Describe what went wrong and how it was found', invalid_type_error: 'Describe what went wrong and how it was found' })
			.trim()
			.min(10, 'Describe what went wrong and how it was found (at least 10 characters)')
			.max(4000, 'At most 4000 characters')
	)
});
export type ProposalInput = z.input<typeof proposalSchema>;
export const decisionSchema = signatures.signatureFieldsSchema;

const MATERIAL = ['genuine', 'suspect', 'unknown', 'not-this-material'];

function requireProposer(actor: Actor) {
	if (actor.id == null || !hasRole(actor, can.proposeInvalidation)) throw forbidden('Only a technician, a chemometrician or an admin proposes an invalidation');
}

function parseScanId(scanId: number | string): number {
	const n = Number(scanId);
	if (!Number.isInteger(n) || n < 1) throw notFound(`Scan ${scanId}`);
	return n;
}

interface ScanRow {
	id: number;
	lot_id: number;
	container: number;
	verdict: string;
	profile: string | null;
	file_name: string;
	sha256: string;
}

/** The scan, which must belong to this lot (a scan of another lot is "not found" here, never touched). */
async function scanOfLot(lotId: number, scanId: number, tx: Transaction, lotLabel: string): Promise<ScanRow> {
	const rows = await sequelize().query<ScanRow>(
		`SELECT sc.id, sc.lot_id, sc.container, sc.verdict, sc.profile, sp.file_name, sp.sha256 FROM scans sc JOIN spectra sp ON sp.id = sc.spectrum_id WHERE sc.id = :scanId AND sc.lot_id = :lotId`,
		{ replacements: { scanId, lotId }, type: QueryTypes.SELECT, transaction: tx }
	);
	if (!rows[0]) throw notFound(`Scan ${scanId} of lot ${lotLabel}`);
	return rows[0];
}

/** Proposes invalidating one scan. 201-worthy: answers the stored proposal. */
export async function propose(actor: Actor, lotRef: number | string, scanRef: number | string, input: ProposalInput) {
	requireProposer(actor);
	const parsed = proposalSchema.safeParse(input ?? {});
	if (!parsed.success) {
		const issue = parsed.error.issues[0];
		throw invalid(issue.message, String(issue.path[0] ?? 'cause'));
	}
	const data = parsed.data;
	const scanId = parseScanId(scanRef);
	const lotId = await lots.resolve(lotRef);
	return transaction(async (tx) => {
		const lot = await lots.lotRow(lotId, tx, true);
		const scan = await scanOfLot(lotId, scanId, tx, lot.internal_lot);
		if (!MATERIAL.includes(scan.verdict)) {
			throw new ServiceError(
				409,
				'no-result-to-invalidate',
				scan.verdict === 'unusable'
					? `Scan ${scanId} is unusable: it gave no material verdict, so no invalidation is needed. Rescan the container.`
					: `Scan ${scanId} was not screened: it gave no material verdict, so no invalidation is needed.`,
				'scanId'
			);
		}
		if (lots.isClosed(lot)) throw conflict(`Lot ${lot.internal_lot} is ${lot.status}: the results of a dispositioned lot are final`);
		const live = await sequelize().query<{ id: number; state: string }>("SELECT id, state FROM scan_invalidations WHERE scan_id = :scanId AND state <> 'refused' FOR UPDATE", {
			replacements: { scanId },
			type: QueryTypes.SELECT,
			transaction: tx
		});
		if (live[0]) {
			throw conflict(live[0].state === 'approved' ? `Scan ${scanId} is already invalidated` : `An invalidation of scan ${scanId} is already proposed and waits for QA (#${live[0].id})`);
		}
		const [row] = await sequelize().query<{ id: number }>(
			`INSERT INTO scan_invalidations (scan_id, lot_id, cause, description, proposed_by) VALUES (:scanId, :lotId, :cause, :description, :by) RETURNING id`,
			{ replacements: { scanId, lotId, cause: data.cause, description: data.description, by: actor.id }, type: QueryTypes.SELECT, transaction: tx }
		);
		const id = row.id;
		await audit.record(tx, actor, {
			action: 'lot.scan-invalidation-proposed',
			entity: 'lot',
			entityId: lotId,
			after: { invalidation: id, scanId, container: scan.container, verdict: scan.verdict, profile: scan.profile, fileName: scan.file_name, sha256: scan.sha256, cause: data.cause, description: data.description },
			reason: data.description
		});
		return (await byId(id, tx))!;
	});
}

/** The record a QA decision signs: the proposal and the scan it concerns, with the raw file's hash. */
function signedRecord(v: InvalidationView, scan: ScanRow, decision: 'approve' | 'refuse') {
	return {
		kind: 'scan-invalidation',
		decision,
		invalidation: v.id,
		lotId: v.lotId,
		scan: { id: scan.id, container: scan.container, verdict: scan.verdict, profile: scan.profile, fileName: scan.file_name, sha256: scan.sha256 },
		cause: v.cause,
		description: v.description,
		proposedBy: v.proposedById,
		proposedAt: v.proposedAt
	};
}

/** A QA user who did not propose it approves (the scan stops counting) or refuses (the result stands), with a signature. */
export async function decide(actor: Actor, lotRef: number | string, scanRef: number | string, decision: 'approve' | 'refuse', input: z.input<typeof decisionSchema>) {
	if (actor.id == null || !hasRole(actor, can.decideInvalidation)) throw forbidden('Only a QA manager approves or refuses an invalidation');
	// A missing meaning, reason or password is a refusal naming the field (forms show it beside the scan), never a 500.
	const parsed = decisionSchema.safeParse(input ?? {});
	if (!parsed.success) {
		const issue = parsed.error.issues[0];
		throw invalid(issue.message, issue.path.join('.') || undefined);
	}
	const data = parsed.data;
	const scanId = parseScanId(scanRef);
	const lotId = await lots.resolve(lotRef);
	return transaction(async (tx) => {
		const lot = await lots.lotRow(lotId, tx, true);
		const scan = await scanOfLot(lotId, scanId, tx, lot.internal_lot);
		const rows = await sequelize().query<{ id: number }>("SELECT id FROM scan_invalidations WHERE scan_id = :scanId AND state = 'proposed' FOR UPDATE", {
			replacements: { scanId },
			type: QueryTypes.SELECT,
			transaction: tx
		});
		if (!rows[0]) throw notFound(`A proposed invalidation of scan ${scanId}`);
		const proposal = (await byId(rows[0].id, tx))!;
		if (proposal.proposedById === actor.id) {
			throw new ServiceError(403, 'own-proposal', 'You proposed this invalidation: a different QA manager must decide it (separation of duties).', 'password');
		}
		if (lots.isClosed(lot)) throw conflict(`Lot ${lot.internal_lot} is ${lot.status}: the results of a dispositioned lot are final`);
		const record = signedRecord(proposal, scan, decision);
		// The signature first: a wrong password fails before this transaction writes anything.
		const manifestation = await signatures.sign(tx, actor, {
			password: data.password,
			meaning: data.meaning,
			reason: data.reason,
			recordType: 'scan-invalidation',
			recordId: proposal.id,
			recordHash: signatures.recordHash(record)
		});
		const state = decision === 'approve' ? 'approved' : 'refused';
		await sequelize().query('UPDATE scan_invalidations SET state = :state, decided_by = :by, decided_at = :at, signature_id = :sig WHERE id = :id', {
			replacements: { state, by: actor.id, at: manifestation.signedAt, sig: manifestation.id, id: proposal.id },
			transaction: tx
		});
		await audit.record(tx, actor, {
			action: decision === 'approve' ? 'lot.scan-invalidation-approved' : 'lot.scan-invalidation-refused',
			entity: 'lot',
			entityId: lotId,
			before: { invalidation: proposal.id, state: 'proposed' },
			after: { invalidation: proposal.id, state, scanId, container: scan.container, verdict: scan.verdict, cause: proposal.cause, signature: manifestation.id },
			reason: data.reason
		});
		if (decision === 'approve') {
			// The alert the scan raised stays; its trail records the invalidation (the alert view shows it).
			const alertRows = await sequelize().query<{ id: number }>(
				"SELECT id FROM alerts WHERE lot_id = :lotId AND findings @> CAST(:finding AS jsonb) ORDER BY id",
				{ replacements: { lotId, finding: JSON.stringify([{ scanId }]) }, type: QueryTypes.SELECT, transaction: tx }
			);
			for (const a of alertRows) {
				await audit.record(tx, actor, {
					action: 'alert.finding-invalidated',
					entity: 'alert',
					entityId: a.id,
					after: { scanId, container: scan.container, invalidation: proposal.id, cause: proposal.cause, approvedBy: manifestation.signerName },
					reason: data.reason
				});
			}
		}
		// issue 12 §1: 3 or more invalidated scans of the material within 30 days trigger revalidation of its version
		if (decision === 'approve') await noteInvalidation(tx, actor, lot.material_id);
		const status = await recomputeStatus(tx, lotId, actor);
		return { invalidation: (await byId(proposal.id, tx))!, manifestation, status };
	});
}

export const approve = (actor: Actor, lotRef: number | string, scanRef: number | string, input: z.input<typeof decisionSchema>) => decide(actor, lotRef, scanRef, 'approve', input);
export const refuse = (actor: Actor, lotRef: number | string, scanRef: number | string, input: z.input<typeof decisionSchema>) => decide(actor, lotRef, scanRef, 'refuse', input);

/** QA home queue: proposals waiting for a decision (not the ones this person proposed). */
export async function queueItems(actor: Actor) {
	const rows = await sequelize().query<{ id: number; scan_id: number; container: number; internal_lot: string; proposed_by: number; name: string; cause: InvalidationCause }>(
		`SELECT iv.id, iv.scan_id, sc.container, l.internal_lot, iv.proposed_by, u.name, iv.cause FROM scan_invalidations iv
		   JOIN scans sc ON sc.id = iv.scan_id JOIN lots l ON l.id = iv.lot_id JOIN users u ON u.id = iv.proposed_by
		  WHERE iv.state = 'proposed' ORDER BY iv.id LIMIT 20`,
		{ type: QueryTypes.SELECT }
	);
	return rows
		.filter((r) => r.proposed_by !== actor.id)
		.map((r) => ({ href: `/lots/${r.internal_lot}#scan-${r.scan_id}`, label: `${r.internal_lot} · container ${containerLabel(r.container)}: invalidation to decide`, detail: `proposed by ${r.name} (${CAUSE_LABELS[r.cause]})` }));
}
