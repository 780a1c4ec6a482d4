// Maps a service refusal onto a superform: beside its field when it names one, otherwise as the form's message.
import { fail } from '@sveltejs/kit';
import { message, type SuperValidated } from 'sveltekit-superforms';
import { ZodError } from 'zod';
import { ServiceError } from '$lib/server/services/errors';

// eslint-disable-next-line @typescript-eslint/no-explicit-any
export function refuse(form: SuperValidated<any, any>, error: unknown, key = 'form') {
	if (error instanceof ServiceError) {
		const status = error.status === 401 || error.status === 403 || error.status === 409 || error.status === 423 ? error.status : 400;
		if (error.field && error.field in (form.data as object)) {
			(form.errors as Record<string, string[]>)[error.field] = [error.message];
			return fail(status, { [key]: form });
		}
		return message(form, error.message, { status });
	}
	if (error instanceof ZodError) return message(form, error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; '), { status: 400 });
	throw error;
}
