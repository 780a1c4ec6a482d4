// Model versions: planning the training membership, refusing unsound builds, and the build job body with its progress.
import { can } from '../../../permissions';
import { createHash } from 'node:crypto';
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { proseText } from '../../../validation/text';
import { buildModel, parseRecipe, serializeArtefact } from '../../../analysis';
import { convertAxis } from '../../../analysis/axis';
import { labelClass, planTree, specFromLabels, type TreePlan } from '../../../analysis/tree-spec';
import { sequelize, transaction } from '../../db';
import { hasRole, type Actor } from '../actor';
import * as audit from '../audit';
import { forbidden, invalid } from '../errors';
import * as library from '../library';
import * as materials from '../materials';
import { enqueue } from '../../jobs/boss';
import { QUEUES } from '../../jobs/queues';
import { modelEvidence } from '../../../analysis/model-evidence';
import { row, memberships } from './read';
import { type ExclusionCategory, minimumFor, buildParamsSchema, type BuildParams, type BuildParamsInput } from './schema';
import { type Pending, type Progress, type MembershipRow, type VersionRow } from './types';

export function requireBuilder(actor: Actor) {
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

/**
 * The tree a build uses: the one edited on the build page (params.tree), else the tree the library labels give
 * (as `lotgate build` does), checked against the included training spectra per label.
 */
export function treePlan(params: BuildParams, perLabel: Record<string, number>, genuineClass: string | null): { plan: TreePlan | null; problems: string[] } {
	if (params.tree && params.genuine) {
		const top = params.tree.find((n) => n.kind === 'genuine');
		if (top && top.name !== params.genuine) return { plan: null, problems: [`the genuine class "${params.genuine}" is not the tree's genuine node "${top.name}"`] };
	}
	const spec = params.tree ?? specFromLabels(Object.keys(perLabel), params.genuine ?? genuineClass);
	return planTree(spec, perLabel, { components: params.components });
}

/** Refuses a build that cannot give a sound model, before any job runs: classes or tree nodes too small, axes without a common range. */
export async function checkTrainingSet(material: { id: number; code: string }, params: BuildParams, planned: PlannedMembership[]) {
	const classes = await materials.classes(material.id);
	const genuineClass = classes.find((c) => c.kind === 'genuine');
	if (!genuineClass) throw invalid(`${material.code} has no genuine class yet: add it before building`, 'classes');
	const included = new Set(planned.filter((p) => p.included).map((p) => p.entryId));
	const entries = (await library.entriesOf(material.id, ['training'])).filter((e) => included.has(e.id));
	const perLabel: Record<string, number> = {};
	for (const e of entries) perLabel[e.label] = (perLabel[e.label] ?? 0) + 1;
	const problems: string[] = [];
	if (!params.tree) {
		// without an edited tree every class of the material must be modelled (a label path counts for its class)
		const byClass = new Map<string, number>();
		for (const [label, n] of Object.entries(perLabel)) {
			const c = labelClass(label);
			const name = 'problem' in c ? label : c.className;
			byClass.set(name, (byClass.get(name) ?? 0) + n);
		}
		for (const c of classes) {
			const A = params.components;
			const need = minimumFor(A);
			const have = byClass.get(c.name) ?? 0;
			if (have < need) problems.push(`class ${c.name} has ${have} included training spectra, needs at least ${need} (max(10, A + 3)${A === 'auto' ? '' : ` with A = ${A}`})`);
		}
	}
	const familyNeed = minimumFor(params.familyComponents);
	if (entries.length < familyNeed) problems.push(`the family model has ${entries.length} training spectra, needs at least ${familyNeed}`);
	if (problems.length) throw invalid(`Cannot build ${material.code}: ${problems.join('; ')}. Add library spectra, re-include some, or lower the fixed component count.`, 'training');
	if (params.genuine && !classes.some((c) => c.name === params.genuine)) throw invalid(`"${params.genuine}" is not a class of ${material.code}`, 'genuine');
	const tree = treePlan(params, perLabel, genuineClass.name);
	if (!tree.plan) throw invalid(`Cannot build ${material.code} with this tree: ${tree.problems.join('; ')}.`, params.tree ? 'tree' : 'training');

	const declared = (await materials.get(material.id)).axis;
	if (declared) {
		// The declared axis is the build's axis; spectra that do not cover it are left out at build time (named in the
		// build summary). Refuse only when too few would remain, and a recipe range outside the declared axis.
		const grids = await sequelize().query<{ id: number; label: string; unit: 'nm' | 'cm-1' | 'um'; axis: number[] }>(
			'SELECT e.id, e.label, sp.unit, sp.axis FROM library_entries e JOIN spectra sp ON sp.id = e.spectrum_id WHERE e.id IN (:ids)',
			{ replacements: { ids: entries.map((e) => e.id) }, type: QueryTypes.SELECT }
		);
		const covering = grids.filter((g) => materials.coversAxis(declared, g.axis.map(Number), g.unit).covers);
		const left = grids.length - covering.length;
		for (const c of classes) {
			const need = minimumFor(params.components);
			const classOf = (label: string) => {
				const lc = labelClass(label);
				return 'problem' in lc ? label : lc.className;
			};
			const have = covering.filter((g) => classOf(g.label) === c.name).length;
			if (have < need && grids.filter((g) => classOf(g.label) === c.name).length >= need)
				throw invalid(`Cannot build ${material.code}: class ${c.name} keeps ${have} training spectra that cover the declared axis ${materials.axisText(declared)}, needs at least ${need} (${left} spectra do not cover it)`, 'training');
		}
		for (const range of parseRecipe(params.recipe).filter((st) => st.op === 'range')) {
			if (range.op === 'range' && (Math.min(range.from, range.to) < declared.from - 1e-9 || Math.max(range.from, range.to) > declared.to + 1e-9))
				throw invalid(`The recipe's range(${range.from},${range.to}) is outside the declared axis of ${material.code} (${materials.axisText(declared)})`, 'recipe');
		}
		return;
	}
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
	for (const range of parseRecipe(params.recipe)) {
		if (range.op === 'range' && (range.from < lo - 1e-9 || range.to > hi + 1e-9)) {
			throw invalid(`The recipe's range(${range.from},${range.to}) is outside the range every training spectrum covers (${lo.toFixed(1)}–${hi.toFixed(1)} ${target})`, 'recipe');
		}
	}
}

export async function planMemberships(materialId: number, parentId: number | null, pending: Pending, extra: Pending['exclude'] = []): Promise<PlannedMembership[]> {
	const training = await library.entriesOf(materialId, ['training']);
	const previous = parentId ? new Map((await memberships(parentId)).map((m) => [m.entryId, m])) : new Map<number, MembershipRow>();
	const excludeNow = new Map([...pending.exclude, ...extra].map((e) => [e.entryId, e]));
	const includeNow = new Map(pending.include.map((e) => [e.entryId, e]));
	// Spectra a library-growth draft proposed (issue 14 §4) train only in that draft and its descendants until it is approved.
	const provisional = new Set(
		(
			await sequelize().query<{ id: number }>(
				"SELECT e.id FROM library_entries e JOIN model_versions v ON v.id = e.proposed_in WHERE e.material_id = :materialId AND v.state NOT IN ('approved','retired')",
				{ replacements: { materialId }, type: QueryTypes.SELECT }
			)
		).map((r) => Number(r.id))
	);
	const trainingIds = new Set(training.map((t) => t.id));
	for (const id of [...excludeNow.keys(), ...includeNow.keys()]) if (!trainingIds.has(id)) throw invalid(`Library entry ${id} is not a training spectrum of this material`, 'entryIds');
	return training
		.filter((t) => t.kind != null) // challenge aliens never train; training rows always carry a class
		.filter((t) => !provisional.has(t.id) || previous.has(t.id))
		.map((t) => {
			const ex = excludeNow.get(t.id);
			if (ex) return { entryId: t.id, included: false, category: ex.category, reason: ex.reason };
			const inc = includeNow.get(t.id);
			// A spectrum comes back only by an explicit action with its reason (issue 17: a diff never shows an empty one).
			if (inc && !inc.reason?.trim()) throw invalid(`Spectrum ${t.id} cannot come back without a reason`, 'reincludeReason');
			if (inc) return { entryId: t.id, included: true, inclusionReason: inc.reason.trim() };
			const prev = previous.get(t.id);
			if (prev && !prev.included) return { entryId: t.id, included: false, category: prev.category, reason: prev.reason };
			return { entryId: t.id, included: true, inclusionReason: prev?.inclusionReason ?? null };
		});
}

export async function insertVersion(tx: Transaction, actor: Actor, materialId: number, params: BuildParams, planned: PlannedMembership[], parentId: number | null, changeNote: string | null) {
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
	/** Spectra excluded in the version the build starts from that come back in this build, each with its reason. */
	reinclude?: { entryId: number; reason: string }[];
}

/**
 * The version a new build starts from: the material's latest version that did not fail (its parameters are the build
 * form's starting values and its training membership, with every exclusion, carries over). Null for a first build.
 */
export async function buildBasis(materialId: number): Promise<Pick<VersionRow, 'id' | 'version' | 'state' | 'params' | 'pending'> | null> {
	const rows = await sequelize().query<Pick<VersionRow, 'id' | 'version' | 'state' | 'params' | 'pending'>>(
		"SELECT id, version, state, params, pending FROM model_versions WHERE material_id = :materialId ORDER BY (state <> 'failed') DESC, version DESC LIMIT 1",
		{
			replacements: { materialId },
			type: QueryTypes.SELECT
		}
	);
	return rows[0] ? { ...rows[0], id: Number(rows[0].id) } : null;
}

const reincludeSchema = z
	.array(
		z.object({
			entryId: z.coerce.number({ invalid_type_error: 'Name each re-included spectrum by its entry id' }).int().positive(),
			reason: proseText(z.string({ required_error: 'Write why the spectrum comes back' }).trim().min(3, 'Write why the spectrum comes back (at least 3 characters)').max(2000))
		}),
		{ invalid_type_error: 'reinclude is a list of { entryId, reason }' }
	)
	.max(1000)
	.default([]);

/**
 * Creates a `building` version with its training membership, then queues the build. Returns { id, jobId }.
 * A new build starts from the current version's membership (issue 17): its exclusions stay excluded, and the pending
 * marks on that version are applied and cleared, as a rebuild does. A spectrum comes back only through `reinclude`,
 * each with its reason.
 */
export async function createBuild(actor: Actor, materialRef: number | string, input: BuildParamsInput, options: BuildOptions = {}) {
	requireBuilder(actor);
	const material = await materials.get(materialRef);
	const params = buildParamsSchema.parse(input ?? {});
	const exclude = (options.exclude ?? []).map((e) => ({ ...e, reason: e.reason.trim() }));
	if (exclude.some((e) => !e.reason)) throw invalid('Every exclusion needs a reason', 'reason');
	const parsed = reincludeSchema.safeParse(options.reinclude ?? []);
	if (!parsed.success) throw invalid(parsed.error.issues[0].message, parsed.error.issues[0].path.includes('reason') ? 'reincludeReason' : 'reinclude');
	const reinclude = parsed.data;
	const basis = await buildBasis(material.id);
	const basisLabel = basis ? `${material.code} v${basis.version}` : null;
	let pending: Pending = { exclude: [], include: [] };
	if (basis) {
		const members = new Map((await memberships(basis.id)).map((m) => [m.entryId, m]));
		const markedOut = new Set(basis.pending.exclude.map((e) => e.entryId));
		for (const r of reinclude) {
			const m = members.get(r.entryId);
			if (!m || (m.included && !markedOut.has(r.entryId))) throw invalid(`Spectrum ${r.entryId} is not excluded in ${basisLabel}: only an excluded training spectrum can be re-included`, 'reinclude');
		}
		const back = new Set(reinclude.map((r) => r.entryId));
		pending = {
			exclude: basis.pending.exclude.filter((e) => !back.has(e.entryId)),
			include: [...basis.pending.include.filter((e) => !back.has(e.entryId)), ...reinclude.filter((r) => !members.get(r.entryId)!.included)]
		};
	} else if (reinclude.length) throw invalid(`${material.code} has no version yet, so nothing is excluded to re-include`, 'reinclude');
	const planned = await planMemberships(material.id, basis?.id ?? null, pending, exclude);
	await checkTrainingSet(material, params, planned);
	const created = await transaction(async (tx) => {
		const v = await insertVersion(tx, actor, material.id, params, planned, basis?.id ?? null, params.note ?? null);
		if (basis && (basis.pending.exclude.length || basis.pending.include.length)) {
			await sequelize().query(`UPDATE model_versions SET pending = '{"exclude":[],"include":[]}' WHERE id = :id`, { replacements: { id: basis.id }, transaction: tx });
		}
		await audit.record(tx, actor, {
			action: 'model.build-requested',
			entity: 'model_version',
			entityId: v.id,
			before: basis ? { basedOn: { id: Number(basis.id), version: basis.version }, pending: basis.pending } : undefined,
			after: {
				material: material.code,
				version: v.version,
				params,
				training: planned.filter((p) => p.included).length,
				excluded: planned.filter((p) => !p.included).length,
				basedOn: basisLabel,
				newlyExcluded: pending.exclude,
				reincluded: pending.include
			},
			reason: params.note ?? (basisLabel ? `new model version from ${basisLabel}` : 'new model version')
		});
		return v;
	});
	return start(created.id, options.inline);
}

export async function start(id: number, inline?: boolean) {
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
		const members_ = everything.filter((e) => memberIds.has(e.id));
		// The declared axis (issue 12 §3): the build uses it and never narrows it; a training spectrum that does not
		// cover it is left out of this build with the reason, recorded in the figures and the build's audit event.
		const declared = material.axis;
		const axisExcluded: { entryId: number; reason: string }[] = [];
		const training = declared
			? members_.filter((e) => {
					const c = materials.coversAxis(declared, e.axis, e.unit);
					if (!c.covers) axisExcluded.push({ entryId: e.id, reason: `does not cover the declared axis ${materials.axisText(declared)}: ${c.missing}` });
					return c.covers;
				})
			: members_;
		const params = v.params;
		const groupKey = params.groupBy;
		const groupOf = (e: library.LibraryRow) => (groupKey === 'supplier_lot' ? e.supplierLot : groupKey === 'supplier' ? e.supplier : groupKey === 'instrument' ? e.instrument : null);
		const useGroups = groupKey !== 'none' && training.some((e) => groupOf(e));
		const perLabel: Record<string, number> = {};
		for (const e of training) perLabel[e.label] = (perLabel[e.label] ?? 0) + 1;
		const { plan, problems } = treePlan(params, perLabel, classes.find((c) => c.kind === 'genuine')?.name ?? null);
		if (!plan) throw new Error(`the model tree cannot be built: ${problems.join('; ')}`);
		const trainingRows = training.map((e) => ({ id: String(e.id), axis: e.axis, values: e.values, unit: e.unit, className: plan.classOf[e.label], group: useGroups ? (groupOf(e) ?? null) : null }));
		const artefact = buildModel(
			trainingRows,
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
				genuine: plan.genuine,
				nodes: plan.nodes,
				...(declared ? { axis: { unit: declared.unit, from: declared.from, to: declared.to, ...(declared.step ? { step: declared.step } : {}) } } : {}),
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
		const evidence = modelEvidence(everything, artefact, members, classes, { classOf: plan.classOf, training: trainingRows });
		const figures = { ...evidence.figures, buildMs: Math.round(performance.now() - started), axis: declared ? { declared, excluded: axisExcluded } : null };
		const validation = evidence.validation;
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
				after: { state: 'draft', artefactSha256: sha, engineVersion: artefact.engineVersion, models: figures.models.map((m) => ({ name: m.name, A: m.components, cvFalseRejectRate: m.cvFalseRejectRate })), ...(axisExcluded.length ? { axisExcluded } : {}) }
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
