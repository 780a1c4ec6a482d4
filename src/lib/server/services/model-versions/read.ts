// Model versions: reading a version, its list, its artefact text, the approved version and its training membership.
import { reviewStatus } from '../../../model-review';
import { createHash } from 'node:crypto';
import { QueryTypes, type Transaction } from 'sequelize';
import { serializeArtefact, type ModelArtefact } from '../../../analysis';
import { sequelize } from '../../db';
import { prepareStored } from '../artefact-store';
import * as acceptance from '../acceptance';
import { notFound, ServiceError } from '../errors';
import * as materials from '../materials';
import * as signatures from '../signatures';
import { type ExclusionCategory } from './schema';
import { type VersionRow, type Figures, type MembershipRow } from './types';

export async function row(id: number, tx?: Transaction, lock = false): Promise<VersionRow> {
	const rows = await sequelize().query<VersionRow>(`SELECT * FROM model_versions WHERE id = :id${lock ? ' FOR UPDATE' : ''}`, {
		replacements: { id },
		type: QueryTypes.SELECT,
		transaction: tx
	});
	if (!rows[0]) throw notFound(`Model version ${id}`);
	return rows[0];
}

/** A version by its id, or by a material code (its approved version, else its latest) or `CODE@N` / `CODE/vN`. */
export async function resolve(ref: string | number): Promise<number> {
	const text = String(ref).trim();
	if (/^\d+$/.test(text)) return Number(text);
	const m = /^(.+?)(?:[@/]v?(\d+))?$/i.exec(text);
	const material = await materials.get(m![1]);
	const rows = await sequelize().query<{ id: number }>(
		m![2]
			? 'SELECT id FROM model_versions WHERE material_id = :materialId AND version = :version'
			: "SELECT id FROM model_versions WHERE material_id = :materialId ORDER BY (state = 'approved') DESC, version DESC LIMIT 1",
		{ replacements: { materialId: material.id, version: Number(m![2] ?? 0) }, type: QueryTypes.SELECT }
	);
	if (!rows[0]) throw notFound(`A model version of ${material.code}${m![2] ? ` numbered ${m![2]}` : ''}`);
	return Number(rows[0].id);
}

async function userNames(ids: (number | null)[]) {
	const wanted = [...new Set(ids.filter((i): i is number => i != null))];
	if (!wanted.length) return new Map<number, string>();
	const rows = await sequelize().query<{ id: number; name: string }>('SELECT id, name FROM users WHERE id IN (:ids)', { replacements: { ids: wanted }, type: QueryTypes.SELECT });
	return new Map(rows.map((r) => [r.id, r.name]));
}

export const iso = (d: Date | null) => (d ? new Date(d).toISOString() : null);

function publicFigures(f: Figures | null) {
	if (!f) return null;
	const { projections: _p, overview: _o, ...rest } = f;
	return rest;
}

// A date column read as text (YYYY-MM-DD) or as a Date at local midnight, written as the calendar date it holds.
function reviewByOf(r: VersionRow): string | null {
	const d = r.review_by;
	if (d == null) return null;
	if (typeof d === 'string') return d.slice(0, 10);
	return new Date(d.getTime() - d.getTimezoneOffset() * 60_000).toISOString().slice(0, 10);
}

export async function toPublic(r: VersionRow, names?: Map<number, string>) {
	const who = names ?? (await userNames([r.built_by, r.approved_by]));
	const material = await materials.get(r.material_id);
	return {
		id: r.id,
		materialId: r.material_id,
		materialCode: material.code,
		version: r.version,
		label: `${material.code} v${r.version}`,
		state: r.state,
		params: r.params,
		progress: r.progress,
		error: r.error,
		jobId: r.job_id,
		parentId: r.parent_id,
		builtBy: { id: r.built_by, name: who.get(r.built_by) ?? `user ${r.built_by}` },
		createdAt: iso(r.created_at)!,
		finishedAt: iso(r.finished_at),
		approvedBy: r.approved_by ? { id: r.approved_by, name: who.get(r.approved_by) ?? `user ${r.approved_by}` } : null,
		approvedAt: iso(r.approved_at),
		approval: r.approval_signature_id ? await signatures.get(r.approval_signature_id) : null,
		retiredAt: iso(r.retired_at),
		artefactSha256: r.artefact_sha256,
		engineVersion: r.engine_version,
		figures: publicFigures(r.figures),
		validation: r.validation,
		pending: r.pending,
		changeNote: r.change_note,
		reviewBy: reviewByOf(r),
		// issue 12 §1: overdue, due soon or in time (UTC today); only the approved version is reviewed
		review: reviewStatus(r.state === 'approved' ? reviewByOf(r) : null),
		revalidation: r.revalidation ?? [],
		// stored at approval; for a draft, evaluated now against the material's current criteria
		acceptance: (r.acceptance ?? (r.state === 'draft' && r.validation ? await acceptance.evaluateVersion(r.id).catch(() => null) : null)) as acceptance.VersionAcceptance | null
	};
}

