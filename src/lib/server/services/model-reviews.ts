// Periodic review and revalidation triggers of approved model versions (issue 12 §1).
// - A version carries a review-by date, set at approval from the material's acceptance criteria (reviewMonths).
// - Past it the version keeps screening, but each scan it screens records "model review overdue".
// - Revalidation triggers are appended to the version: a new instrument (transfer approved), a change of the
//   material's library, 3 or more invalidated scans of the material within 30 days.
// - A chemometrician or QA manager records the periodic review with an electronic signature: "fit for use" sets the
//   next review-by date (review date + the material's review period); "revalidate" keeps the date, so the version
//   stays overdue until a new version is approved.
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { can } from '../../permissions';
import { DUE_SOON_DAYS, reviewStatus, reviewText, utcToday, type ReviewStatus } from '../../model-review';
import { proseText } from '../../validation/text';
import { sequelize, transaction } from '../db';
import * as acceptance from './acceptance';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { conflict, forbidden, invalid, notFound } from './errors';
import * as signatures from './signatures';

export const REVIEW_MEANING = 'periodic review recorded';
export const REVIEW_OUTCOMES = ['fit-for-use', 'revalidate'] as const;
export type ReviewOutcome = (typeof REVIEW_OUTCOMES)[number];
export const OUTCOME_LABELS: Record<ReviewOutcome, string> = {
	'fit-for-use': 'fit for use: screening continues to the next review-by date',
	revalidate: 'revalidate: a new version must be built and approved'
};

/** The invalidation trigger: this many approved invalidations of the material's scans within INVALIDATION_WINDOW_DAYS. */
export const INVALIDATION_TRIGGER_COUNT = 3;
export const INVALIDATION_WINDOW_DAYS = 30;

export type TriggerKind = 'new-instrument' | 'library-change' | 'invalidations';
export interface Trigger {
	kind: TriggerKind | string;
	at: string;
	detail: string;
}

/** Appends a revalidation trigger to a version, in the caller's transaction (the caller records its own audit event). */
export async function recordRevalidation(tx: Transaction, versionId: number, kind: TriggerKind, detail: string) {
	await sequelize().query(`UPDATE model_versions SET revalidation = revalidation || jsonb_build_array(jsonb_build_object('kind', :kind::text, 'at', :at::text, 'detail', :detail::text)) WHERE id = :id`, {
		replacements: { id: versionId, kind, at: new Date().toISOString(), detail },
		transaction: tx
	});
}

async function approvedVersionOf(tx: Transaction, materialId: number) {
	const rows = await sequelize().query<{ id: number; version: number; revalidation: Trigger[] }>(
		"SELECT id, version, revalidation FROM model_versions WHERE material_id = :m AND state = 'approved' FOR UPDATE",
		{ replacements: { m: materialId }, type: QueryTypes.SELECT, transaction: tx }
	);
	return rows[0] ? { id: Number(rows[0].id), version: rows[0].version, revalidation: rows[0].revalidation ?? [] } : null;
}

/** A library upload to a material with an approved version: "library change" on that version, audited. */
export async function noteLibraryChange(tx: Transaction, actor: Actor, materialId: number, detail: string) {
	const v = await approvedVersionOf(tx, materialId);
	if (!v) return null;
	await recordRevalidation(tx, v.id, 'library-change', detail);
	await audit.record(tx, actor, { action: 'model.revalidation-triggered', entity: 'model_version', entityId: v.id, after: { kind: 'library-change', detail }, reason: detail });
	return v.id;
}

/**
 * After an invalidation is approved: when the material's scans have INVALIDATION_TRIGGER_COUNT or more approved
 * invalidations decided within the last INVALIDATION_WINDOW_DAYS, the approved version gets an "invalidations"
 * trigger (once per window: not again while one recorded within the window stands), audited.
 */
export async function noteInvalidation(tx: Transaction, actor: Actor, materialId: number) {
	const v = await approvedVersionOf(tx, materialId);
	if (!v) return null;
	const [{ n }] = await sequelize().query<{ n: number }>(
		`SELECT count(*)::int AS n FROM scan_invalidations iv JOIN lots l ON l.id = iv.lot_id
		  WHERE l.material_id = :m AND iv.state = 'approved' AND iv.decided_at > now() - make_interval(days => :days)`,
		{ replacements: { m: materialId, days: INVALIDATION_WINDOW_DAYS }, type: QueryTypes.SELECT, transaction: tx }
	);
	if (Number(n) < INVALIDATION_TRIGGER_COUNT) return null;
	const windowStart = Date.now() - INVALIDATION_WINDOW_DAYS * 86_400_000;
	if (v.revalidation.some((t) => t.kind === 'invalidations' && Date.parse(t.at) > windowStart)) return null;
	const detail = `${n} scans of this material invalidated within ${INVALIDATION_WINDOW_DAYS} days (threshold ${INVALIDATION_TRIGGER_COUNT})`;
	await recordRevalidation(tx, v.id, 'invalidations', detail);
	await audit.record(tx, actor, { action: 'model.revalidation-triggered', entity: 'model_version', entityId: v.id, after: { kind: 'invalidations', count: Number(n), windowDays: INVALIDATION_WINDOW_DAYS }, reason: detail });
	return v.id;
}

