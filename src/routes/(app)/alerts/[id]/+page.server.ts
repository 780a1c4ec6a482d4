import { can } from '$lib/permissions';
import { error, fail } from '@sveltejs/kit';
import { message, superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { requireUser } from '$lib/server/guard';
import { hasRole } from '$lib/server/services/actor';
import * as alerts from '$lib/server/services/alerts';
import { ServiceError } from '$lib/server/services/errors';
import type { Actions, PageServerLoad, RequestEvent } from './$types';

const alertId = (event: { params: { id: string } }) => {
	const id = Number(event.params.id);
	if (!Number.isInteger(id) || id < 1) error(404, 'This alert does not exist.');
	return id;
};

export const load = (async (event) => {
	const actor = requireUser(event, can.readAlerts);
	const alert = await alerts.get(alertId(event)).catch((e) => {
		if (e instanceof ServiceError && e.status === 404) error(404, e.message);
		throw e;
	});
	return {
		alert,
		canHandle: hasRole(actor, can.handleAlerts),
		ackForm: await superValidate(zod(alerts.noteSchema), { id: 'acknowledge' }),
		closeForm: await superValidate(zod(alerts.noteSchema), { id: 'close' })
	};
}) satisfies PageServerLoad;

async function step(event: RequestEvent, which: 'acknowledge' | 'close') {
	const actor = requireUser(event, can.handleAlerts);
	const form = await superValidate(event.request, zod(alerts.noteSchema), { id: which });
	if (!form.valid) return fail(400, { form });
	try {
		await alerts[which](actor, alertId(event), form.data.note);
		return message(form, which === 'acknowledge' ? 'Acknowledged.' : 'Closed.');
	} catch (e) {
		if (e instanceof ServiceError) return message(form, e.message, { status: e.status === 409 ? 409 : 400 });
		throw e;
	}
}

export const actions = {
	acknowledge: (event) => step(event, 'acknowledge'),
	close: (event) => step(event, 'close')
} satisfies Actions;
