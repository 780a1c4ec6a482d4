import { can } from '$lib/permissions';
import { fail, redirect } from '@sveltejs/kit';
import { superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { requireUser } from '$lib/server/guard';
import * as library from '$lib/server/services/library';
import * as materials from '$lib/server/services/materials';
import * as versions from '$lib/server/services/model-versions';
import { refuse } from '../../service-errors.server';
import { buildFormSchema, toParams } from './schema';
import type { Actions, PageServerLoad } from './$types';

export const load = (async (event) => {
	requireUser(event, can.buildModels);
	const material = await materials.get(event.params.code);
	const [classes, summary, list] = await Promise.all([materials.classes(material.id), library.summary(material.id), versions.listForMaterial(material.id)]);
	// Start from the latest version's parameters, so a new build changes only what the user changes.
	const latest = list.find((v) => v.state !== 'failed') ?? list[0];
	const form = await superValidate(zod(buildFormSchema));
	if (latest) {
		const full = await versions.get(latest.id);
		const p = full.params;
		Object.assign(form.data, { ...p, components: String(p.components), familyComponents: String(p.familyComponents), tree: p.tree ? JSON.stringify(p.tree) : '', note: '' });
	}
	return { material: materials.toPublic(material), classes, summary, form, genuine: classes.find((c) => c.kind === 'genuine')?.name ?? null, minimum: versions.MIN_PER_CLASS, basedOn: latest ? `v${latest.version}` : null };
}) satisfies PageServerLoad;

export const actions = {
	default: async (event) => {
		const actor = requireUser(event, can.buildModels);
		const material = await materials.get(event.params.code);
		const form = await superValidate(event.request, zod(buildFormSchema));
		if (!form.valid) return fail(400, { form });
		let id: number;
		try {
			id = (await versions.createBuild(actor, material.id, toParams(form.data))).id;
		} catch (error) {
			return refuse(form, error);
		}
		const v = await versions.get(id);
		redirect(303, `/materials/${material.code}/versions/${v.version}`);
	}
} satisfies Actions;
