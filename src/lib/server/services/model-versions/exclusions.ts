// Model versions: pending exclusions and re-inclusions, and the rebuild that applies them.
import { type Transaction } from 'sequelize';
import { z } from 'zod';
import { sequelize, transaction } from '../../db';
import { type Actor } from '../actor';
import * as audit from '../audit';
import { conflict, invalid } from '../errors';
import * as materials from '../materials';
import { requireBuilder, checkTrainingSet, planMemberships, insertVersion, start } from './build';
import { row, memberships } from './read';
import { buildParamsSchema, type BuildParams, type BuildParamsInput, exclusionSchema, inclusionSchema, type ExclusionInput } from './schema';
import { type Pending } from './types';

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