export const reviewSchema = z.object({
	outcome: z.enum(REVIEW_OUTCOMES, { errorMap: () => ({ message: 'Choose the outcome of the review: fit for use, or revalidate' }) }),
	reason: proseText(z.string().trim().min(3, 'Write what the review found (the summary is the reason for signing)').max(4000)),
	password: z.string().min(1, 'Re-enter your password to sign'),
	// The signature has one meaning; a missing one is that meaning, any other text is refused.
	meaning: z
		.string()
		.optional()
		.transform((m) => (m == null || m.trim() === '' ? REVIEW_MEANING : m.trim()))
		.refine((m) => m === REVIEW_MEANING, `The meaning of this signature is "${REVIEW_MEANING}"`)
});

export interface ReviewView {
	id: number;
	outcome: ReviewOutcome;
	summary: string;
	triggers: Trigger[];
	reviewByBefore: string | null;
	reviewByAfter: string | null;
	reviewedBy: string;
	reviewedAt: string;
	signature: signatures.Manifestation | null;
}

const dateText = (d: string | Date | null) => (d == null ? null : typeof d === 'string' ? d.slice(0, 10) : new Date(d.getTime() - d.getTimezoneOffset() * 60_000).toISOString().slice(0, 10));

/** Records the periodic review of an approved version, signed by the reviewer, with its audit event. */
export async function record(actor: Actor, versionId: number, input: z.input<typeof reviewSchema>) {
	if (actor.id == null || !hasRole(actor, can.reviewModels)) throw forbidden('Only a chemometrician or a QA manager records the periodic review of a model version');
	const parsed = reviewSchema.safeParse(input ?? {});
	if (!parsed.success) {
		const issue = parsed.error.issues[0];
		throw invalid(issue.message, issue.path.join('.') || undefined);
	}
	const data = parsed.data;
	return transaction(async (tx) => {
		const rows = await sequelize().query<{ id: number; version: number; state: string; material_id: number; code: string; review_by: string | Date | null; revalidation: Trigger[]; artefact_sha256: string | null }>(
			`SELECT v.id, v.version, v.state, v.material_id, m.code, v.review_by::text AS review_by, v.revalidation, v.artefact_sha256
			   FROM model_versions v JOIN materials m ON m.id = v.material_id WHERE v.id = :id FOR UPDATE OF v`,
			{ replacements: { id: versionId }, type: QueryTypes.SELECT, transaction: tx }
		);
		const v = rows[0];
		if (!v) throw notFound(`Model version ${versionId}`);
		const label = `${v.code} v${v.version}`;
		if (v.state !== 'approved') throw conflict(`${label} is ${v.state}: only the approved version of a material has a periodic review`);
		const before = dateText(v.review_by);
		// the triggers recorded since the last review are the ones this review considered
		const [last] = await sequelize().query<{ reviewed_at: Date }>('SELECT reviewed_at FROM model_reviews WHERE model_version_id = :id ORDER BY id DESC LIMIT 1', {
			replacements: { id: v.id },
			type: QueryTypes.SELECT,
			transaction: tx
		});
		const since = last ? new Date(last.reviewed_at).getTime() : -Infinity;
		const triggers = (v.revalidation ?? []).filter((t) => Date.parse(t.at) > since);
		const reviewedAt = new Date();
		const months = (await acceptance.effective(v.material_id, tx)).criteria.reviewMonths;
		const after = data.outcome === 'fit-for-use' ? acceptance.reviewByDate(reviewedAt, months) : before;
		const manifestation = await signatures.sign(tx, actor, {
			password: data.password,
			meaning: data.meaning,
			reason: data.reason,
			recordType: 'model_review',
			recordId: v.id,
			recordHash: signatures.recordHash({ recordType: 'model_review', version: label, artefactSha256: v.artefact_sha256, outcome: data.outcome, reviewByBefore: before, reviewByAfter: after, triggers })
		});
		const [created] = await sequelize().query<{ id: number }>(
			`INSERT INTO model_reviews (model_version_id, outcome, summary, triggers, review_by_before, review_by_after, reviewed_by, reviewed_at, signature_id)
			 VALUES (:v, :outcome, :summary, :triggers, :before, :after, :by, :at, :sig) RETURNING id`,
			{
				replacements: { v: v.id, outcome: data.outcome, summary: data.reason, triggers: JSON.stringify(triggers), before, after, by: actor.id, at: new Date(manifestation.signedAt), sig: manifestation.id },
				type: QueryTypes.SELECT,
				transaction: tx
			}
		);
		if (after !== before) await sequelize().query('UPDATE model_versions SET review_by = :after WHERE id = :id', { replacements: { after, id: v.id }, transaction: tx });
		await audit.record(tx, actor, {
			action: 'model.reviewed',
			entity: 'model_version',
			entityId: v.id,
			before: { reviewBy: before },
			after: { reviewId: Number(created.id), outcome: data.outcome, reviewBy: after, triggers: triggers.length, signatureId: manifestation.id },
			reason: data.reason
		});
		return { id: Number(created.id), version: label, outcome: data.outcome, reviewByBefore: before, reviewByAfter: after, triggers, signature: manifestation };
	});
}

