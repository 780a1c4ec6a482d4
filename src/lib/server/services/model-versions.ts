// Model versions of a material: build (as a pg-boss job), evidence figures, validation, exclusions and rebuilds, diffs,
import { can } from '../../permissions';
// and QA approval with an electronic signature. Only the single approved version of a material screens lots.
import { createHash } from 'node:crypto';
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { nameText, proseText } from '../../validation/text';
import { buildModel, evaluate, parseRecipe, prepareArtefact, screen, serializeArtefact, type ModelArtefact, type ValidationReport } from '../../analysis';
import { chi2Inv } from '../../analysis/quantiles';
import { alphaRefusal } from '../../analysis/alpha-bounds';
import { convertAxis, resampleOnto } from '../../analysis/axis';
import { sequelize, transaction } from '../db';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { prepareStored } from './artefact-store';
import * as acceptance from './acceptance';
import { conflict, forbidden, invalid, notFound, ServiceError } from './errors';
import * as library from './library';
import * as materials from './materials';
import * as signatures from './signatures';
import { enqueue } from '../jobs/boss';
import { QUEUES } from '../jobs/queues';

export const APPROVAL_MEANING = 'approved for screening';
export const EXCLUSION_CATEGORIES = ['instrument-fault', 'mislabelled', 'sample-preparation', 'statistical-outlier', 'other'] as const;
export type ExclusionCategory = (typeof EXCLUSION_CATEGORIES)[number];
export const EXCLUSION_LABELS: Record<ExclusionCategory, string> = {
	'instrument-fault': 'Instrument fault',
	mislabelled: 'Mislabelled',
	'sample-preparation': 'Sample preparation',
	'statistical-outlier': 'Statistical outlier at γ',
	other: 'Other'
};
export const GROUPINGS = ['supplier_lot', 'supplier', 'instrument', 'none'] as const;
/** At least this many included training spectra per class, and at least A + 3 when A is fixed. */
export const MIN_PER_CLASS = 10;
export const minimumFor = (components: number | 'auto') => Math.max(MIN_PER_CLASS, components === 'auto' ? 0 : components + 3);

/** α bounds for identity use (issue 12): the engine refuses the same values, with the same reason. */
const alphaIssue = (kind: 'class' | 'family') => (a: number, ctx: z.RefinementCtx) => {
	const refusal = alphaRefusal(kind, a);
	if (refusal) ctx.addIssue({ code: 'custom', message: refusal[0].toUpperCase() + refusal.slice(1) });
};

const components = z.union([z.literal('auto'), z.coerce.number().int('Components must be a whole number').min(1, 'At least 1 component').max(30, 'At most 30 components')]);
const componentsInput = z.preprocess((v) => (v === '' || v == null ? 'auto' : v), components);

/**
 * Mirrors `lotgate build`: --recipe --components (class models) --family-components --alpha --family-alpha --gamma --limits
 * --folds --group-column (here: which label groups the folds) --spe-limit --genuine.
 */
export const buildParamsSchema = z.object({
	recipe: z
		.string()
		.trim()
		.default('center')
		.superRefine((text, ctx) => {
			try {
				parseRecipe(text);
			} catch (e) {
				ctx.addIssue({ code: 'custom', message: (e as Error).message });
			}
		}),
	components: componentsInput.default('auto'),
	familyComponents: componentsInput.default('auto'),
	alpha: z.coerce.number().superRefine(alphaIssue('class')).default(0.05),
	familyAlpha: z.coerce.number().superRefine(alphaIssue('family')).default(0.01),
	gamma: z.coerce.number().gt(0, 'γ must be above 0').lt(0.5, 'γ must be below 0.5').default(0.01),
	limits: z.enum(['cv', 'training'], { errorMap: () => ({ message: 'Limits come from cv or training' }) }).default('cv'),
	folds: z.coerce.number().int().min(2, 'At least 2 folds').max(20, 'At most 20 folds').default(7),
	groupBy: z.enum(GROUPINGS, { errorMap: () => ({ message: 'Group folds by supplier_lot, supplier, instrument or none' }) }).default('supplier_lot'),
	speLimit: z.enum(['jackson-mudholkar', 'box', 'moments'], { errorMap: () => ({ message: 'SPE limit is jackson-mudholkar, box or moments' }) }).default('moments'),
	genuine: nameText(z.string().trim().toLowerCase()).optional(),
	note: proseText(z.string().trim().max(2000)).optional()
});
export type BuildParams = z.infer<typeof buildParamsSchema>;
export type BuildParamsInput = z.input<typeof buildParamsSchema>;

const exclusionSchema = z.object({
	entryIds: z.array(z.coerce.number().int().positive()).min(1, 'Select at least one spectrum'),
	category: z.enum(EXCLUSION_CATEGORIES, { errorMap: () => ({ message: 'Choose the reason category' }) }),
	reason: proseText(z.string().trim().min(3, 'Write why these spectra are excluded').max(2000))
});
const inclusionSchema = z.object({
	entryIds: z.array(z.coerce.number().int().positive()).min(1, 'Select at least one spectrum'),
	reason: proseText(z.string().trim().min(3, 'Write why these spectra come back').max(2000))
});
export type ExclusionInput = z.input<typeof exclusionSchema>;

interface Pending {
	exclude: { entryId: number; category: ExclusionCategory; reason: string }[];
	include: { entryId: number; reason: string }[];
}

export type VersionState = 'building' | 'failed' | 'draft' | 'approved' | 'retired';

