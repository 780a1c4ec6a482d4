import { fail, redirect } from '@sveltejs/kit';
import { message, setError, superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { PASSWORD_MIN_LENGTH } from '$lib/server/password-policy';
import { requireUser } from '$lib/server/guard';
import { ServiceError } from '$lib/server/services/errors';
import * as users from '$lib/server/services/users';
import type { Actions, PageServerLoad } from './$types';

export const load = (async (event) => {
	requireUser(event);
	return {
		form: await superValidate(zod(users.changePasswordSchema)),
		oneTime: !!event.locals.user?.mustChangePassword,
		minLength: PASSWORD_MIN_LENGTH
	};
}) satisfies PageServerLoad;

export const actions = {
	default: async (event) => {
		const actor = requireUser(event);
		const form = await superValidate(event.request, zod(users.changePasswordSchema));
		const clear = () => {
			form.data.current = '';
			form.data.password = '';
			form.data.confirm = '';
		};
		if (!form.valid) {
			clear();
			return fail(400, { form });
		}
		try {
			await users.changeOwnPassword(actor, form.data);
		} catch (error) {
			clear();
			if (error instanceof ServiceError) {
				if (error.status === 429 && 'retryAfter' in error) event.setHeaders({ 'retry-after': String(error.retryAfter) });
				if (error.field === 'current' || error.field === 'password' || error.field === 'confirm') return setError(form, error.field, error.message, { status: error.status === 401 ? 400 : (error.status as 400) });
				return message(form, error.message, { status: error.status as 400 });
			}
			throw error;
		}
		// Every session of this user has ended with the change, this one too: sign in with the new password.
		redirect(303, '/login?changed=1');
	}
} satisfies Actions;
