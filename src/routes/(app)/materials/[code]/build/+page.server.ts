import { can } from '$lib/permissions';
import { fail, redirect } from '@sveltejs/kit';
import { superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { requireUser } from '$lib/server/guard';
import * as library from '$lib/server/services/library';
import * as materials from '$lib/server/services/materials';
import * as versions from '$lib/server/services/model-versions';
import { refuse } from '../../service-errors.server';
import { buildFormSchema, toParams, toReinclude } from './schema';
import type { Actions, PageServerLoad } from './$types';

export const load = (async (event) => {
	requireUser(event, can.buildModels);
	const material = await materials.get(event.params.code);
	const [classes, summary, basis, training] = await Promise.all([materials.classes(material.id), library.summary(material.id), versions.buildBasis(material.id), library.entriesOf(material.id, ['training'])]);
	// Start from the current version: its parameters, and its training membership with every exclusion (issue 17).
	const form = await superValidate(zod(buildFormSchema));
	let start = null;
	if (basis) {
		const p = basis.params;
		Object.assign(form.data, { ...p, components: String(p.components), familyComponents: String(p.familyComponents), tree: p.tree ? JSON.stringify(p.tree) : '', note: '' });
		const members = await versions.memberships(basis.id);
		const entry = new Map(training.map((e) => [e.id, e]));
		const describe = (id: number) => ({ entryId: id, label: entry.get(id)?.label ?? '?', sample: entry.get(id)?.sampleId ?? entry.get(id)?.fileName ?? `#${id}`, lot: entry.get(id)?.supplierLot ?? null });
		const markedOut = new Map(basis.pending.exclude.map((e) => [e.entryId, e]));
		const comingBack = new Map(basis.pending.include.map((e) => [e.entryId, e]));
		const label = (c: string | null) => (c ? (versions.EXCLUSION_LABELS[c as versions.ExclusionCategory] ?? c) : 'no category');
		const includedNow = members.filter((m) => (m.included && !markedOut.has(m.entryId)) || comingBack.has(m.entryId));
		start = {
			label: `${material.code} v${basis.version}`,
			version: basis.version,
			state: basis.state,
			included: includedNow.length,
			includedByLabel: includedNow.reduce<Record<string, number>>((acc, m) => {
				const l = entry.get(m.entryId)?.label ?? '?';
				acc[l] = (acc[l] ?? 0) + 1;
				return acc;
			}, {}),
			excluded: members.filter((m) => !m.included && !comingBack.has(m.entryId)).map((m) => ({ ...describe(m.entryId), category: label(m.category), reason: m.reason ?? 'none recorded' })),
			markedOut: [...markedOut.values()].map((e) => ({ ...describe(e.entryId), category: label(e.category), reason: e.reason })),
			comingBack: [...comingBack.values()].map((e) => ({ ...describe(e.entryId), reason: e.reason }))
		};
	}
	return { material: materials.toPublic(material), classes, summary, form, genuine: classes.find((c) => c.kind === 'genuine')?.name ?? null, minimum: versions.MIN_PER_CLASS, start };
}) satisfies PageServerLoad;

export const actions = {
	default: async (event) => {
		const actor = requireUser(event, can.buildModels);
		const material = await materials.get(event.params.code);
		const form = await superValidate(event.request, zod(buildFormSchema));
		if (!form.valid) return fail(400, { form });
		let id: number;
		try {
			id = (await versions.createBuild(actor, material.id, toParams(form.data), { reinclude: toReinclude(form.data) })).id;
		} catch (error) {
			return refuse(form, error);
		}
		const v = await versions.get(id);
		redirect(303, `/materials/${material.code}/versions/${v.version}`);
	}
} satisfies Actions;
