// QA dispositions of a lot: release, quarantine or reject with an electronic signature (21 CFR 11.50/11.70/11.200).
import { can } from '../../permissions';
// A disposition is never edited; a correction is a new one that supersedes it. Releasing a lot that failed identity
// needs a second QA signature from a different person. When a disposition takes effect, in the same transaction, the
// lot status changes, the certificate is generated and stored, and the mail is written to the outbox.
import { createHash } from 'node:crypto';
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { SCREENING_CAUTION } from '../../caution';
import { DEFAULT_TIME_ZONE, formatZoned } from '../../signature-time';
import { sequelize, transaction } from '../db';
import { checkpointSoon } from '../audit-checkpoint';
import { queueMail } from '../mail';
import { describePath, type Identification, type LevelEvidence, type Verdict } from '../../analysis';
import { identificationText } from './identification';
import { certificateDocumentHash, renderCertificate, type CertificateContainer, type CertificateContent, type CertificateStats } from '../reports/certificate-pdf';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import * as containerResults from './container-results';
import { CAUSE_LABELS } from './container-results';
import { conflict, forbidden, notFound, ServiceError } from './errors';
import * as lots from './lots';
import * as signatures from './signatures';

export type Decision = 'release' | 'quarantine' | 'reject';
export const DECISIONS: Decision[] = ['release', 'quarantine', 'reject'];
export type DispositionState = 'awaiting-second-signature' | 'effective' | 'superseded';

/** Suggested meanings per decision; the signer may word their own. */
export const MEANINGS: Record<Decision, string[]> = {
	release: ['released for use'],
	quarantine: ['quarantined pending investigation', 'held in quarantine'],
	reject: ['rejected', 'rejected and returned to the supplier']
};
export const COSIGN_MEANINGS = ['second signature: released for use despite the failed identity', 'approved as second QA manager'];
export const DECISION_TEXT: Record<Decision, string> = { release: 'released', quarantine: 'quarantined', reject: 'rejected' };
const LOT_STATUS: Record<Decision, lots.LotStatus> = { release: 'released', quarantine: 'quarantined', reject: 'rejected' };

export const dispositionSchema = signatures.signatureFieldsSchema.extend({
	decision: z.enum(['release', 'quarantine', 'reject'], { errorMap: () => ({ message: 'Choose release, quarantine or reject' }) })
});
export type DispositionInput = z.input<typeof dispositionSchema>;
export const cosignSchema = signatures.signatureFieldsSchema;

const timeZone = () => process.env.LOTGATE_TIME_ZONE || DEFAULT_TIME_ZONE;

function requireQa(actor: Actor) {
	if (actor.id == null || !hasRole(actor, can.signDispositions)) throw forbidden('Only a QA manager signs a disposition');
}

// ---------- the signed record ----------

interface SignedRecord {
	kind: 'lot-disposition';
	dispositionId: number;
	decision: Decision;
	supersedes: number | null;
	lot: {
		id: number;
		internalLot: string;
		material: { code: string; name: string; technique: string };
		supplier: { code: string; name: string; status: string };
		supplierLot: string;
		containers: number;
		receivedAt: string;
		plan: CertificateContent['plan'];
	};
	identity: string;
	identitySummary: string;
	/**
	 * Every sampled container with its result (`verdict`) and the decisive scan (the latest counting scan with that
	 * verdict; null while it awaits one), plus its whole scan history with any invalidation.
	 */
	scans: {
		container: number;
		scanId: number | null;
		verdict: string;
		profile: string | null;
		ambiguous: boolean;
		fileName: string | null;
		sha256: string | null;
		modelVersionId: number | null;
		replicates?: { done: number; required: number };
		history?: RecordScan[];
	}[];
	/** Some container ever had a valid non-genuine scan: a release takes two signatures. */
	failingHistory?: boolean;
	modelVersions: { id: number; label: string; artefactSha256: string | null }[];
}

export interface RecordScan {
	scanId: number;
	verdict: string;
	profile: string | null;
	fileName: string;
	sha256: string;
	counts: boolean;
	invalidated: { cause: string; description: string; proposedBy: string; approvedBy: string; at: string } | null;
}

