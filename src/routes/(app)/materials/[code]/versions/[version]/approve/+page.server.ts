import { can } from '$lib/permissions';
import { fail, redirect } from '@sveltejs/kit';
import { superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { chooseOne } from '$lib/server/forms';
import { requireUser } from '$lib/server/guard';
import * as signatures from '$lib/server/services/signatures';
import * as versions from '$lib/server/services/model-versions';
import { refuse } from '../../../../service-errors.server';
import { versionIdFor } from '../version.server';
import type { Actions, PageServerLoad } from './$types';

// The signer chooses the meaning: the form starts empty (never pre-selected) and is refused until one is chosen.
const approveFormSchema = signatures.signatureFieldsSchema.extend({ meaning: chooseOne([versions.APPROVAL_MEANING], 'Choose the meaning of your signature') });

export const load = (async (event) => {
	const actor = requireUser(event, can.approveModels);
	const id = await versionIdFor(event.params);
	const [version, summary] = await Promise.all([versions.get(id), versions.approvalView(id)]);
	const form = await superValidate(zod(approveFormSchema));
	return {
		version,
		summary,
		isBuilder: version.builtBy.id === actor.id,
		form,
		meaning: versions.APPROVAL_MEANING
	};
}) satisfies PageServerLoad;

export const actions = {
	default: async (event) => {
		const actor = requireUser(event, can.approveModels);
		const id = await versionIdFor(event.params);
		const form = await superValidate(event.request, zod(approveFormSchema));
		if (!form.valid) {
			form.data.password = '';
			return fail(400, { form });
		}
		try {
			await versions.approve(actor, id, { ...form.data, meaning: form.data.meaning as typeof versions.APPROVAL_MEANING });
		} catch (error) {
			form.data.password = '';
			return refuse(form, error);
		}
		redirect(303, `/materials/${event.params.code}/versions/${event.params.version}`);
	}
} satisfies Actions;
