// Where a new scan's file comes from, checked before it is stored as evidence for a container:
// - identical raw bytes (SHA-256) already stored anywhere on the site (another lot's scan, a reference library, the
//   intake) are refused, naming where; an admin may override for a documented case, with a reason;
// - a header that names another lot or container than the upload target needs a confirmation, which is recorded.
import { createHash } from 'node:crypto';
import { QueryTypes, type Transaction } from 'sequelize';
import { can } from '../../permissions';
import { headerLabels, headerMismatches } from '../../spectra/labels';
import { sequelize } from '../db';
import { hasRole, type Actor } from './actor';
import { ServiceError } from './errors';

export interface OriginInput {
	lotId: number;
	internalLot: string;
	supplierLot: string;
	container: number;
	bytes: Uint8Array;
	/** SHA-256 of `bytes` when already computed. */
	sha256?: string;
	fileName: string;
	/** An admin's reason to store bytes that already exist elsewhere (a documented case). */
	duplicateOverrideReason?: string | null;
	/** The uploader's note confirming a file whose header names another lot or container. */
	headerConfirmation?: string | null;
}

/** What the scan's audit event records about the file's origin (null parts were not needed). */
export interface OriginRecord {
	duplicateOverride: { reason: string; storedAt: string[] } | null;
	headerConfirmation: { note: string; mismatches: string[]; headerLines: string[] } | null;
}

const pad = (n: number) => `C${String(n).padStart(2, '0')}`;
const MIN_REASON = 10;

interface StoredRow {
	id: number;
	context: 'loose' | 'library' | 'lot';
	file_name: string;
	created_at: Date;
	internal_lot: string | null;
	container: number | null;
	scan_id: number | null;
	material_code: string | null;
}

/** Every place outside this lot where the same bytes are stored, in words a person can follow. */
export async function storedElsewhere(tx: Transaction | undefined, sha256: string, lotId: number): Promise<string[]> {
	const rows = await sequelize().query<StoredRow>(
		`SELECT sp.id, sp.context, sp.file_name, sp.created_at, l.internal_lot, sc.container, sc.id AS scan_id, m.code AS material_code
		   FROM spectra sp
		   LEFT JOIN scans sc ON sc.spectrum_id = sp.id
		   LEFT JOIN lots l ON l.id = CASE WHEN sp.context = 'lot' THEN sp.context_id END
		   LEFT JOIN materials m ON m.id = CASE WHEN sp.context = 'library' THEN sp.context_id END
		  WHERE sp.sha256 = :sha256 AND sp.row_index = 0 AND NOT (sp.context = 'lot' AND sp.context_id = :lotId)
		  ORDER BY sp.id LIMIT 5`,
		{ replacements: { sha256, lotId }, type: QueryTypes.SELECT, transaction: tx }
	);
	return rows.map((r) => {
		const when = new Date(r.created_at).toISOString().slice(0, 10);
		if (r.context === 'lot') return `lot ${r.internal_lot ?? '?'}${r.container != null ? `, container ${pad(r.container)}` : ''} (${r.scan_id != null ? `scan #${r.scan_id}, ` : ''}file “${r.file_name}”, ${when})`;
		if (r.context === 'library') return `the reference library of ${r.material_code ?? 'a material'} (spectrum #${r.id}, file “${r.file_name}”, ${when})`;
		return `the intake (spectrum #${r.id}, file “${r.file_name}”, ${when})`;
	});
}

/**
 * Refuses or records the file's origin, inside the scan's transaction (before anything is stored). Throws 409
 * `duplicate-elsewhere` or `header-mismatch`; the error's details say what a confirmation or override needs.
 */
export async function check(tx: Transaction, actor: Actor, input: OriginInput): Promise<OriginRecord> {
	const record: OriginRecord = { duplicateOverride: null, headerConfirmation: null };
	const sha256 = input.sha256 ?? createHash('sha256').update(input.bytes).digest('hex');
	const elsewhere = await storedElsewhere(tx, sha256, input.lotId);
	if (elsewhere.length) {
		const mayOverride = hasRole(actor, can.overrideDuplicateEvidence);
		const reason = (input.duplicateOverrideReason ?? '').trim();
		if (!mayOverride || reason.length < MIN_REASON) {
			const where = elsewhere.join('; ');
			throw new ServiceError(
				409,
				'duplicate-elsewhere',
				mayOverride && reason
					? `Write the documented case in at least ${MIN_REASON} characters to store these bytes again. They are already stored in ${where}.`
					: `${input.fileName}: these exact bytes (SHA-256 ${sha256.slice(0, 12)}…) are already stored in ${where}. One measurement is evidence for one container only, so it was not stored. Scan the container again.${mayOverride ? ' As an admin you may store it anyway for a documented case, with a reason.' : ' Only an admin can store it anyway, for a documented case.'}`,
				'file',
				{
					storedAt: elsewhere,
					sha256,
					...(mayOverride ? { confirm: { field: 'duplicateOverrideReason', label: 'Documented case (admin override)', minLength: MIN_REASON } } : {})
				}
			);
		}
		record.duplicateOverride = { reason, storedAt: elsewhere };
	}
	const labels = headerLabels(input.bytes);
	const mismatches = headerMismatches(labels, { lotNumbers: [input.internalLot, input.supplierLot], container: input.container });
	if (mismatches.length) {
		const note = (input.headerConfirmation ?? '').trim();
		if (note.length < MIN_REASON) {
			throw new ServiceError(
				409,
				'header-mismatch',
				`${input.fileName}: ${mismatches.join('; ')}. Check that this is the right file for lot ${input.internalLot} container ${pad(input.container)}. To upload it anyway, say why the header differs (at least ${MIN_REASON} characters); your note is recorded with the scan.`,
				'file',
				{ mismatches, headerLines: labels.lines, confirm: { field: 'headerConfirmation', label: 'Why the header differs', minLength: MIN_REASON } }
			);
		}
		record.headerConfirmation = { note, mismatches, headerLines: labels.lines };
	}
	return record;
}