/** A version's periodic reviews, newest first. */
export async function forVersion(versionId: number): Promise<ReviewView[]> {
	const rows = await sequelize().query<{ id: number; outcome: ReviewOutcome; summary: string; triggers: Trigger[]; review_by_before: string | Date | null; review_by_after: string | Date | null; name: string; reviewed_at: Date; signature_id: number }>(
		`SELECT r.id, r.outcome, r.summary, r.triggers, r.review_by_before::text AS review_by_before, r.review_by_after::text AS review_by_after, u.name, r.reviewed_at, r.signature_id
		   FROM model_reviews r JOIN users u ON u.id = r.reviewed_by WHERE r.model_version_id = :id ORDER BY r.id DESC`,
		{ replacements: { id: versionId }, type: QueryTypes.SELECT }
	);
	return Promise.all(
		rows.map(async (r) => ({
			id: Number(r.id),
			outcome: r.outcome,
			summary: r.summary,
			triggers: r.triggers ?? [],
			reviewByBefore: dateText(r.review_by_before),
			reviewByAfter: dateText(r.review_by_after),
			reviewedBy: r.name,
			reviewedAt: new Date(r.reviewed_at).toISOString(),
			signature: await signatures.get(Number(r.signature_id))
		}))
	);
}

export interface DueVersion {
	id: number;
	label: string;
	materialCode: string;
	version: number;
	review: ReviewStatus;
	text: string;
	/** revalidation triggers recorded since the last review */
	openTriggers: number;
}

/** Approved versions whose review is overdue or due within DUE_SOON_DAYS, the most overdue first. */
export async function due(today: string = utcToday()): Promise<{ overdue: DueVersion[]; dueSoon: DueVersion[] }> {
	const rows = await sequelize().query<{ id: number; version: number; code: string; review_by: string; revalidation: Trigger[]; last_review: Date | null }>(
		`SELECT v.id, v.version, m.code, v.review_by::text AS review_by, v.revalidation,
		        (SELECT max(r.reviewed_at) FROM model_reviews r WHERE r.model_version_id = v.id) AS last_review
		   FROM model_versions v JOIN materials m ON m.id = v.material_id
		  WHERE v.state = 'approved' AND v.review_by IS NOT NULL AND v.review_by <= CAST(:today AS date) + :days
		  ORDER BY v.review_by, m.code`,
		{ replacements: { today, days: DUE_SOON_DAYS }, type: QueryTypes.SELECT }
	);
	const out = rows.map((r) => {
		const review = reviewStatus(dateText(r.review_by), today);
		const since = r.last_review ? new Date(r.last_review).getTime() : -Infinity;
		return {
			id: Number(r.id),
			label: `${r.code} v${r.version}`,
			materialCode: r.code,
			version: r.version,
			review,
			text: reviewText(review),
			openTriggers: (r.revalidation ?? []).filter((t) => Date.parse(t.at) > since).length
		};
	});
	return { overdue: out.filter((d) => d.review.state === 'overdue'), dueSoon: out.filter((d) => d.review.state === 'due-soon') };
}

/** Home-page queue items: the overdue or the due-soon reviews. */
export async function queueItems(which: 'overdue' | 'dueSoon') {
	return (await due())[which].map((d) => ({
		key: `review:${d.id}`,
		href: `/materials/${d.materialCode}/versions/${d.version}#review`,
		label: d.label,
		detail: `${d.text}${d.openTriggers ? ` · ${d.openTriggers} revalidation trigger${d.openTriggers === 1 ? '' : 's'}` : ''}`
	}));
}