async function buildRecord(lotId: number, dispositionId: number, decision: Decision, supersedes: number | null, tx: Transaction): Promise<SignedRecord> {
	const lot = await lots.get(lotId, tx);
	const byNumber = new Map(lot.containers.map((c) => [c.number, c]));
	// The decisive scan of a container: the latest counting scan whose verdict is the container's result.
	const counted = new Map(
		lot.containers
			.map((c) => [c.number, [...c.scans].reverse().find((s) => s.counts && s.verdict === c.result)] as const)
			.filter((e): e is readonly [number, lots.ScanView] => !!e[1])
	);
	const versionIds = [...new Set(lot.scans.filter((s) => s.counts).map((s) => s.modelVersion?.id).filter((v): v is number => v != null))].sort((a, b) => a - b);
	const versions = versionIds.length
		? await sequelize().query<{ id: number; version: number; artefact_sha256: string | null }>('SELECT id, version, artefact_sha256 FROM model_versions WHERE id IN (:ids) ORDER BY id', {
				replacements: { ids: versionIds },
				type: QueryTypes.SELECT,
				transaction: tx
			})
		: [];
	const plan = lot.plan as unknown as lots.StoredPlan & { sampled: number[] };
	return {
		kind: 'lot-disposition',
		dispositionId,
		decision,
		supersedes,
		lot: {
			id: lot.id,
			internalLot: lot.internalLot,
			material: { code: lot.material.code, name: lot.material.name, technique: lot.material.technique },
			supplier: { code: lot.supplier.code, name: lot.supplier.name, status: lot.supplier.status },
			supplierLot: lot.supplierLot,
			containers: lot.containerCount,
			receivedAt: lot.receivedAt,
			plan: {
				label: plan.label ?? plan.kind,
				count: plan.count ?? lot.sampled.length,
				containers: plan.containers ?? lot.containerCount,
				formula: plan.formula ?? '',
				basis: plan.basis ?? '',
				justification: plan.justification ?? null,
				seed: plan.seed ?? 0,
				sampled: [...lot.sampled].sort((a, b) => a - b)
			}
		},
		identity: lot.identity ?? 'incomplete',
		identitySummary: lot.outcome.summary,
		scans: [...lot.sampled]
			.sort((a, b) => a - b)
			.map((container) => {
				const s = counted.get(container);
				const c = byNumber.get(container)!;
				const extra = {
					replicates: c.replicates,
					history: c.scans.map((h) => ({ scanId: h.id, verdict: h.verdict, profile: h.profile, fileName: h.fileName, sha256: h.sha256, counts: h.counts, invalidated: h.invalidated }))
				};
				return s
					? { container, scanId: s.id, verdict: c.result ?? s.verdict, profile: c.profile ?? s.profile, ambiguous: s.ambiguous, fileName: s.fileName, sha256: s.sha256, modelVersionId: s.modelVersion?.id ?? null, ...extra }
					: { container, scanId: null, verdict: 'awaiting-scan', profile: null, ambiguous: false, fileName: null, sha256: null, modelVersionId: null, ...extra };
			}),
		failingHistory: lot.failingHistory,
		modelVersions: versions.map((v) => ({ id: Number(v.id), label: `${lot.material.code} v${v.version}`, artefactSha256: v.artefact_sha256 }))
	};
}

// ---------- reading ----------

/**
 * The scan's reason, followed by its model-tree path when the tree is deeper than two levels, and, for a wrong
 * material, what it resembles (evidence only). Results without these fields read exactly as before.
 */
function withTreeEvidence(
	r: { reason: string | null; verdict: string; path: string[] | null; levels: LevelEvidence[] | null; identification: Identification | null } | undefined,
	materialCode: string | undefined
): string | null {
	if (!r) return null;
	const parts = r.reason ? [r.reason] : [];
	if (r.levels && r.levels.length > 1) parts.push(`path: ${describePath(r.verdict as Verdict, r.path ?? [], r.levels)}`);
	const id = identificationText(r.identification, materialCode ?? 'this material');
	if (id) parts.push(`resembles (evidence only): ${id}`);
	return parts.length ? parts.join('; ') : null;
}

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

