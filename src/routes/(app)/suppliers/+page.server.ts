import { can } from '$lib/permissions';
import { fail } from '@sveltejs/kit';
import { message, superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { emailListField, splitList } from '$lib/server/forms';
import { hasRole } from '$lib/server/services/actor';
import { requireUser } from '$lib/server/guard';
import { ServiceError } from '$lib/server/services/errors';
import * as suppliers from '$lib/server/services/suppliers';
import type { Actions, PageServerLoad } from './$types';

// The form takes contacts as one comma-separated field.
const createSchema = suppliers.supplierSchema.extend({
	contacts: emailListField('contacts', 20)
});

export const load = (async (event) => {
	const actor = requireUser(event);
	const q = event.url.searchParams;
	const page = Math.max(1, Number(q.get('page') ?? 1) || 1);
	const sort = q.get('sort') ?? 'code';
	const status = q.get('status') ?? '';
	const search = q.get('q') ?? '';
	return {
		result: await suppliers.list({ page, sort, status: status || undefined, q: search || undefined, pageSize: 25 }),
		filters: { sort, status, q: search },
		canManage: hasRole(actor, can.manageSuppliers),
		form: await superValidate(zod(createSchema))
	};
}) satisfies PageServerLoad;

export const actions = {
	create: async (event) => {
		const actor = requireUser(event, can.manageSuppliers);
		const form = await superValidate(event.request, zod(createSchema));
		if (!form.valid) return fail(400, { form });
		try {
			const created = await suppliers.create(actor, { ...form.data, contacts: splitList(form.data.contacts) });
			return message(form, `Added ${created.code} · ${created.name}`);
		} catch (error) {
			if (error instanceof ServiceError && error.field) {
				form.errors[error.field as 'code'] = [error.message];
				return fail(error.status, { form });
			}
			throw error;
		}
	}
} satisfies Actions;