interface VersionRow {
	id: number;
	material_id: number;
	version: number;
	state: VersionState;
	params: BuildParams;
	artefact: ModelArtefact | null;
	artefact_sha256: string | null;
	engine_version: string | null;
	progress: Progress;
	error: string | null;
	job_id: string | null;
	parent_id: number | null;
	figures: Figures | null;
	validation: Validation | null;
	built_by: number;
	created_at: Date;
	finished_at: Date | null;
	approved_by: number | null;
	approved_at: Date | null;
	approval_signature_id: number | null;
	retired_at: Date | null;
	pending: Pending;
	change_note: string | null;
	review_by?: string | Date | null;
	revalidation?: { kind: string; at: string; detail: string }[];
	acceptance?: acceptance.VersionAcceptance | null;
}

export interface Progress {
	stage?: string;
	model?: string;
	fold?: number;
	folds?: number;
	done?: number;
	total?: number;
	message?: string;
	percent?: number;
	at?: string;
}

export interface ModelFigure {
	name: string;
	kind: 'family' | 'genuine' | 'suspect';
	n: number;
	components: number;
	componentsRule: 'auto' | 'fixed';
	suggested: number;
	alpha: number;
	cCrit: number;
	cvFalseRejectRate: number;
	trainingFalseRejectRate: number;
	/** CV false-reject rate at other α, from the cross-validated c of the training objects. */
	frrByAlpha: { alpha: number; cv: number; training: number }[];
	explained: number;
	/** Engine guards: A at the cap, N_h or N_q below 3 (issue 12 §4). */
	warnings?: string[];
	parsimonious?: number | null;
}
export interface Figures {
	trainingCount: number;
	excludedCount: number;
	classes: { name: string; kind: 'genuine' | 'suspect'; n: number }[];
	models: ModelFigure[];
	/** Every library spectrum of the material (training, test, challenge) screened through this version: id → stats. */
	projections: Record<string, Projection>;
	/** Every library spectrum resampled onto every k-th point of the model axis (about 150 points), for overview plots. */
	overview: { axis: number[]; spectra: Record<string, number[]> };
	buildMs: number;
}
export interface Projection {
	role: string;
	label: string;
	verdict: string;
	profile: string | null;
	/** model name ('family' for stage 1) → distances */
	models: Record<string, { h: number; v: number; c: number; accepted: boolean; scores?: number[] }>;
}
export interface Validation {
	tested: number;
	testCount: number;
	challengeCount: number;
	/** engine's evaluate() result without the per-spectrum results: confusion K×(K+2), per-class metrics with Clopper–Pearson 95 % intervals */
	report: Omit<ValidationReport, 'results'> | null;
	verdicts: { entryId: number; label: string; role: string; verdict: string; profile: string | null; reason: string | null }[];
}

// ---------- reading ----------