async function row(id: number, tx?: Transaction, lock = false): Promise<DispositionRow> {
	if (!Number.isInteger(id) || id < 1) throw notFound(`Disposition ${id}`);
	const rows = await sequelize().query<DispositionRow>(`SELECT * FROM dispositions WHERE id = :id${lock ? ' FOR UPDATE' : ''}`, { replacements: { id }, type: QueryTypes.SELECT, transaction: tx });
	if (!rows[0]) throw notFound(`Disposition ${id}`);
	return rows[0];
}

async function toView(r: DispositionRow, tx?: Transaction): Promise<DispositionView> {
	const sigs = [await signatures.get(r.signature_id, tx), r.second_signature_id ? await signatures.get(r.second_signature_id, tx) : null].filter((s): s is signatures.Manifestation => !!s);
	const certs = await sequelize().query<{ id: number; sha256: string; size: number }>('SELECT id, sha256, octet_length(pdf) AS size FROM certificates WHERE disposition_id = :id', {
		replacements: { id: r.id },
		type: QueryTypes.SELECT,
		transaction: tx
	});
	return {
		id: Number(r.id),
		lotId: Number(r.lot_id),
		decision: r.decision,
		decisionText: DECISION_TEXT[r.decision],
		state: r.state,
		needsSecond: r.needs_second,
		recordHash: r.record_hash,
		signatures: sigs,
		supersedesId: r.supersedes_id == null ? null : Number(r.supersedes_id),
		supersededBy: r.superseded_by == null ? null : Number(r.superseded_by),
		createdAt: new Date(r.created_at).toISOString(),
		effectiveAt: r.effective_at ? new Date(r.effective_at).toISOString() : null,
		certificate: certs[0] ? { id: Number(certs[0].id), sha256: certs[0].sha256, size: Number(certs[0].size) } : null
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

// ---------- deciding ----------

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
		const [{ id: nextId }] = await sequelize().query<{ id: string }>("SELECT nextval('dispositions_id_seq') AS id", { type: QueryTypes.SELECT, transaction: tx });
		const id = Number(nextId);
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
	return rows[0] ? { id: Number(rows[0].id), decision: rows[0].decision } : null;
}

/** The second signature of a release despite failed identity: a different QA manager, with their own reason. */
export async function cosign(actor: Actor, dispositionId: number, input: z.input<typeof cosignSchema>, expectedLotId?: number) {
	requireQa(actor);
	const data = cosignSchema.parse(input);
	return transaction(async (tx) => {
		const d = await row(dispositionId, tx, true);
		// Bound to the lot the signer is looking at: a pending release of another lot is never co-signed from this page.
		if (expectedLotId !== undefined && Number(d.lot_id) !== expectedLotId) {
			throw new ServiceError(409, 'wrong-lot', 'This pending disposition belongs to another lot: open that lot to co-sign it. Nothing was signed.', 'dispositionId');
		}
		if (d.state !== 'awaiting-second-signature') {
			throw conflict(d.state === 'effective' ? 'This disposition is already in effect: it needs no further signature' : 'This disposition was superseded by a newer one: it can no longer be signed');
		}
		const first = await signatures.get(d.signature_id, tx);
		if (first && first.signerId === actor.id) {
			throw new ServiceError(403, 'same-signer', 'The second signature must come from a different QA manager than the first (two-person rule).', 'password');
		}
		const lot = await lots.lotRow(Number(d.lot_id), tx, true);
		const record = await buildRecord(Number(d.lot_id), Number(d.id), d.decision, d.supersedes_id == null ? null : Number(d.supersedes_id), tx);
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
		const effective = await currentEffective(Number(d.lot_id), tx);
		if (effective) await sequelize().query("UPDATE dispositions SET state = 'superseded' WHERE id = :id", { replacements: { id: effective.id }, transaction: tx });
		await sequelize().query("UPDATE dispositions SET state = 'effective', second_signature_id = :sig, effective_at = :at WHERE id = :id", {
			replacements: { id: d.id, sig: manifestation.id, at: manifestation.signedAt },
			transaction: tx
		});
		if (effective) await markSupersededBy(tx, effective.id, Number(d.id));
		await audit.record(tx, actor, {
			action: 'lot.dispositioned',
			entity: 'lot',
			entityId: d.lot_id,
			before: { status: lot.status, disposition: effective?.id ?? null },
			after: { disposition: Number(d.id), decision: d.decision, recordHash: d.record_hash, signatures: [d.signature_id, manifestation.id], twoPersonRule: true },
			reason: data.reason
		});
		await takeEffect(tx, actor, Number(d.id), lot.status, d.decision);
		return { disposition: await toView(await row(Number(d.id), tx), tx), manifestation, message: `Second signature applied: lot ${lot.internal_lot} ${DECISION_TEXT[d.decision]}.` };
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
		after: { certificate: Number(cert.id), disposition: dispositionId, sha256, documentHash: certificateDocumentHash(content) }
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
		attachments: [{ filename: fileName, contentType: 'application/pdf', certificateId: Number(cert.id) }],
		lotId: Number(d.lot_id),
		dispositionId
	});
	await audit.record(tx, actor, { action: 'mail.queued', entity: 'lot', entityId: d.lot_id, after: { outbox: outboxId, kind: 'certificate', recipients: material?.recipients ?? [] } });
}

// ---------- certificate ----------

const finite = (x: unknown) => (typeof x === 'number' && Number.isFinite(x) ? x : null);
function stats(s: Record<string, unknown> | null | undefined): CertificateStats | null {
	if (!s) return null;
	return { t2: finite(s.t2), t2Limit: finite(s.t2Limit), spe: finite(s.spe), speLimit: finite(s.speLimit), c: finite(s.c), cCrit: finite(s.cCrit), h: finite(s.h), v: finite(s.v), accepted: s.accepted === true };
}

/**
 * The certificate's content, only from data that never changes once signed: the signed record, the signatures, the
 * counted scans' stored results and the model artefact. Rebuilding it later therefore gives the same content.
 */
export async function certificateContent(dispositionId: number, options: { timeZone: string; auditHead?: { seq: number; hash: string } | null }, tx?: Transaction): Promise<CertificateContent> {
	const d = await row(dispositionId, tx);
	if (!d.effective_at) throw conflict('Only a disposition in effect has a certificate');
	const record = d.record;
	const sigs = [await signatures.get(d.signature_id, tx), d.second_signature_id ? await signatures.get(d.second_signature_id, tx) : null].filter((s): s is signatures.Manifestation => !!s);
	const scanIds = record.scans.map((s) => s.scanId).filter((x): x is number => x != null);
	const results = scanIds.length
		? await sequelize().query<{
				id: number;
				family: Record<string, unknown> | null;
				classes: Record<string, Record<string, unknown>> | null;
				reason: string | null;
				verdict: string;
				path: string[] | null;
				levels: LevelEvidence[] | null;
				identification: Identification | null;
			}>(
				"SELECT id, result->'family' AS family, result->'classes' AS classes, reason, verdict, result->'path' AS path, result->'levels' AS levels, result->'identification' AS identification FROM scans WHERE id IN (:ids)",
				{ replacements: { ids: scanIds }, type: QueryTypes.SELECT, transaction: tx }
			)
		: [];
	const byScan = new Map(results.map((r) => [Number(r.id), r]));
	const primary = record.modelVersions[record.modelVersions.length - 1] ?? null;
	let genuineName: string | null = null;
	let plot: CertificateContent['plot'] = null;
	let engineVersion: string | null = null;
	if (primary) {
		const [m] = await sequelize().query<{ genuine: string | null; engine: string | null; model: Record<string, unknown> | null }>(
			`SELECT artefact->>'genuine' AS genuine, artefact->>'engineVersion' AS engine,
			        jsonb_build_object('name', g->'name', 'h0', g->'h0', 'v0', g->'v0', 'nh', g->'nh', 'nq', g->'nq', 'cCrit', g->'cCrit', 'cOutlier', g->'cOutlier',
			                           'h', g->'training'->'cv'->'h', 'v', g->'training'->'cv'->'v') AS model
			   FROM (SELECT artefact, coalesce(artefact->'models'->(artefact->>'genuine'), artefact->'family') AS g FROM model_versions WHERE id = :id) x`,
			{ replacements: { id: primary.id }, type: QueryTypes.SELECT, transaction: tx }
		);
		genuineName = m?.genuine ?? null;
		engineVersion = m?.engine ?? null;
		const g = m?.model as { name: string; h0: number; v0: number; nh: number; nq: number; cCrit: number; cOutlier: number | null; h: number[] | null; v: number[] | null } | null;
		if (g && finite(g.h0) && finite(g.v0) && finite(g.cCrit)) {
			const sx = (h: number) => (g.nh * h) / g.h0;
			const sy = (v: number) => (g.nq * v) / g.v0;
			const lotPoints: NonNullable<CertificateContent['plot']>['lot'] = [];
			for (const s of record.scans) {
				const r = s.scanId != null ? byScan.get(s.scanId) : undefined;
				const st = genuineName ? r?.classes?.[genuineName] : r?.family;
				const h = finite(st?.h);
				const v = finite(st?.v);
				if (h != null && v != null) lotPoints.push({ container: s.container, x: sx(h), y: sy(v), verdict: s.verdict });
			}
			plot = {
				model: g.name ?? genuineName ?? 'family',
				cCrit: g.cCrit,
				cOutlier: finite(g.cOutlier),
				training: (g.h ?? []).map((h, i) => [sx(h), sy((g.v ?? [])[i] ?? 0)] as [number, number]).filter(([x, y]) => Number.isFinite(x) && Number.isFinite(y)),
				lot: lotPoints
			};
		}
	}
	const containers: CertificateContainer[] = record.scans.map((s) => {
		const r = s.scanId != null ? byScan.get(s.scanId) : undefined;
		return {
			container: s.container,
			scanId: s.scanId,
			verdict: s.verdict,
			profile: s.profile,
			ambiguous: s.ambiguous,
			reason: withTreeEvidence(r, record.lot.material.code) ?? (s.scanId == null ? 'no valid scan at the time of the decision' : null),
			fileName: s.fileName,
			sha256: s.sha256,
			family: stats(r?.family),
			genuine: genuineName ? stats(r?.classes?.[genuineName]) : null,
			...(s.history
				? {
						replicates: s.replicates,
						scans: s.history.map((h) => ({
							scanId: h.scanId,
							fileName: h.fileName,
							sha12: h.sha256.slice(0, 12),
							verdict: h.verdict,
							profile: h.profile,
							counts: h.counts,
							invalidated: h.invalidated
								? { ...h.invalidated, causeLabel: CAUSE_LABELS[h.invalidated.cause as keyof typeof CAUSE_LABELS] ?? h.invalidated.cause, atText: formatZoned(h.invalidated.at, options.timeZone) }
								: null
						}))
					}
				: {})
		};
	});
	const superseded = d.supersedes_id ? await row(Number(d.supersedes_id), tx) : null;
	const issuedAt = new Date(d.effective_at).toISOString();
	return {
		schema: 1,
		number: `CERT-${record.lot.internalLot}-${d.id}`,
		timeZone: options.timeZone,
		issuedAt,
		issuedAtText: formatZoned(issuedAt, options.timeZone),
		lot: {
			id: record.lot.id,
			internalLot: record.lot.internalLot,
			material: record.lot.material,
			supplier: record.lot.supplier,
			supplierLot: record.lot.supplierLot,
			containers: record.lot.containers,
			receivedAt: record.lot.receivedAt
		},
		plan: record.lot.plan,
		model: record.modelVersions.length
			? {
					label: record.modelVersions.map((v) => v.label).join('; '),
					artefactSha256: record.modelVersions.map((v) => v.artefactSha256 ?? 'unknown').join('; '),
					engineVersion: engineVersion ? `lotgate engine ${engineVersion}` : null
				}
			: null,
		identity: record.identity,
		identitySummary: record.identitySummary,
		containers,
		plot,
		disposition: {
			id: Number(d.id),
			decision: d.decision,
			decisionText: DECISION_TEXT[d.decision],
			recordHash: d.record_hash,
			supersedes: superseded ? { id: Number(superseded.id), decision: DECISION_TEXT[superseded.decision], effectiveAtText: superseded.effective_at ? formatZoned(new Date(superseded.effective_at).toISOString(), options.timeZone) : null } : null,
			twoPersonRule: d.needs_second,
			...(d.needs_second && record.failingHistory && record.identity !== 'fails'
				? { twoPersonReason: 'A container of the lot had a non-genuine result, since invalidated' }
				: {})
		},
		signatures: sigs.map((s, i) => ({
			signerName: s.signerName,
			signedAt: s.signedAt,
			signedAtText: formatZoned(s.signedAt, options.timeZone),
			meaning: s.meaning,
			reason: s.reason,
			recordHash: s.recordHash,
			role: i === 0 ? 'first' : 'second'
		})),
		auditHead: options.auditHead ?? null,
		caution: SCREENING_CAUTION
	};
}

export interface StoredCertificate {
	id: number;
	dispositionId: number;
	lotId: number;
	internalLot: string;
	pdf: Buffer;
	sha256: string;
	content: CertificateContent;
}

/** The stored certificate of a lot's effective disposition (or of a given disposition). */
export async function certificate(lotRef: number | string, dispositionId?: number): Promise<StoredCertificate> {
	const lotId = await lots.resolve(lotRef);
	const rows = await sequelize().query<{ id: number; disposition_id: number; lot_id: number; pdf: Buffer; sha256: string; content: CertificateContent; internal_lot: string }>(
		`SELECT c.id, c.disposition_id, c.lot_id, c.pdf, c.sha256, c.content, l.internal_lot
		   FROM certificates c JOIN dispositions d ON d.id = c.disposition_id JOIN lots l ON l.id = c.lot_id
		  WHERE c.lot_id = :lotId AND ${dispositionId ? 'c.disposition_id = :dispositionId' : "d.state = 'effective'"} ORDER BY c.id DESC LIMIT 1`,
		{ replacements: { lotId, dispositionId: dispositionId ?? null }, type: QueryTypes.SELECT }
	);
	const r = rows[0];
	if (!r) throw notFound(dispositionId ? `The certificate of disposition ${dispositionId}` : `A certificate for lot ${lotRef} (no disposition is in effect)`);
	return { id: Number(r.id), dispositionId: Number(r.disposition_id), lotId: Number(r.lot_id), internalLot: r.internal_lot, pdf: r.pdf, sha256: r.sha256, content: r.content };
}

/** Draws the certificate again from the database (content rebuilt from the signed data), for verification. */
export async function regenerate(dispositionId: number): Promise<{ pdf: Buffer; sha256: string; matchesStored: boolean }> {
	const d = await row(dispositionId);
	const stored = await certificate(Number(d.lot_id), dispositionId);
	const content = await certificateContent(dispositionId, { timeZone: stored.content.timeZone, auditHead: stored.content.auditHead ?? null });
	const pdf = await renderCertificate(content);
	const sha256 = createHash('sha256').update(pdf).digest('hex');
	return { pdf, sha256, matchesStored: sha256 === stored.sha256 };
}


/** QA home queue: releases waiting for a second signature; the first signer sees theirs as waiting for someone else. */
export async function queueItems(actor: Actor) {
	return (await awaitingSecond()).map((p) => {
		const mine = Number(p.signer_id) === actor.id;
		return {
			key: `disposition:${p.id}`,
			internalLot: p.internal_lot,
			href: `/lots/${p.internal_lot}`,
			label: mine ? `${p.internal_lot} · your release waits for a second signature` : `${p.internal_lot} · release needs a second signature`,
			detail: mine ? 'waiting for a second signature by another QA user' : `first signed by ${p.signer_name}`
		};
	});
}
