// Shared electronic-signature helper (21 CFR 11.50/11.70/11.200): re-entered password, printed name, time, meaning, reason,
// and the hash of the signed record, stored in `signatures` inside the caller's transaction.
import canonicalize from 'canonicalize';
import { createHash } from 'node:crypto';
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { lineText, proseText } from '../../validation/text';
import { sequelize } from '../db';
import type { Actor } from './actor';
import * as audit from './audit';
import { forbidden, invalid } from './errors';
import * as users from './users';

export interface SignInput {
	password: string;
	meaning: string;
	reason: string;
	/** e.g. 'model_version', 'lot' */
	recordType: string;
	recordId: string | number;
	/** sha256 hex of the signed record; use `recordHash(value)` for a canonical one. */
	recordHash: string;
}

/** What a signature shows wherever it is displayed or printed. */
export interface Manifestation {
	id: number;
	signerId: number;
	signerName: string;
	/** ISO 8601 with zone designator */
	signedAt: string;
	meaning: string;
	reason: string;
	recordType: string;
	recordId: string;
	recordHash: string;
}

export const signatureFieldsSchema = z.object({
	password: z.string().min(1, 'Re-enter your password to sign'),
	meaning: lineText(z.string().trim().min(3, 'Choose what the signature means').max(200)),
	reason: proseText(z.string().trim().min(3, 'Write the reason for signing').max(2000))
});

/** sha256 of the canonical JSON (RFC 8785) of a record, so the same content always hashes the same. */
export function recordHash(value: unknown): string {
	return createHash('sha256')
		.update(canonicalize(JSON.parse(JSON.stringify(value ?? null))) ?? 'null')
		.digest('hex');
}

/**
 * Verifies the signer's password and stores the signature in `tx`. Throws 401 `wrong-password` (field `password`)
 * or 423 `locked`; a wrong password counts toward the lockout. Returns the manifestation.
 */
export async function sign(tx: Transaction, actor: Actor, input: SignInput): Promise<Manifestation> {
	if (actor.id == null) throw forbidden('Only a person can sign');
	const fields = signatureFieldsSchema.parse(input);
	if (!/^[0-9a-f]{64}$/.test(input.recordHash)) throw invalid('The record hash must be a sha256 hex digest', 'recordHash');
	const signer = await users.confirmSigner(actor, fields.password);
	const signedAt = new Date();
	const [row] = await sequelize().query<{ id: number }>(
		`INSERT INTO signatures (signer_id, signer_name, meaning, reason, signed_at, record_type, record_id, record_hash)
		 VALUES (:signerId, :signerName, :meaning, :reason, :signedAt, :recordType, :recordId, :recordHash) RETURNING id`,
		{
			replacements: {
				signerId: signer.id,
				signerName: signer.name,
				meaning: fields.meaning,
				reason: fields.reason,
				signedAt,
				recordType: input.recordType,
				recordId: String(input.recordId),
				recordHash: input.recordHash
			},
			type: QueryTypes.SELECT,
			transaction: tx
		}
	);
	const manifestation: Manifestation = {
		id: row.id,
		signerId: signer.id,
		signerName: signer.name,
		signedAt: signedAt.toISOString(),
		meaning: fields.meaning,
		reason: fields.reason,
		recordType: input.recordType,
		recordId: String(input.recordId),
		recordHash: input.recordHash
	};
	await audit.record(tx, actor, {
		action: 'signature.applied',
		entity: input.recordType,
		entityId: input.recordId,
		after: manifestation,
		reason: fields.reason
	});
	return manifestation;
}

interface SignatureRow {
	id: number;
	signer_id: number;
	signer_name: string;
	meaning: string;
	reason: string;
	signed_at: Date;
	record_type: string;
	record_id: string;
	record_hash: string;
}

const toManifestation = (r: SignatureRow): Manifestation => ({
	id: r.id,
	signerId: r.signer_id,
	signerName: r.signer_name,
	signedAt: new Date(r.signed_at).toISOString(),
	meaning: r.meaning,
	reason: r.reason,
	recordType: r.record_type,
	recordId: r.record_id,
	recordHash: r.record_hash
});

/** Every signature on a record, oldest first. */
export async function forRecord(recordType: string, recordId: string | number, tx?: Transaction): Promise<Manifestation[]> {
	const rows = await sequelize().query<SignatureRow>('SELECT * FROM signatures WHERE record_type = :recordType AND record_id = :recordId ORDER BY signed_at, id', {
		replacements: { recordType, recordId: String(recordId) },
		type: QueryTypes.SELECT,
		transaction: tx
	});
	return rows.map(toManifestation);
}

export async function get(id: number, tx?: Transaction): Promise<Manifestation | null> {
	const rows = await sequelize().query<SignatureRow>('SELECT * FROM signatures WHERE id = :id', { replacements: { id }, type: QueryTypes.SELECT, transaction: tx });
	return rows[0] ? toManifestation(rows[0]) : null;
}
