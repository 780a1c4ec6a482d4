// Dispositions: the certificate content from signed data only, the stored certificate, and its regeneration.
import { createHash } from 'node:crypto';
import { QueryTypes, type Transaction } from 'sequelize';
import { SCREENING_CAUTION } from '../../../caution';
import { verdictWord } from '../../../labels';
import { formatZoned } from '../../../signature-time';
import { sequelize } from '../../db';
import { describePath, type Identification, type LevelEvidence, type Verdict } from '../../../analysis';
import { identificationText } from '../identification';
import { renderCertificate, type CertificateContainer, type CertificateContent, type CertificateStats } from '../../reports/certificate-pdf';
import { CAUSE_LABELS } from '../container-results';
import { conflict, notFound } from '../errors';
import * as lots from '../lots';
import * as signatures from '../signatures';
import { row } from './read';
import { DECISION_TEXT } from './schema';

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
	if (r.levels && r.levels.length > 1) parts.push(`path: ${describePath(r.verdict as Verdict, r.path ?? [], r.levels, verdictWord)}`);
	const id = identificationText(r.identification, materialCode ?? 'this material');
	if (id) parts.push(`resembles (evidence only): ${id}`);
	return parts.length ? parts.join('; ') : null;
}

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
				model_review_overdue: boolean;
			}>(
				"SELECT id, model_review_overdue, result->'family' AS family, result->'classes' AS classes, reason, verdict, result->'path' AS path, result->'levels' AS levels, result->'identification' AS identification FROM scans WHERE id IN (:ids)",
				{ replacements: { ids: scanIds }, type: QueryTypes.SELECT, transaction: tx }
			)
		: [];
	const byScan = new Map(results.map((r) => [r.id, r]));
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
			// issue 12 §1: the version that screened it was past its review-by date (absent on older certificates)
			...(r?.model_review_overdue ? { modelReviewOverdue: true } : {}),
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
	const superseded = d.supersedes_id ? await row(d.supersedes_id, tx) : null;
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
			id: d.id,
			decision: d.decision,
			decisionText: DECISION_TEXT[d.decision],
			recordHash: d.record_hash,
			supersedes: superseded ? { id: superseded.id, decision: DECISION_TEXT[superseded.decision], effectiveAtText: superseded.effective_at ? formatZoned(new Date(superseded.effective_at).toISOString(), options.timeZone) : null } : null,
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
	return { id: r.id, dispositionId: r.disposition_id, lotId: r.lot_id, internalLot: r.internal_lot, pdf: r.pdf, sha256: r.sha256, content: r.content };
}

/** Draws the certificate again from the database (content rebuilt from the signed data), for verification. */
export async function regenerate(dispositionId: number): Promise<{ pdf: Buffer; sha256: string; matchesStored: boolean }> {
	const d = await row(dispositionId);
	const stored = await certificate(d.lot_id, dispositionId);
	const content = await certificateContent(dispositionId, { timeZone: stored.content.timeZone, auditHead: stored.content.auditHead ?? null });
	const pdf = await renderCertificate(content);
	const sha256 = createHash('sha256').update(pdf).digest('hex');
	return { pdf, sha256, matchesStored: sha256 === stored.sha256 };
}
