import { fail } from '@sveltejs/kit';
import { message, superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import type { z } from 'zod';
import { ServiceError } from './services/errors';

/**
 * A form action on one table row: validates, runs the service call, and returns the form as `rowForm`
 * so the refusal (or the success message) shows beside that row.
 */
export async function rowAction<T extends z.ZodTypeAny>(request: Request, schema: T, run: (data: z.infer<T>) => Promise<unknown>, successMessage?: string) {
	const form = await superValidate(request, zod(schema));
	if (!form.valid) return fail(400, { rowForm: form });
	try {
		await run(form.data);
	} catch (error) {
		if (error instanceof ServiceError) return message(form, error.message, { status: error.status === 403 ? 403 : 400 });
		throw error;
	}
	return successMessage ? message(form, successMessage) : { rowForm: form };
}