async function row(id: number, tx?: Transaction, lock = false): Promise<VersionRow> {
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

const iso = (d: Date | null) => (d ? new Date(d).toISOString() : null);

function publicFigures(f: Figures | null) {
	if (!f) return null;
	const { projections: _p, overview: _o, ...rest } = f;
	return rest;
}

async function toPublic(r: VersionRow, names?: Map<number, string>) {
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
		reviewBy: r.review_by ? new Date(r.review_by).toISOString().slice(0, 10) : null,
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

export interface MembershipRow {
	entryId: number;
	included: boolean;
	category: ExclusionCategory | null;
	reason: string | null;
	inclusionReason: string | null;
}

export async function memberships(versionId: number, tx?: Transaction): Promise<MembershipRow[]> {
	const rows = await sequelize().query<{ library_entry_id: number; included: boolean; exclusion_category: ExclusionCategory | null; exclusion_reason: string | null; inclusion_reason: string | null }>(
		'SELECT library_entry_id, included, exclusion_category, exclusion_reason, inclusion_reason FROM model_memberships WHERE model_version_id = :versionId ORDER BY library_entry_id',
		{ replacements: { versionId }, type: QueryTypes.SELECT, transaction: tx }
	);
	return rows.map((r) => ({ entryId: Number(r.library_entry_id), included: r.included, category: r.exclusion_category, reason: r.exclusion_reason, inclusionReason: r.inclusion_reason }));
}

// ---------- building ----------

function requireBuilder(actor: Actor) {
	if (!hasRole(actor, can.buildModels)) throw forbidden('Only a chemometrician or an admin builds model versions');
	if (actor.id == null) throw forbidden('A model version is built by a named person');
}

interface PlannedMembership {
	entryId: number;
	included: boolean;
	category?: ExclusionCategory | null;
	reason?: string | null;
	inclusionReason?: string | null;
}

/** Refuses a build that cannot give a sound model, before any job runs: classes too small, axes without a common range. */
async function checkTrainingSet(material: { id: number; code: string }, params: BuildParams, planned: PlannedMembership[]) {
	const classes = await materials.classes(material.id);
	if (!classes.some((c) => c.kind === 'genuine')) throw invalid(`${material.code} has no genuine class yet: add it before building`, 'classes');
	const included = new Set(planned.filter((p) => p.included).map((p) => p.entryId));
	const entries = (await library.entriesOf(material.id, ['training'])).filter((e) => included.has(e.id));
	const byClass = new Map<string, number>();
	for (const e of entries) byClass.set(e.label, (byClass.get(e.label) ?? 0) + 1);
	const problems: string[] = [];
	for (const c of classes) {
		const A = params.components;
		const need = minimumFor(A);
		const have = byClass.get(c.name) ?? 0;
		if (have < need) problems.push(`class ${c.name} has ${have} included training spectra, needs at least ${need} (max(10, A + 3)${A === 'auto' ? '' : ` with A = ${A}`})`);
	}
	const familyNeed = minimumFor(params.familyComponents);
	if (entries.length < familyNeed) problems.push(`the family model has ${entries.length} training spectra, needs at least ${familyNeed}`);
	if (problems.length) throw invalid(`Cannot build ${material.code}: ${problems.join('; ')}. Add library spectra, re-include some, or lower the fixed component count.`, 'training');
	if (params.genuine && !classes.some((c) => c.name === params.genuine)) throw invalid(`"${params.genuine}" is not a class of ${material.code}`, 'genuine');

	// A common axis exists only if every spectrum covers one shared interval (after unit conversion).
	const axes = await sequelize().query<{ id: number; unit: 'nm' | 'cm-1' | 'um'; lo: number; hi: number; first: number; last: number; points: number }>(
		`SELECT e.id, sp.unit, sp.axis[1] AS first, sp.axis[array_length(sp.axis,1)] AS last, sp.points
		   FROM library_entries e JOIN spectra sp ON sp.id = e.spectrum_id WHERE e.id IN (:ids)`,
		{ replacements: { ids: entries.map((e) => e.id) }, type: QueryTypes.SELECT }
	);
	const target = axes[0].unit;
	let lo = -Infinity;
	let hi = Infinity;
	let loId = axes[0].id;
	let hiId = axes[0].id;
	for (const a of axes) {
		const [x1, x2] = Array.from(convertAxis([Number(a.first), Number(a.last)], a.unit, target));
		const [min, max] = [Math.min(x1, x2), Math.max(x1, x2)];
		if (min > lo) (lo = min), (loId = a.id);
		if (max < hi) (hi = max), (hiId = a.id);
	}
	if (!(hi > lo)) {
		throw invalid(`Cannot build ${material.code}: the training spectra have no common axis range (entry ${loId} starts at ${lo.toFixed(1)} ${target}, entry ${hiId} ends at ${hi.toFixed(1)} ${target})`, 'training');
	}
	const range = parseRecipe(params.recipe).find((s) => s.op === 'range');
	if (range && range.op === 'range' && (range.from < lo - 1e-9 || range.to > hi + 1e-9)) {
		throw invalid(`The recipe's range(${range.from},${range.to}) is outside the range every training spectrum covers (${lo.toFixed(1)}–${hi.toFixed(1)} ${target})`, 'recipe');
	}
}

async function planMemberships(materialId: number, parentId: number | null, pending: Pending, extra: Pending['exclude'] = []): Promise<PlannedMembership[]> {
	const training = await library.entriesOf(materialId, ['training']);
	const previous = parentId ? new Map((await memberships(parentId)).map((m) => [m.entryId, m])) : new Map<number, MembershipRow>();
	const excludeNow = new Map([...pending.exclude, ...extra].map((e) => [e.entryId, e]));
	const includeNow = new Map(pending.include.map((e) => [e.entryId, e]));
	const trainingIds = new Set(training.map((t) => t.id));
	for (const id of [...excludeNow.keys(), ...includeNow.keys()]) if (!trainingIds.has(id)) throw invalid(`Library entry ${id} is not a training spectrum of this material`, 'entryIds');
	return training
		.filter((t) => t.kind != null) // challenge aliens never train; training rows always carry a class
		.map((t) => {
			const ex = excludeNow.get(t.id);
			if (ex) return { entryId: t.id, included: false, category: ex.category, reason: ex.reason };
			const inc = includeNow.get(t.id);
			if (inc) return { entryId: t.id, included: true, inclusionReason: inc.reason };
			const prev = previous.get(t.id);
			if (prev && !prev.included) return { entryId: t.id, included: false, category: prev.category, reason: prev.reason };
			return { entryId: t.id, included: true, inclusionReason: prev?.inclusionReason ?? null };
		});
}

async function insertVersion(tx: Transaction, actor: Actor, materialId: number, params: BuildParams, planned: PlannedMembership[], parentId: number | null, changeNote: string | null) {
	await sequelize().query('SELECT pg_advisory_xact_lock(7402001, :materialId)', { replacements: { materialId }, transaction: tx });
	const [next] = await sequelize().query<{ n: number }>('SELECT coalesce(max(version), 0) + 1 AS n FROM model_versions WHERE material_id = :materialId', {
		replacements: { materialId },
		type: QueryTypes.SELECT,
		transaction: tx
	});
	const [created] = await sequelize().query<{ id: number; version: number }>(
		`INSERT INTO model_versions (material_id, version, state, params, progress, parent_id, built_by, change_note)
		 VALUES (:materialId, :version, 'building', :params, :progress, :parentId, :builtBy, :changeNote) RETURNING id, version`,
		{
			replacements: {
				materialId,
				version: Number(next.n),
				params: JSON.stringify(params),
				progress: JSON.stringify({ stage: 'queued', message: 'Waiting for a build worker', percent: 0 }),
				parentId,
				builtBy: actor.id,
				changeNote
			},
			type: QueryTypes.SELECT,
			transaction: tx
		}
	);
	if (planned.length) {
		const values = planned.map((_, i) => `(:v, :e${i}, :in${i}, :c${i}, :r${i}, :ir${i})`).join(',');
		const replacements: Record<string, unknown> = { v: created.id };
		planned.forEach((p, i) => {
			replacements[`e${i}`] = p.entryId;
			replacements[`in${i}`] = p.included;
			replacements[`c${i}`] = p.included ? null : p.category;
			replacements[`r${i}`] = p.included ? null : p.reason;
			replacements[`ir${i}`] = p.included ? (p.inclusionReason ?? null) : null;
		});
		await sequelize().query(
			`INSERT INTO model_memberships (model_version_id, library_entry_id, included, exclusion_category, exclusion_reason, inclusion_reason) VALUES ${values}`,
			{ replacements, transaction: tx }
		);
	}
	return { id: Number(created.id), version: Number(created.version) };
}

export interface BuildOptions {
	/** Run in this process instead of queueing (demo seed, bench); the request path always queues. */
	inline?: boolean;
	/** Initial exclusions for a first build. */
	exclude?: Pending['exclude'];
}

/** Creates a `building` version with its training membership, then queues the build. Returns { id, jobId }. */
export async function createBuild(actor: Actor, materialRef: number | string, input: BuildParamsInput, options: BuildOptions = {}) {
	requireBuilder(actor);
	const material = await materials.get(materialRef);
	const params = buildParamsSchema.parse(input ?? {});
	const exclude = (options.exclude ?? []).map((e) => ({ ...e, reason: e.reason.trim() }));
	if (exclude.some((e) => !e.reason)) throw invalid('Every exclusion needs a reason', 'reason');
	const planned = await planMemberships(material.id, null, { exclude: [], include: [] }, exclude);
	await checkTrainingSet(material, params, planned);
	const created = await transaction(async (tx) => {
		const v = await insertVersion(tx, actor, material.id, params, planned, null, params.note ?? null);
		await audit.record(tx, actor, {
			action: 'model.build-requested',
			entity: 'model_version',
			entityId: v.id,
			after: { material: material.code, version: v.version, params, training: planned.filter((p) => p.included).length, excluded: planned.filter((p) => !p.included).length },
			reason: params.note ?? 'new model version'
		});
		return v;
	});
	return start(created.id, options.inline);
}

async function start(id: number, inline?: boolean) {
	if (inline) {
		await runBuild(id);
		return { id, jobId: null as string | null };
	}
	const jobId = await enqueue(QUEUES.modelBuild, { versionId: id });
	await sequelize().query('UPDATE model_versions SET job_id = :jobId WHERE id = :id', { replacements: { id, jobId } });
	return { id, jobId: jobId as string | null };
}

/** The build itself (job handler, or inline): never throws; a failure leaves state `failed` with the reason. */
export async function runBuild(versionId: number): Promise<void> {
	const started = performance.now();
	let lastWrite = 0;
	let pendingWrite: Promise<unknown> = Promise.resolve();
	const writeProgress = (p: Progress, force = false) => {
		const now = performance.now();
		// Throttled: a 7-fold build of 4 models reports hundreds of steps; the page polls about once a second.
		if (!force && now - lastWrite < 250) return;
		lastWrite = now;
		pendingWrite = pendingWrite.then(() =>
			sequelize().query("UPDATE model_versions SET progress = :p WHERE id = :id AND state = 'building'", {
				replacements: { id: versionId, p: JSON.stringify({ ...p, at: new Date().toISOString() }) }
			})
		);
	};
	try {
		const v = await row(versionId);
		if (v.state !== 'building') return;
		const material = await materials.get(v.material_id);
		const classes = await materials.classes(v.material_id);
		const members = (await memberships(versionId)).filter((m) => m.included);
		writeProgress({ stage: 'loading', message: `Loading ${members.length} training spectra`, percent: 1 }, true);
		// One read of the whole library: the training set, and the held-out spectra the evidence screens.
		const everything = await library.withSpectra((await library.entriesOf(v.material_id, ['training', 'test', 'challenge'])).map((e) => e.id));
		const memberIds = new Set(members.map((m) => m.entryId));
		const training = everything.filter((e) => memberIds.has(e.id));
		const params = v.params;
		const groupKey = params.groupBy;
		const groupOf = (e: library.LibraryRow) => (groupKey === 'supplier_lot' ? e.supplierLot : groupKey === 'supplier' ? e.supplier : groupKey === 'instrument' ? e.instrument : null);
		const useGroups = groupKey !== 'none' && training.some((e) => groupOf(e));
		const genuine = params.genuine ?? classes.find((c) => c.kind === 'genuine')?.name;
		const artefact = buildModel(
			training.map((e) => ({ id: String(e.id), axis: e.axis, values: e.values, unit: e.unit, className: e.label, group: useGroups ? (groupOf(e) ?? null) : null })),
			{
				recipe: params.recipe,
				components: params.components,
				familyComponents: params.familyComponents,
				alpha: params.alpha,
				familyAlpha: params.familyAlpha,
				gamma: params.gamma,
				limits: params.limits,
				folds: params.folds,
				speLimit: params.speLimit,
				genuine,
				meta: { material: material.code, version: String(v.version), versionId: String(v.id), technique: material.technique },
				onProgress: (p: { done: number; total: number; stage: string; model: string; fold?: number; folds?: number; message: string }) => {
					const percent = p.total ? Math.min(95, 5 + Math.round((90 * (p.done ?? 0)) / p.total)) : undefined;
					writeProgress({ ...p, percent });
				}
			}
		);
		writeProgress({ stage: 'validating', message: 'Screening test and challenge spectra', percent: 96 }, true);
		const text = serializeArtefact(artefact);
		const sha = createHash('sha256').update(text).digest('hex');
		const { figures, validation } = evidence(everything, artefact, members, classes, started);
		await pendingWrite;
		await transaction(async (tx) => {
			await sequelize().query(
				`UPDATE model_versions SET state = 'draft', artefact = :artefact, artefact_sha256 = :sha, engine_version = :engine, figures = :figures,
				        validation = :validation, progress = :progress, finished_at = now(), error = NULL WHERE id = :id AND state = 'building'`,
				{
					replacements: {
						id: versionId,
						artefact: text,
						sha,
						engine: artefact.engineVersion,
						figures: JSON.stringify(figures),
						validation: JSON.stringify(validation),
						progress: JSON.stringify({ stage: 'done', message: `Built in ${(figures.buildMs / 1000).toFixed(1)} s`, percent: 100, at: new Date().toISOString() })
					},
					transaction: tx
				}
			);
			await audit.record(tx, { id: v.built_by, label: `build job for user ${v.built_by}`, roles: [] }, {
				action: 'model.built',
				entity: 'model_version',
				entityId: versionId,
				after: { state: 'draft', artefactSha256: sha, engineVersion: artefact.engineVersion, models: figures.models.map((m) => ({ name: m.name, A: m.components, cvFalseRejectRate: m.cvFalseRejectRate })) }
			});
		});
	} catch (error) {
		await pendingWrite.catch(() => {});
		const message = error instanceof Error ? error.message : String(error);
		await transaction(async (tx) => {
			await sequelize().query(
				"UPDATE model_versions SET state = 'failed', error = :message, progress = jsonb_set(progress, '{stage}', '\"failed\"'), finished_at = now() WHERE id = :id AND state = 'building'",
				{ replacements: { id: versionId, message }, transaction: tx }
			);
			await audit.record(tx, { id: null, label: 'build job', roles: [] }, { action: 'model.build-failed', entity: 'model_version', entityId: versionId, after: { error: message } });
		}).catch((e) => console.error('[model-build] could not record the failure', e));
	}
}

function withoutResults(r: ValidationReport): Omit<ValidationReport, 'results'> {
	const { results: _omit, ...rest } = r;
	return JSON.parse(JSON.stringify(rest, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? null : v)));
}

const ALPHA_GRID = [0.01, 0.025, 0.05, 0.1, 0.2];

/** Figures for the version page and the validation report, computed once at build time. */
function evidence(withData: library.EntrySpectrum[], artefact: ModelArtefact, members: MembershipRow[], classes: { name: string; kind: 'genuine' | 'suspect' }[], started: number) {
	const step = Math.max(1, Math.ceil(artefact.axis.x.length / 150));
	const plotX = artefact.axis.x.filter((_, i) => i % step === 0);
	const plotAxis = { unit: artefact.axis.unit, from: plotX[0], to: plotX[plotX.length - 1], points: plotX.length, step: null, x: plotX };
	const overview: Figures['overview'] = { axis: plotX, spectra: {} };
	const projections: Record<string, Projection> = {};
	const verdicts: Validation['verdicts'] = [];
	const tests: { id: string; axis: number[]; values: number[]; unit: 'nm' | 'cm-1' | 'um'; expected: string }[] = [];
	const prepared = prepareArtefact(artefact);
	for (const e of withData) {
		const result = screen(prepared, { id: String(e.id), axis: e.axis, values: e.values, unit: e.unit });
		const models: Projection['models'] = {};
		if (result.family) models.family = { h: result.family.h, v: result.family.v, c: result.family.c, accepted: result.family.accepted, scores: Array.from(result.family.scores).slice(0, 10) };
		for (const [name, s] of Object.entries(result.classes)) models[name] = { h: s.h, v: s.v, c: s.c, accepted: s.accepted, scores: Array.from(s.scores).slice(0, 10) };
		projections[String(e.id)] = { role: e.role, label: e.label, verdict: result.verdict, profile: result.profile, models };
		const resampled = resampleOnto(e, plotAxis);
		if (resampled.ok) overview.spectra[String(e.id)] = Array.from(resampled.values, (y) => Number(y.toPrecision(6)));
		if (e.role !== 'training') {
			tests.push({ id: String(e.id), axis: e.axis, values: e.values, unit: e.unit, expected: e.label });
			verdicts.push({ entryId: e.id, label: e.label, role: e.role, verdict: result.verdict, profile: result.profile, reason: result.reason });
		}
	}
	const modelFigure = (m: ModelArtefact['family']): ModelFigure => {
		const df = m.nh + m.nq;
		const frr = (cs: number[], a: number) => (cs.length ? cs.filter((c) => c > chi2Inv(1 - a, df)).length / cs.length : 0);
		return {
			name: m.name,
			kind: m.kind,
			n: m.n,
			components: m.components,
			componentsRule: m.componentsRule,
			suggested: m.suggestedComponents,
			alpha: m.alpha,
			cCrit: m.cCrit,
			cvFalseRejectRate: m.cvFalseRejectRate,
			trainingFalseRejectRate: m.trainingFalseRejectRate,
			frrByAlpha: [...new Set([...ALPHA_GRID, m.alpha])].sort((a, b) => a - b).map((a) => ({ alpha: a, cv: frr(m.training.cv.c, a), training: frr(m.training.fitted.c, a) })),
			explained: m.cumulative[m.components - 1] ?? 0,
			warnings: m.warnings ?? [],
			parsimonious: m.parsimoniousComponents ?? null
		};
	};
	const included = new Set(members.map((m) => String(m.entryId)));
	const figures: Figures = {
		trainingCount: members.length,
		excludedCount: withData.filter((e) => e.role === 'training' && !included.has(String(e.id))).length,
		classes: classes.map((c) => ({ name: c.name, kind: c.kind, n: artefact.models[c.name]?.n ?? 0 })),
		models: [modelFigure(artefact.family), ...artefact.classes.map((c) => modelFigure(artefact.models[c]))],
		projections,
		overview,
		buildMs: Math.round(performance.now() - started)
	};
	const validation: Validation = {
		tested: tests.length,
		testCount: withData.filter((e) => e.role === 'test').length,
		challengeCount: withData.filter((e) => e.role === 'challenge').length,
		report: tests.length ? withoutResults(evaluate(artefact, tests)) : null,
		verdicts
	};
	return { figures, validation };
}

// ---------- exclusions, re-inclusions, rebuild ----------

async function requireDraftish(tx: Transaction, versionId: number) {
	const v = await row(versionId, tx, true);
	if (v.state === 'building') throw conflict('This version is still building; mark exclusions once it is a draft');
	return v;
}

/** Marks training spectra for exclusion from the next rebuild, with category and reason. */
export async function markExclusion(actor: Actor, versionId: number, input: ExclusionInput) {
	requireBuilder(actor);
	const data = exclusionSchema.parse(input);
	return transaction(async (tx) => {
		const v = await requireDraftish(tx, versionId);
		const current = new Map((await memberships(versionId, tx)).map((m) => [m.entryId, m]));
		for (const id of data.entryIds) {
			const m = current.get(id);
			if (!m) throw invalid(`Spectrum ${id} is not in this version's training set (test and challenge spectra never train)`, 'entryIds');
			if (!m.included) throw invalid(`Spectrum ${id} is already excluded (${m.category}: ${m.reason})`, 'entryIds');
		}
		const pending: Pending = {
			exclude: [...v.pending.exclude.filter((e) => !data.entryIds.includes(e.entryId)), ...data.entryIds.map((entryId) => ({ entryId, category: data.category, reason: data.reason }))],
			include: v.pending.include.filter((e) => !data.entryIds.includes(e.entryId))
		};
		await sequelize().query('UPDATE model_versions SET pending = :pending WHERE id = :id', { replacements: { id: versionId, pending: JSON.stringify(pending) }, transaction: tx });
		await audit.record(tx, actor, { action: 'model.exclusion-marked', entity: 'model_version', entityId: versionId, before: v.pending, after: pending, reason: `${data.category}: ${data.reason}` });
		return pending;
	});
}

/** Marks excluded spectra to come back in the next rebuild, with a reason. */
export async function markInclusion(actor: Actor, versionId: number, input: z.input<typeof inclusionSchema>) {
	requireBuilder(actor);
	const data = inclusionSchema.parse(input);
	return transaction(async (tx) => {
		const v = await requireDraftish(tx, versionId);
		const current = new Map((await memberships(versionId, tx)).map((m) => [m.entryId, m]));
		const pendingExcluded = new Set(v.pending.exclude.map((e) => e.entryId));
		for (const id of data.entryIds) {
			const m = current.get(id);
			if (!m) throw invalid(`Spectrum ${id} is not a training spectrum of this version`, 'entryIds');
			if (m.included && !pendingExcluded.has(id)) throw invalid(`Spectrum ${id} is already included`, 'entryIds');
		}
		const pending: Pending = {
			exclude: v.pending.exclude.filter((e) => !data.entryIds.includes(e.entryId)),
			include: [
				...v.pending.include.filter((e) => !data.entryIds.includes(e.entryId)),
				...data.entryIds.filter((id) => !current.get(id)!.included).map((entryId) => ({ entryId, reason: data.reason }))
			]
		};
		await sequelize().query('UPDATE model_versions SET pending = :pending WHERE id = :id', { replacements: { id: versionId, pending: JSON.stringify(pending) }, transaction: tx });
		await audit.record(tx, actor, { action: 'model.reinclusion-marked', entity: 'model_version', entityId: versionId, before: v.pending, after: pending, reason: data.reason });
		return pending;
	});
}

export async function clearPending(actor: Actor, versionId: number, reason = 'pending changes discarded') {
	requireBuilder(actor);
	return transaction(async (tx) => {
		const v = await row(versionId, tx, true);
		const empty: Pending = { exclude: [], include: [] };
		await sequelize().query('UPDATE model_versions SET pending = :pending WHERE id = :id', { replacements: { id: versionId, pending: JSON.stringify(empty) }, transaction: tx });
		await audit.record(tx, actor, { action: 'model.pending-cleared', entity: 'model_version', entityId: versionId, before: v.pending, after: empty, reason });
	});
}

/**
 * One step: a new draft with parent = this version, the same parameters except `changes`, its training membership
 * carried over with the pending exclusions and re-inclusions applied (and any new library spectra added).
 */
export async function rebuild(actor: Actor, versionId: number, changes: Partial<BuildParamsInput> = {}, options: { inline?: boolean; note?: string } = {}) {
	requireBuilder(actor);
	const parent = await row(versionId);
	if (parent.state === 'building') throw conflict('This version is still building');
	const params = buildParamsSchema.parse({ ...parent.params, ...Object.fromEntries(Object.entries(changes).filter(([, v]) => v !== undefined && v !== '')), note: options.note ?? changes.note });
	const material = await materials.get(parent.material_id);
	const planned = await planMemberships(parent.material_id, parent.id, parent.pending);
	await checkTrainingSet(material, params, planned);
	const changed = Object.keys(params).filter((k) => k !== 'note' && JSON.stringify(params[k as keyof BuildParams]) !== JSON.stringify(parent.params[k as keyof BuildParams]));
	const note =
		options.note ??
		params.note ??
		[
			parent.pending.exclude.length ? `${parent.pending.exclude.length} excluded` : '',
			parent.pending.include.length ? `${parent.pending.include.length} re-included` : '',
			changed.length ? `changed ${changed.join(', ')}` : ''
		]
			.filter(Boolean)
			.join('; ');
	const created = await transaction(async (tx) => {
		const v = await insertVersion(tx, actor, parent.material_id, params, planned, parent.id, note || 'rebuild with the same parameters');
		await sequelize().query(`UPDATE model_versions SET pending = '{"exclude":[],"include":[]}' WHERE id = :id`, { replacements: { id: parent.id }, transaction: tx });
		await audit.record(tx, actor, {
			action: 'model.rebuild-requested',
			entity: 'model_version',
			entityId: v.id,
			before: { parentId: parent.id, params: parent.params },
			after: { version: v.version, params, excluded: parent.pending.exclude, reincluded: parent.pending.include, changed },
			reason: note || 'rebuild'
		});
		return v;
	});
	return start(created.id, options.inline);
}

// ---------- diff ----------

const DIFF_PARAMS: (keyof BuildParams)[] = ['recipe', 'components', 'familyComponents', 'alpha', 'familyAlpha', 'gamma', 'limits', 'folds', 'groupBy', 'speLimit', 'genuine'];

export async function diff(fromRef: string | number, toRef: string | number) {
	const [a, b] = await Promise.all([row(await resolve(fromRef)), row(await resolve(toRef))]);
	if (a.material_id !== b.material_id) throw invalid('Both versions must belong to the same material');
	const [ma, mb] = await Promise.all([memberships(a.id), memberships(b.id)]);
	const inA = new Map(ma.map((m) => [m.entryId, m]));
	const inB = new Map(mb.map((m) => [m.entryId, m]));
	const ids = [...new Set([...inA.keys(), ...inB.keys()])];
	const entries = new Map((await library.entriesOf(a.material_id, ['training'])).map((e) => [e.id, e]));
	const describe = (id: number) => {
		const e = entries.get(id);
		return { entryId: id, label: e?.label ?? '?', sample: e?.sampleId ?? e?.fileName ?? String(id), supplier: e?.supplier ?? null, lot: e?.supplierLot ?? null };
	};
	const added: ReturnType<typeof describe>[] = [];
	const removed: ReturnType<typeof describe>[] = [];
	const excluded: (ReturnType<typeof describe> & { category: string | null; reason: string | null })[] = [];
	const reincluded: (ReturnType<typeof describe> & { reason: string | null; previousReason: string | null })[] = [];
	for (const id of ids.sort((x, y) => x - y)) {
		const x = inA.get(id);
		const y = inB.get(id);
		if (!x && y) {
			if (y.included) added.push(describe(id));
			else excluded.push({ ...describe(id), category: y.category, reason: y.reason });
		} else if (x && !y) removed.push(describe(id));
		else if (x && y && x.included && !y.included) excluded.push({ ...describe(id), category: y.category, reason: y.reason });
		else if (x && y && !x.included && y.included) reincluded.push({ ...describe(id), reason: y.inclusionReason, previousReason: x.reason });
	}
	const params = DIFF_PARAMS.filter((k) => JSON.stringify(a.params[k] ?? null) !== JSON.stringify(b.params[k] ?? null)).map((k) => ({ name: k, from: a.params[k] ?? null, to: b.params[k] ?? null }));
	const figA = new Map((a.figures?.models ?? []).map((m) => [m.name, m]));
	const models = (b.figures?.models ?? []).map((m) => {
		const o = figA.get(m.name);
		return { name: m.name, componentsFrom: o?.components ?? null, componentsTo: m.components, cvFrrFrom: o?.cvFalseRejectRate ?? null, cvFrrTo: m.cvFalseRejectRate, nFrom: o?.n ?? null, nTo: m.n };
	});
	const metrics = (v: VersionRow) =>
		Object.fromEntries((v.validation?.report?.perClass ?? []).map((c) => [c.className, { sensitivity: c.sensitivity.estimate, specificity: c.specificity.estimate }])) as Record<
			string,
			{ sensitivity: number | null; specificity: number | null }
		>;
	const va = metrics(a);
	const vb = metrics(b);
	const validation = [...new Set([...Object.keys(va), ...Object.keys(vb)])].map((name) => ({
		name,
		sensitivityFrom: va[name]?.sensitivity ?? null,
		sensitivityTo: vb[name]?.sensitivity ?? null,
		specificityFrom: va[name]?.specificity ?? null,
		specificityTo: vb[name]?.specificity ?? null
	}));
	const material = await materials.get(a.material_id);
	return {
		from: { id: a.id, version: a.version, label: `${material.code} v${a.version}`, state: a.state },
		to: { id: b.id, version: b.version, label: `${material.code} v${b.version}`, state: b.state },
		params,
		training: { added, removed, excluded, reincluded },
		models,
		validation
	};
}

// ---------- approval ----------

export const approvalSchema = signatures.signatureFieldsSchema.extend({
	meaning: z.literal(APPROVAL_MEANING, { errorMap: () => ({ message: `The meaning of this signature is "${APPROVAL_MEANING}"` }) })
});

/** What the approval signature binds: the version record and the artefact's hash. */
function signedRecord(v: VersionRow, code: string) {
	return {
		recordType: 'model_version',
		id: v.id,
		material: code,
		version: v.version,
		params: v.params,
		artefactSha256: v.artefact_sha256,
		engineVersion: v.engine_version,
		builtBy: v.built_by,
		createdAt: iso(v.created_at),
		finishedAt: iso(v.finished_at)
	};
}

/** QA approves a draft: e-signature, never by its builder; the previous approved version of the material is retired. */
export async function approve(actor: Actor, versionRef: number | string, input: z.input<typeof approvalSchema>) {
	if (!hasRole(actor, can.approveModels)) throw forbidden('Only a QA user approves model versions');
	const data = approvalSchema.parse(input);
	const versionId = await resolve(versionRef);
	return transaction(async (tx) => {
		const v = await row(versionId, tx, true);
		if (v.built_by === actor.id) throw forbidden('You built this version: another QA user must approve it (nobody approves their own work)');
		if (v.state !== 'draft') throw conflict(`Only a draft can be approved; this version is ${v.state}`);
		if (!v.artefact || !v.artefact_sha256) throw conflict('This version has no artefact');
		const material = await materials.get(v.material_id);
		// issue 12 §1: the validation must meet the material's acceptance criteria (409 listing the unmet ones)
		const evaluation = await acceptance.evaluateVersion(v.id, tx);
		acceptance.refuseUnmet(`${material.code} v${v.version}`, evaluation);
		await sequelize().query('SELECT pg_advisory_xact_lock(7402001, :materialId)', { replacements: { materialId: v.material_id }, transaction: tx });
		const manifestation = await signatures.sign(tx, actor, {
			password: data.password,
			meaning: data.meaning,
			reason: data.reason,
			recordType: 'model_version',
			recordId: v.id,
			recordHash: signatures.recordHash(signedRecord(v, material.code))
		});
		const previous = await sequelize().query<{ id: number; version: number }>(
			"UPDATE model_versions SET state = 'retired', retired_at = now() WHERE material_id = :materialId AND state = 'approved' RETURNING id, version",
			{ replacements: { materialId: v.material_id }, type: QueryTypes.SELECT, transaction: tx }
		);
		for (const p of previous) {
			await audit.record(tx, actor, {
				action: 'model.retired',
				entity: 'model_version',
				entityId: p.id,
				before: { state: 'approved' },
				after: { state: 'retired', replacedBy: v.id },
				reason: `replaced by ${material.code} v${v.version}`
			});
		}
		await sequelize().query(
			"UPDATE model_versions SET state = 'approved', approved_by = :by, approved_at = :at, approval_signature_id = :sig, acceptance = :acceptance, review_by = :reviewBy WHERE id = :id",
			{
				replacements: {
					id: v.id,
					by: actor.id,
					at: new Date(manifestation.signedAt),
					sig: manifestation.id,
					acceptance: JSON.stringify(evaluation),
					reviewBy: acceptance.reviewByDate(new Date(manifestation.signedAt), evaluation.criteriaValues.reviewMonths)
				},
				transaction: tx
			}
		);
		await audit.record(tx, actor, {
			action: 'model.approved',
			entity: 'model_version',
			entityId: v.id,
			before: { state: 'draft' },
			after: { state: 'approved', signatureId: manifestation.id, recordHash: manifestation.recordHash, retired: previous.map((p) => p.id), acceptanceCriteriaRevision: evaluation.criteriaRevision },
			reason: data.reason
		});
		return { manifestation, retired: previous.map((p) => ({ id: Number(p.id), version: p.version })) };
	});
}

// ---------- page data ----------

/** Everything the version page shows, in one call (the page's server load times this). */
export async function pageData(versionId: number) {
	const r = await row(versionId);
	const [version, members, entries, versions] = await Promise.all([
		toPublic(r),
		memberships(versionId),
		library.entriesOf(r.material_id, ['training', 'test', 'challenge']),
		listForMaterial(r.material_id)
	]);
	const memberOf = new Map(members.map((m) => [m.entryId, m]));
	const rows = entries.map((e) => ({ ...e, membership: memberOf.get(e.id) ?? null }));
	return { version, rows, meta: library.plotMeta(entries), artefact: r.artefact, projections: r.figures?.projections ?? {}, overview: r.figures?.overview ?? null, versions };
}

export async function draftsAwaiting(kind: 'chemometrician' | 'qa', actor: Actor) {
	const rows = await sequelize().query<{ id: number; version: number; code: string; state: string; built_by: number; created_at: Date; name: string }>(
		`SELECT v.id, v.version, m.code, v.state, v.built_by, v.created_at, u.name FROM model_versions v
		   JOIN materials m ON m.id = v.material_id JOIN users u ON u.id = v.built_by
		  WHERE ${kind === 'qa' ? "v.state = 'draft' AND v.built_by <> :actorId" : "v.state IN ('building','failed','draft') AND v.built_by = :actorId"}
		  ORDER BY v.created_at DESC LIMIT 20`,
		{ replacements: { actorId: actor.id ?? 0 }, type: QueryTypes.SELECT }
	);
	return rows;
}

/** Home-page queue items: a chemometrician's open builds and drafts, or the drafts a QA user may approve. */
export async function queueItems(kind: 'chemometrician' | 'qa', actor: Actor) {
	const rows = await draftsAwaiting(kind, actor);
	return rows.map((r) => ({
		href: `/materials/${r.code}/versions/${r.version}${kind === 'qa' ? '/approve' : ''}`,
		label: `${r.code} v${r.version}`,
		detail: kind === 'qa' ? `draft built by ${r.name}, ${new Date(r.created_at).toISOString().slice(0, 10)}` : r.state
	}));
}
