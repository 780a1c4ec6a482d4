// Dispositions: signing a decision, the second signature, and taking effect (lot status, certificate, outbox).
import { can } from '../../../permissions';
import { createHash } from 'node:crypto';
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { DEFAULT_TIME_ZONE } from '../../../signature-time';
import { sequelize, transaction } from '../../db';
import { checkpointSoon } from '../../audit-checkpoint';
import { queueMail } from '../../mail';
import { certificateDocumentHash, renderCertificate } from '../../reports/certificate-pdf';
import { hasRole, type Actor } from '../actor';
import * as audit from '../audit';
import * as containerResults from '../container-results';
import { conflict, forbidden, ServiceError } from '../errors';
import * as lots from '../lots';
import * as signatures from '../signatures';
import { certificateContent } from './certificate';
import { row, toView } from './read';
import { buildRecord } from './record';
import { type Decision, DECISION_TEXT, LOT_STATUS, dispositionSchema, type DispositionInput, cosignSchema } from './schema';
import { config } from '../../config';

const timeZone = () => config().LOTGATE_TIME_ZONE || DEFAULT_TIME_ZONE;

function requireQa(actor: Actor) {
	if (actor.id == null || !hasRole(actor, can.signDispositions)) throw forbidden('Only a QA manager signs a disposition');
}

/**
 * A QA manager signs a decision on a lot. Release and reject need complete screening; quarantine is allowed at any
 * time. A release of a lot that failed identity is stored as awaiting a second signature and changes nothing yet.
 * Throws 401 wrong-password (audited, counted toward the lockout) before anything is stored.
 */
export async function dispose(actor: Actor, lotRef: number | string, input: DispositionInput) {
	requireQa(actor);
	const data = dispositionSchema.parse(input);
	const lotId = await lots.resolve(lotRef);
	return transaction(async (tx) => {
		const lot = await lots.lotRow(lotId, tx, true);
		const complete = lot.identity === 'meets' || lot.identity === 'fails';
		if (data.decision !== 'quarantine' && !complete) {
			const why = lot.identity === 'not-screened' ? 'the material has no approved model, so the lot is not screened' : 'screening is not complete (containers still await a valid scan)';
			throw new ServiceError(409, 'screening-incomplete', `Lot ${lot.internal_lot} cannot be ${DECISION_TEXT[data.decision]}: ${why}. Quarantine is possible at any time.`, 'decision');
		}
		// Two signatures for any failing history: also when the failing scan was invalidated and the retest is genuine.
		const failingHistory = await containerResults.hasFailingHistory(lotId, tx);
		const needsSecond = data.decision === 'release' && (lot.identity === 'fails' || failingHistory);
		const effective = await currentEffective(lotId, tx);
		const pending = await sequelize().query<{ id: number }>("SELECT id FROM dispositions WHERE lot_id = :lotId AND state = 'awaiting-second-signature' FOR UPDATE", {
			replacements: { lotId },
			type: QueryTypes.SELECT,
			transaction: tx
		});
		// One pending release per lot: another release is refused; it is co-signed (or withdrawn by quarantine or reject).
		if (data.decision === 'release' && pending.length) {
			throw new ServiceError(
				409,
				'second-signature-pending',
				`A release of lot ${lot.internal_lot} is already waiting for a second signature by another QA user. It was not signed again: co-sign the pending release, or record quarantine or reject instead.`,
				'decision'
			);
		}
		const [{ id }] = await sequelize().query<{ id: number }>("SELECT nextval('dispositions_id_seq') AS id", { type: QueryTypes.SELECT, transaction: tx });
		const record = await buildRecord(lotId, id, data.decision, effective?.id ?? null, tx);
		const hash = signatures.recordHash(record);
		// The signature comes first: a wrong password must fail before this transaction writes any audit event.
		const manifestation = await signatures.sign(tx, actor, {
			password: data.password,
			meaning: data.meaning,
			reason: data.reason,
			recordType: 'disposition',
			recordId: id,
			recordHash: hash
		});
		// A newer decision withdraws a release still waiting for its second signature.
		for (const p of pending) {
			await sequelize().query("UPDATE dispositions SET state = 'superseded' WHERE id = :id", { replacements: { id: p.id }, transaction: tx });
		}
		if (!needsSecond && effective) {
			await sequelize().query("UPDATE dispositions SET state = 'superseded' WHERE id = :id", { replacements: { id: effective.id }, transaction: tx });
		}
		await sequelize().query(
			`INSERT INTO dispositions (id, lot_id, decision, state, needs_second, record, record_hash, signature_id, supersedes_id, status_before, created_by, created_at, effective_at)
			 VALUES (:id, :lotId, :decision, :state, :needsSecond, :record, :hash, :signatureId, :supersedes, :statusBefore, :createdBy, :signedAt, :effectiveAt)`,
			{
				replacements: {
					id,
					lotId,
					decision: data.decision,
					state: needsSecond ? 'awaiting-second-signature' : 'effective',
					needsSecond,
					record: JSON.stringify(record),
					hash,
					signatureId: manifestation.id,
					supersedes: effective?.id ?? null,
					statusBefore: lot.status,
					createdBy: actor.id,
					signedAt: manifestation.signedAt,
					effectiveAt: needsSecond ? null : manifestation.signedAt
				},
				transaction: tx
			}
		);
		for (const p of pending) await markSupersededBy(tx, p.id, id);
		if (!needsSecond && effective) await markSupersededBy(tx, effective.id, id);
		await audit.record(tx, actor, {
			action: needsSecond ? 'lot.disposition-awaiting-second-signature' : 'lot.dispositioned',
			entity: 'lot',
			entityId: lotId,
			before: { status: lot.status, disposition: effective?.id ?? null },
			after: { disposition: id, decision: data.decision, recordHash: hash, signature: manifestation.id, supersedes: effective?.id ?? null, withdrawn: pending.map((p) => p.id) },
			reason: data.reason
		});
		if (!needsSecond) await takeEffect(tx, actor, id, lot.status, data.decision);
		const view = await toView(await row(id, tx), tx);
		return {
			disposition: view,
			manifestation,
			message: needsSecond
				? `Signed. Lot ${lot.internal_lot} ${lot.identity === 'fails' ? 'failed identity' : 'had a non-genuine container result (since invalidated)'}, so its release needs a second signature from a different QA manager; the lot stays ${lots.STATUS_LABELS[lot.status]} until then.`
				: `Lot ${lot.internal_lot} ${DECISION_TEXT[data.decision]}.`
		};
	});
}

