import { can } from '$lib/permissions';
import { error, fail } from '@sveltejs/kit';
import { message, superValidate, type SuperValidated } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { z } from 'zod';
import { chooseOne } from '$lib/server/forms';
import { requireUser } from '$lib/server/guard';
import { hasRole } from '$lib/server/services/actor';
import { ServiceError } from '$lib/server/services/errors';
import * as drift from '$lib/server/services/drift';
import * as scorecards from '$lib/server/services/scorecards';
import * as signatures from '$lib/server/services/signatures';
import * as supplierStatus from '$lib/server/services/supplier-status';
import type { Actions, PageServerLoad } from './$types';

const STATUS_MEANING = 'supplier status change approved';
// Neither the new status nor the meaning of the co-signature is chosen for the user: both start empty.
const approveSchema = signatures.signatureFieldsSchema.extend({
	requestId: z.coerce.number().int().positive(),
	meaning: chooseOne([STATUS_MEANING], 'Choose the meaning of your signature')
});
const declineSchema = supplierStatus.declineSchema.extend({ requestId: z.coerce.number().int().positive() });
const requestFormSchema = supplierStatus.requestSchema.extend({ status: chooseOne(['qualified', 'on-watch', 'blocked'], 'Choose the new status: qualified, on watch or blocked') });

export const load = (async (event) => {
	const actor = requireUser(event);
	// One period, chosen by the user, for the tiles, the verdicts and the trend alike.
	const period = event.url.searchParams.get('period') ?? 'all';
	if (!(scorecards.PERIODS as readonly string[]).includes(period)) error(400, `Choose a period of ${scorecards.PERIODS.filter((p) => p !== 'all').join(', ')} months, or all`);
	const card = await scorecards.scorecard(event.params.code, { months: period === 'all' ? 'all' : Number(period) }).catch((e) => {
		if (e instanceof ServiceError && e.status === 404) error(404, e.message);
		throw e;
	});
	const requests = await supplierStatus.forSupplier(card.supplier.id);
	const pending = requests.find((r) => r.state === 'pending') ?? null;
	const approveForm = await superValidate(zod(approveSchema), { id: 'approve-status' });
	if (pending) approveForm.data.requestId = pending.id;
	const declineForm = await superValidate(zod(declineSchema), { id: 'decline-status' });
	if (pending) declineForm.data.requestId = pending.id;
	return {
		card,
		driftCharts: await drift.chartsForSupplier(card.supplier.code),
		canRestartDrift: hasRole(actor, can.restartDriftBaseline),
		restartForm: await superValidate(zod(drift.restartSchema), { id: 'restart-drift' }),
		requests,
		pending,
		canRequest: hasRole(actor, can.requestSupplierStatus) && !pending,
		canCosign: hasRole(actor, can.cosignSupplierStatus) && !!pending && pending.requestedById !== actor.id,
		requestForm: await superValidate(zod(requestFormSchema), { id: 'request-status' }),
		approveForm,
		declineForm,
		meaning: STATUS_MEANING
	};
}) satisfies PageServerLoad;

// eslint-disable-next-line @typescript-eslint/no-explicit-any
function refuse(form: SuperValidated<any, any>, e: unknown) {
	if ('password' in form.data) form.data.password = '';
	if (e instanceof ServiceError) {
		const status = ([401, 403, 409, 423] as number[]).includes(e.status) ? e.status : 400;
		if (e.field && e.field in form.data) {
			(form.errors as Record<string, string[]>)[e.field] = [e.message];
			return fail(status, { form });
		}
		return message(form, e.message, { status: status as 400 });
	}
	throw e;
}

export const actions = {
	restartDrift: async (event) => {
		const actor = requireUser(event, can.restartDriftBaseline);
		const form = await superValidate(event.request, zod(drift.restartSchema), { id: 'restart-drift' });
		if (!form.valid) return fail(400, { form });
		try {
			const r = await drift.restartBaseline(actor, event.params.code, form.data);
			return message(form, `History restarted after ${r.afterLot}: the chart collects 5 new lots.`);
		} catch (e) {
			return refuse(form, e);
		}
	},
	requestStatus: async (event) => {
		const actor = requireUser(event, can.requestSupplierStatus);
		const form = await superValidate(event.request, zod(requestFormSchema), { id: 'request-status' });
		if (!form.valid) return fail(400, { form });
		try {
			const r = await supplierStatus.request(actor, event.params.code, { ...form.data, status: form.data.status as 'qualified' | 'on-watch' | 'blocked' });
			return message(form, `Requested ${r.fromStatus} → ${r.toStatus}; a QA manager must co-sign before it applies.`);
		} catch (e) {
			return refuse(form, e);
		}
	},
	approveStatus: async (event) => {
		const actor = requireUser(event, can.cosignSupplierStatus);
		const form = await superValidate(event.request, zod(approveSchema), { id: 'approve-status' });
		if (!form.valid) {
			form.data.password = '';
			return fail(400, { form });
		}
		try {
			const r = await supplierStatus.approve(actor, form.data.requestId, form.data);
			form.data.password = '';
			return message(form, `Co-signed: the supplier is now ${r.toStatus}.`);
		} catch (e) {
			return refuse(form, e);
		}
	},
	declineStatus: async (event) => {
		const actor = requireUser(event, can.cosignSupplierStatus);
		const form = await superValidate(event.request, zod(declineSchema), { id: 'decline-status' });
		if (!form.valid) return fail(400, { form });
		try {
			await supplierStatus.decline(actor, form.data.requestId, form.data.note);
			return message(form, 'Declined.');
		} catch (e) {
			return refuse(form, e);
		}
	}
} satisfies Actions;
