// Dispositions: the stored row, its public view, a lot's dispositions and pending second signatures.
import { QueryTypes, type Transaction } from 'sequelize';
import { sequelize } from '../../db';
import { notFound } from '../errors';
import * as lots from '../lots';
import * as signatures from '../signatures';
import { type SignedRecord } from './record';
import { type Decision, type DispositionState, DECISION_TEXT } from './schema';

interface DispositionRow {
	id: number;
	lot_id: number;
	decision: Decision;
	state: DispositionState;
	needs_second: boolean;
	record: SignedRecord;
	record_hash: string;
	signature_id: number;
	second_signature_id: number | null;
	supersedes_id: number | null;
	superseded_by: number | null;
	status_before: string;
	created_by: number;
	created_at: Date;
	effective_at: Date | null;
}

export interface DispositionView {
	id: number;
	lotId: number;
	decision: Decision;
	decisionText: string;
	state: DispositionState;
	needsSecond: boolean;
	recordHash: string;
	signatures: signatures.Manifestation[];
	supersedesId: number | null;
	supersededBy: number | null;
	createdAt: string;
	effectiveAt: string | null;
	certificate: { id: number; sha256: string; size: number } | null;
}

export async function row(id: number, tx?: Transaction, lock = false): Promise<DispositionRow> {
	if (!Number.isInteger(id) || id < 1) throw notFound(`Disposition ${id}`);
	const rows = await sequelize().query<DispositionRow>(`SELECT * FROM dispositions WHERE id = :id${lock ? ' FOR UPDATE' : ''}`, { replacements: { id }, type: QueryTypes.SELECT, transaction: tx });
	if (!rows[0]) throw notFound(`Disposition ${id}`);
	return rows[0];
}

export async function toView(r: DispositionRow, tx?: Transaction): Promise<DispositionView> {
	const sigs = [await signatures.get(r.signature_id, tx), r.second_signature_id ? await signatures.get(r.second_signature_id, tx) : null].filter((s): s is signatures.Manifestation => !!s);
	const certs = await sequelize().query<{ id: number; sha256: string; size: number }>('SELECT id, sha256, octet_length(pdf) AS size FROM certificates WHERE disposition_id = :id', {
		replacements: { id: r.id },
		type: QueryTypes.SELECT,
		transaction: tx
	});
	return {
		id: r.id,
		lotId: r.lot_id,
		decision: r.decision,
		decisionText: DECISION_TEXT[r.decision],
		state: r.state,
		needsSecond: r.needs_second,
		recordHash: r.record_hash,
		signatures: sigs,
		supersedesId: r.supersedes_id,
		supersededBy: r.superseded_by,
		createdAt: new Date(r.created_at).toISOString(),
		effectiveAt: r.effective_at ? new Date(r.effective_at).toISOString() : null,
		certificate: certs[0] ? { id: certs[0].id, sha256: certs[0].sha256, size: certs[0].size } : null
	};
}

export async function get(id: number): Promise<DispositionView> {
	return toView(await row(id));
}

/** Every disposition of a lot, newest first: the effective one, a pending one, and the superseded history. */
export async function forLot(lotRef: number | string): Promise<DispositionView[]> {
	const lotId = await lots.resolve(lotRef);
	const rows = await sequelize().query<DispositionRow>('SELECT * FROM dispositions WHERE lot_id = :lotId ORDER BY id DESC', { replacements: { lotId }, type: QueryTypes.SELECT });
	return Promise.all(rows.map((r) => toView(r)));
}

/** Pending second signatures (the QA home queue). */
export async function awaitingSecond(limit = 20) {
	return sequelize().query<{ id: number; lot_id: number; internal_lot: string; signer_name: string; signer_id: number; created_at: Date }>(
		`SELECT d.id, d.lot_id, l.internal_lot, s.signer_name, s.signer_id, d.created_at FROM dispositions d
		   JOIN lots l ON l.id = d.lot_id JOIN signatures s ON s.id = d.signature_id
		  WHERE d.state = 'awaiting-second-signature' ORDER BY d.id LIMIT :limit`,
		{ replacements: { limit }, type: QueryTypes.SELECT }
	);
}
