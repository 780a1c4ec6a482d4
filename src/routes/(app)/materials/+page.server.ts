import { can } from '$lib/permissions';
import { fail, redirect } from '@sveltejs/kit';
import { superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { emailListField, splitList } from '$lib/server/forms';
import { requireUser } from '$lib/server/guard';
import { hasRole } from '$lib/server/services/actor';
import * as materials from '$lib/server/services/materials';
import { refuse } from './service-errors.server';
import type { Actions, PageServerLoad } from './$types';

const createSchema = materials.materialSchema.omit({ recipients: true }).extend({
	recipients: emailListField('recipients', 50)
});

export const load = (async (event) => {
	const actor = requireUser(event);
	return {
		rows: await materials.listWithCounts(),
		canManage: hasRole(actor, can.manageMaterials),
		form: await superValidate(zod(createSchema))
	};
}) satisfies PageServerLoad;

export const actions = {
	create: async (event) => {
		const actor = requireUser(event, can.manageMaterials);
		const form = await superValidate(event.request, zod(createSchema));
		if (!form.valid) return fail(400, { form });
		let code: string;
		try {
			code = (await materials.create(actor, { ...form.data, recipients: splitList(form.data.recipients) })).code;
		} catch (error) {
			return refuse(form, error);
		}
		redirect(303, `/materials/${code}`);
	}
} satisfies Actions;
