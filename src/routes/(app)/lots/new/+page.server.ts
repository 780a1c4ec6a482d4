import { can } from '$lib/permissions';
import { fail, redirect } from '@sveltejs/kit';
import { superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { requireUser } from '$lib/server/guard';
import * as lots from '$lib/server/services/lots';
import * as materials from '$lib/server/services/materials';
import * as suppliers from '$lib/server/services/suppliers';
import { refuse } from '../../materials/service-errors.server';
import { receiveSchema } from './schema';
import type { Actions, PageServerLoad } from './$types';

export const load = (async (event) => {
	requireUser(event, can.receiveLots);
	const form = await superValidate(zod(receiveSchema));
	form.data.receivedAt = new Date().toISOString().slice(0, 10);
	return {
		form,
		materials: (await materials.list()).map((m) => ({ code: m.code, name: m.name, technique: m.technique, samplingPolicy: m.samplingPolicy, samplingJustification: m.samplingJustification })),
		suppliers: (await suppliers.list({ pageSize: 500 })).rows.map((s) => ({ code: s.code, name: s.name, status: s.status }))
	};
}) satisfies PageServerLoad;

export const actions = {
	default: async (event) => {
		const actor = requireUser(event, can.receiveLots);
		const form = await superValidate(event.request, zod(receiveSchema));
		if (!form.valid) return fail(400, { form });
		let internalLot: string;
		try {
			const { plan, justification, ...rest } = form.data;
			const created = await lots.create(actor, { ...rest, plan: { kind: plan, justification: justification || undefined } });
			internalLot = created.internalLot;
		} catch (error) {
			return refuse(form, error);
		}
		redirect(303, `/lots/${internalLot}`);
	}
} satisfies Actions;
