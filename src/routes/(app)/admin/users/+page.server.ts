import { fail } from '@sveltejs/kit';
import { message, superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { z } from 'zod';
import { can, ROLES } from '$lib/permissions';
import { proseText } from '$lib/validation/text';
import { requireUser } from '$lib/server/guard';
import { ServiceError } from '$lib/server/services/errors';
import { rowAction } from '$lib/server/forms';
import * as users from '$lib/server/services/users';
import type { Actions, PageServerLoad } from './$types';

const reason = proseText(z.string().trim().min(3, 'Give a reason (it goes into the audit trail)').max(500));
const rolesSchema = z.object({ userId: z.coerce.number().int(), roles: z.array(z.enum(ROLES)).min(1, 'Keep at least one role'), reason });
const passwordSchema = z.object({ userId: z.coerce.number().int(), password: users.passwordSchema, reason });
const decideSchema = z.object({ requestId: z.coerce.number().int().positive(), decision: z.enum(['approve', 'decline']), reason });
const activeSchema = z.object({ userId: z.coerce.number().int(), active: z.enum(['true', 'false']), reason });

export const load = (async (event) => {
	const actor = requireUser(event, can.administer);
	return {
		users: await users.list(actor),
		pendingRoleChanges: await users.pendingRoleChanges(actor),
		roles: ROLES,
		createForm: await superValidate(zod(users.newUserSchema), { id: 'create-user' })
	};
}) satisfies PageServerLoad;

export const actions = {
	create: async (event) => {
		const actor = requireUser(event, can.administer);
		const form = await superValidate(event.request, zod(users.newUserSchema), { id: 'create-user' });
		if (!form.valid) return fail(400, { createForm: form });
		try {
			const created = await users.create(actor, form.data);
			form.data.password = '';
			return message(form, `Created ${created.name} (${created.email})`);
		} catch (error) {
			if (error instanceof ServiceError && error.field) {
				form.errors[error.field as 'email'] = [error.message];
				return fail(error.status, { createForm: form });
			}
			throw error;
		}
	},
	roles: async (event) => {
		const actor = requireUser(event, can.administer);
		let pending = false;
		const result = await rowAction(
			event.request,
			rolesSchema,
			async (d) => {
				pending = !!(await users.setRoles(actor, d.userId, d.roles, d.reason)).pendingRoleChange;
			},
			'Saved'
		);
		if (pending && 'rowForm' in result && result.rowForm) result.rowForm.message = 'Recorded: granting QA manager or admin waits for a second admin to approve it (below).';
		return result;
	},
	password: async (event) => {
		const actor = requireUser(event, can.administer);
		return rowAction(event.request, passwordSchema, (d) => users.resetPassword(actor, d.userId, d.password, d.reason), 'Saved');
	},
	decide: async (event) => {
		const actor = requireUser(event, can.administer);
		return rowAction(event.request, decideSchema, (d) => users.decideRoleChange(actor, d.requestId, d.decision === 'approve', d.reason), 'Decided');
	},
	active: async (event) => {
		const actor = requireUser(event, can.administer);
		return rowAction(event.request, activeSchema, (d) => users.setActive(actor, d.userId, d.active === 'true', d.reason), 'Saved');
	}
} satisfies Actions;
