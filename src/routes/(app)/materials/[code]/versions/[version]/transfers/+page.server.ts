import { can } from '$lib/permissions';
import { fail, redirect } from '@sveltejs/kit';
import { message, superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { z } from 'zod';
import { proseText } from '$lib/validation/text';
import { requireUser } from '$lib/server/guard';
import { hasRole } from '$lib/server/services/actor';
import * as transfers from '$lib/server/services/transfers';
import { refuse } from '../../../../service-errors.server';
import { versionIdFor } from '../version.server';
import type { Actions, PageServerLoad } from './$types';

const checkSchema = z.object({
	instrument: z.string().trim().min(1, 'Choose the instrument'),
	note: proseText(z.string().trim().min(3, 'Write what this transfer check is for').max(2000))
});
const decideSchema = transfers.decisionSchema.extend({
	transferId: z.coerce.number().int().positive(),
	decision: z.enum(['approve', 'refuse'], { errorMap: () => ({ message: 'Approve or refuse' }) })
});

export const load = (async (event) => {
	const actor = requireUser(event, can.readModels);
	const id = await versionIdFor(event.params);
	const view = await transfers.forVersion(id);
	const decideForm = await superValidate(zod(decideSchema), { id: 'decide' });
	decideForm.data.meaning = transfers.TRANSFER_MEANING;
	return {
		...view,
		code: event.params.code.toUpperCase(),
		version: Number(event.params.version),
		actorId: actor.id,
		canCheck: hasRole(actor, can.buildModels),
		canDecide: hasRole(actor, can.approveModels),
		checkForm: await superValidate(zod(checkSchema), { id: 'check' }),
		decideForm,
		meanings: { approve: transfers.TRANSFER_MEANING, refuse: transfers.TRANSFER_REFUSAL_MEANING }
	};
}) satisfies PageServerLoad;

export const actions = {
	check: async (event) => {
		const actor = requireUser(event, can.buildModels);
		const form = await superValidate(event.request, zod(checkSchema), { id: 'check' });
		if (!form.valid) return fail(400, { checkForm: form });
		try {
			const t = await transfers.check(actor, await versionIdFor(event.params), form.data);
			return message(form, t.state === 'proposed' ? `Transfer check ${t.id} meets the criteria and waits for QA approval.` : `Transfer check ${t.id} does not meet the criteria: ${t.evaluation.unmet.join('; ')}`);
		} catch (error) {
			return refuse(form, error, 'checkForm');
		}
	},
	decide: async (event) => {
		const actor = requireUser(event, can.approveModels);
		const form = await superValidate(event.request, zod(decideSchema), { id: 'decide' });
		if (!form.valid) {
			form.data.password = '';
			return fail(400, { decideForm: form });
		}
		try {
			await transfers.decide(actor, form.data.transferId, form.data.decision === 'approve', form.data, await versionIdFor(event.params));
		} catch (error) {
			form.data.password = '';
			return refuse(form, error, 'decideForm');
		}
		redirect(303, `/materials/${event.params.code}/versions/${event.params.version}/transfers`);
	}
} satisfies Actions;