async function markSupersededBy(tx: Transaction, oldId: number, newId: number) {
	await sequelize().query('UPDATE dispositions SET superseded_by = :newId WHERE id = :oldId', { replacements: { oldId, newId }, transaction: tx });
}

async function currentEffective(lotId: number, tx: Transaction) {
	const rows = await sequelize().query<{ id: number; decision: Decision }>("SELECT id, decision FROM dispositions WHERE lot_id = :lotId AND state = 'effective' FOR UPDATE", {
		replacements: { lotId },
		type: QueryTypes.SELECT,
		transaction: tx
	});
	return rows[0] ? { id: rows[0].id, decision: rows[0].decision } : null;
}

/** The second signature of a release despite failed identity: a different QA manager, with their own reason. */
export async function cosign(actor: Actor, dispositionId: number, input: z.input<typeof cosignSchema>, expectedLotId?: number) {
	requireQa(actor);
	const data = cosignSchema.parse(input);
	return transaction(async (tx) => {
		const d = await row(dispositionId, tx, true);
		// Bound to the lot the signer is looking at: a pending release of another lot is never co-signed from this page.
		if (expectedLotId !== undefined && d.lot_id !== expectedLotId) {
			throw new ServiceError(409, 'wrong-lot', 'This pending disposition belongs to another lot: open that lot to co-sign it. Nothing was signed.', 'dispositionId');
		}
		if (d.state !== 'awaiting-second-signature') {
			throw conflict(d.state === 'effective' ? 'This disposition is already in effect: it needs no further signature' : 'This disposition was superseded by a newer one: it can no longer be signed');
		}
		const first = await signatures.get(d.signature_id, tx);
		if (first && first.signerId === actor.id) {
			throw new ServiceError(403, 'same-signer', 'The second signature must come from a different QA manager than the first (two-person rule).', 'password');
		}
		const lot = await lots.lotRow(d.lot_id, tx, true);
		const record = await buildRecord(d.lot_id, d.id, d.decision, d.supersedes_id, tx);
		if (signatures.recordHash(record) !== d.record_hash) {
			throw conflict(`Lot ${lot.internal_lot} changed after the first signature (new scans or supplier data): the first signer must sign a new disposition`);
		}
		const manifestation = await signatures.sign(tx, actor, {
			password: data.password,
			meaning: data.meaning,
			reason: data.reason,
			recordType: 'disposition',
			recordId: d.id,
			recordHash: d.record_hash
		});
		const effective = await currentEffective(d.lot_id, tx);
		if (effective) await sequelize().query("UPDATE dispositions SET state = 'superseded' WHERE id = :id", { replacements: { id: effective.id }, transaction: tx });
		await sequelize().query("UPDATE dispositions SET state = 'effective', second_signature_id = :sig, effective_at = :at WHERE id = :id", {
			replacements: { id: d.id, sig: manifestation.id, at: manifestation.signedAt },
			transaction: tx
		});
		if (effective) await markSupersededBy(tx, effective.id, d.id);
		await audit.record(tx, actor, {
			action: 'lot.dispositioned',
			entity: 'lot',
			entityId: d.lot_id,
			before: { status: lot.status, disposition: effective?.id ?? null },
			after: { disposition: d.id, decision: d.decision, recordHash: d.record_hash, signatures: [d.signature_id, manifestation.id], twoPersonRule: true },
			reason: data.reason
		});
		await takeEffect(tx, actor, d.id, lot.status, d.decision);
		return { disposition: await toView(await row(d.id, tx), tx), manifestation, message: `Second signature applied: lot ${lot.internal_lot} ${DECISION_TEXT[d.decision]}.` };
	});
}

