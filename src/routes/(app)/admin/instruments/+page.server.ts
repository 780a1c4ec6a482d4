import { can } from '$lib/permissions';
import { fail } from '@sveltejs/kit';
import { message, superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { z } from 'zod';
import { nameText, proseText } from '$lib/validation/text';
import { requireUser } from '$lib/server/guard';
import { ServiceError } from '$lib/server/services/errors';
import { rowAction } from '$lib/server/forms';
import * as instruments from '$lib/server/services/instruments';
import type { Actions, PageServerLoad } from './$types';

const reason = proseText(z.string().trim().min(3, 'Give a reason (it goes into the audit trail)').max(500));
const createSchema = instruments.instrumentSchema.extend({ reason: proseText(z.string().trim().max(500)).optional() });
const updateSchema = z.object({
	instrumentId: z.coerce.number().int(),
	serial: nameText(z.string().trim().min(1, 'Enter the serial number').max(80)),
	qualificationDue: instruments.instrumentSchema.shape.qualificationDue,
	active: z.enum(['true', 'false']),
	reason
});
const tokenSchema = z.object({ instrumentId: z.coerce.number().int(), label: instruments.tokenLabelSchema });
const revokeSchema = z.object({ instrumentId: z.coerce.number().int(), tokenId: z.coerce.number().int(), reason });

export const load = (async (event) => {
	const actor = requireUser(event, can.administer);
	const today = instruments.today();
	const [list, tokens] = await Promise.all([instruments.list(), instruments.listTokens(actor)]);
	return {
		today,
		instruments: list.map((i) => ({ ...i, overdue: i.qualificationDue < today, tokens: tokens.filter((t) => t.instrumentId === i.id) })),
		createForm: await superValidate(zod(createSchema), { id: 'create-instrument' })
	};
}) satisfies PageServerLoad;

export const actions = {
	create: async (event) => {
		const actor = requireUser(event, can.administer);
		const form = await superValidate(event.request, zod(createSchema), { id: 'create-instrument' });
		if (!form.valid) return fail(400, { createForm: form });
		try {
			const { reason: why, ...data } = form.data;
			const created = await instruments.create(actor, data, why || undefined);
			return message(form, `Registered ${created.name}`);
		} catch (error) {
			if (error instanceof ServiceError) {
				form.errors[(error.field as 'name') ?? 'name'] = [error.message];
				return fail(error.status === 403 ? 403 : 400, { createForm: form });
			}
			throw error;
		}
	},
	update: async (event) => {
		const actor = requireUser(event, can.administer);
		return rowAction(event.request, updateSchema, (d) =>
			instruments.update(actor, d.instrumentId, { serial: d.serial, qualificationDue: d.qualificationDue, active: d.active === 'true' }, d.reason)
		);
	},
	token: async (event) => {
		const actor = requireUser(event, can.administer);
		const form = await superValidate(event.request, zod(tokenSchema));
		if (!form.valid) return fail(400, { rowForm: form });
		try {
			const created = await instruments.createToken(actor, form.data.instrumentId, form.data.label);
			// The token text goes back in this one response only; it is never stored or shown again.
			return { rowForm: form, newToken: { instrumentId: created.instrumentId, instrument: created.instrument, label: created.label, token: created.token } };
		} catch (error) {
			if (error instanceof ServiceError) return message(form, error.message, { status: 400 });
			throw error;
		}
	},
	revoke: async (event) => {
		const actor = requireUser(event, can.administer);
		return rowAction(event.request, revokeSchema, (d) => instruments.revokeToken(actor, d.tokenId, d.reason));
	}
} satisfies Actions;