export type PublicVersion = Awaited<ReturnType<typeof toPublic>>;

export async function get(ref: string | number): Promise<PublicVersion> {
	return toPublic(await row(await resolve(ref)));
}

export async function listForMaterial(materialId: number) {
	const rows = await sequelize().query<VersionRow>(
		`SELECT id, material_id, version, state, params, artefact_sha256, engine_version, progress, error, job_id, parent_id, NULL AS figures,
		        validation, built_by, created_at, finished_at, approved_by, approved_at, approval_signature_id, retired_at, pending, change_note
		   FROM model_versions WHERE material_id = :materialId ORDER BY version DESC`,
		{ replacements: { materialId }, type: QueryTypes.SELECT }
	);
	const names = await userNames(rows.flatMap((r) => [r.built_by, r.approved_by]));
	const material = await materials.get(materialId);
	return rows.map((r) => ({
		id: r.id,
		version: r.version,
		label: `${material.code} v${r.version}`,
		state: r.state,
		builtBy: names.get(r.built_by) ?? `user ${r.built_by}`,
		createdAt: iso(r.created_at)!,
		finishedAt: iso(r.finished_at),
		approvedBy: r.approved_by ? (names.get(r.approved_by) ?? null) : null,
		approvedAt: iso(r.approved_at),
		retiredAt: iso(r.retired_at),
		parentId: r.parent_id,
		recipe: r.params.recipe,
		changeNote: r.change_note,
		error: r.error,
		progress: r.progress
	}));
}

/** The exact JSON text `lotgate screen --model` reads (canonical, so its sha256 is artefact_sha256). */
export async function artefactText(ref: string | number): Promise<{ text: string; sha256: string; label: string }> {
	const r = await row(await resolve(ref));
	if (!r.artefact) throw new ServiceError(409, 'no-artefact', r.state === 'failed' ? `This version failed to build: ${r.error}` : 'This version has no artefact yet: it is still building');
	const material = await materials.get(r.material_id);
	// hand out only an artefact that passes the same checks as screening (integrity, derivable limits, recorded hash)
	prepareStored(`${material.code} v${r.version}`, r.artefact, r.artefact_sha256);
	const text = serializeArtefact(r.artefact);
	return { text, sha256: createHash('sha256').update(text).digest('hex'), label: `${material.code}-v${r.version}` };
}

/** The approved version of a material, for the lot workflow; null when none is approved. */
export async function approvedFor(materialId: number): Promise<{ versionId: number; version: number; label: string; artefact: ModelArtefact; artefactSha256: string } | null> {
	const rows = await sequelize().query<Pick<VersionRow, 'id' | 'version' | 'artefact' | 'artefact_sha256'> & { code: string }>(
		`SELECT v.id, v.version, v.artefact, v.artefact_sha256, m.code FROM model_versions v JOIN materials m ON m.id = v.material_id
		  WHERE v.material_id = :materialId AND v.state = 'approved'`,
		{ replacements: { materialId }, type: QueryTypes.SELECT }
	);
	const r = rows[0];
	if (!r?.artefact) return null;
	return { versionId: r.id, version: r.version, label: `${r.code} v${r.version}`, artefact: r.artefact, artefactSha256: r.artefact_sha256! };
}

export async function memberships(versionId: number, tx?: Transaction): Promise<MembershipRow[]> {
	const rows = await sequelize().query<{ library_entry_id: number; included: boolean; exclusion_category: ExclusionCategory | null; exclusion_reason: string | null; inclusion_reason: string | null }>(
		'SELECT library_entry_id, included, exclusion_category, exclusion_reason, inclusion_reason FROM model_memberships WHERE model_version_id = :versionId ORDER BY library_entry_id',
		{ replacements: { versionId }, type: QueryTypes.SELECT, transaction: tx }
	);
	return rows.map((r) => ({ entryId: Number(r.library_entry_id), included: r.included, category: r.exclusion_category, reason: r.exclusion_reason, inclusionReason: r.inclusion_reason }));
}