/** Lot status, certificate and outbox, inside the disposition's transaction. */
async function takeEffect(tx: Transaction, actor: Actor, dispositionId: number, statusBefore: string, decision: Decision) {
	const d = await row(dispositionId, tx);
	const status = LOT_STATUS[decision];
	await sequelize().query('UPDATE lots SET status = :status WHERE id = :lotId', { replacements: { status, lotId: d.lot_id }, transaction: tx });
	if (status !== statusBefore) {
		await audit.record(tx, actor, {
			action: 'lot.status-changed',
			entity: 'lot',
			entityId: d.lot_id,
			before: { status: statusBefore },
			after: { status },
			reason: `disposition ${dispositionId}: ${DECISION_TEXT[decision]}`
		});
	}
	const content = await certificateContent(dispositionId, { timeZone: timeZone(), auditHead: await audit.head(tx) }, tx);
	// The checkpoint goes out once the certificate and its audit events are committed.
	tx.afterCommit(() => checkpointSoon(`certificate of disposition ${dispositionId}`));
	const pdf = await renderCertificate(content);
	const sha256 = createHash('sha256').update(pdf).digest('hex');
	const [cert] = await sequelize().query<{ id: number }>(
		`INSERT INTO certificates (disposition_id, lot_id, content, content_hash, pdf, sha256, generated_at)
		 VALUES (:dispositionId, :lotId, :content, :contentHash, :pdf, :sha256, :generatedAt) RETURNING id`,
		{
			replacements: { dispositionId, lotId: d.lot_id, content: JSON.stringify(content), contentHash: certificateDocumentHash(content), pdf, sha256, generatedAt: content.issuedAt },
			type: QueryTypes.SELECT,
			transaction: tx
		}
	);
	await audit.record(tx, actor, {
		action: 'certificate.generated',
		entity: 'lot',
		entityId: d.lot_id,
		after: { certificate: cert.id, disposition: dispositionId, sha256, documentHash: certificateDocumentHash(content) }
	});
	const [material] = await sequelize().query<{ recipients: string[] }>('SELECT m.recipients FROM lots l JOIN materials m ON m.id = l.material_id WHERE l.id = :lotId', {
		replacements: { lotId: d.lot_id },
		type: QueryTypes.SELECT,
		transaction: tx
	});
	const fileName = `${content.lot.internalLot}-certificate-${dispositionId}.pdf`;
	const outboxId = await queueMail(tx, {
		kind: 'certificate',
		recipients: material?.recipients ?? [],
		subject: `Lot ${content.lot.internalLot} ${content.disposition.decisionText}: ${content.lot.material.code} from ${content.lot.supplier.code}`,
		body: [
			`Lot ${content.lot.internalLot} (${content.lot.material.code} · ${content.lot.material.name}, supplier ${content.lot.supplier.code} lot ${content.lot.supplierLot}) was ${content.disposition.decisionText}.`,
			'',
			`Identity: ${content.identitySummary}`,
			...content.signatures.map((s) => `Signed by ${s.signerName}, ${s.signedAtText}: ${s.meaning}. Reason: ${s.reason}`),
			'',
			`The certificate is attached (${fileName}, SHA-256 ${sha256}).`,
			'',
			content.caution
		].join('\n'),
		attachments: [{ filename: fileName, contentType: 'application/pdf', certificateId: cert.id }],
		lotId: d.lot_id,
		dispositionId
	});
	await audit.record(tx, actor, { action: 'mail.queued', entity: 'lot', entityId: d.lot_id, after: { outbox: outboxId, kind: 'certificate', recipients: material?.recipients ?? [] } });
}
