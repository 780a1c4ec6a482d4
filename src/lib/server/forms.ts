import { fail } from '@sveltejs/kit';
import { message, superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { z } from 'zod';
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

/** The parts of a comma-separated list field ("a@x.org, b@y.org"); semicolons, spaces and new lines also separate. */
export function splitList(text: string | undefined | null): string[] {
	return (text ?? '').split(/[,;\s]+/).filter(Boolean);
}

/**
 * A comma-separated e-mail list typed into one text box. The form keeps it a string (superforms would otherwise treat
 * it as an array field and report an error object, shown as "[object Object]"); the action splits it with splitList.
 */
export function emailListField(noun: string, max: number) {
	return z
		.string()
		.max(4000, `Keep the list of ${noun} under 4000 characters`)
		.default('')
		.superRefine((text, ctx) => {
			const parts = splitList(text);
			const wrong = parts.filter((p) => !z.string().email().safeParse(p).success);
			if (wrong.length) {
				ctx.addIssue({
					code: 'custom',
					message: `${wrong.map((w) => `“${w.length > 60 ? w.slice(0, 60) + '…' : w}”`).join(', ')} ${wrong.length === 1 ? 'is not an e-mail address' : 'are not e-mail addresses'}. Separate ${noun} with commas, e.g. qa@site.example, lab@site.example`
				});
			} else if (parts.length > max) {
				ctx.addIssue({ code: 'custom', message: `List at most ${max} ${noun} (${parts.length} given)` });
			}
		});
}

/**
 * A choice a signed or recorded form must not make for the user: it starts empty (superforms would otherwise default
 * an enum to its first option) and is refused until the user picks one of `values`.
 */
export function chooseOne<T extends string>(values: readonly [T, ...T[]], message: string) {
	return z
		.enum(['', ...values] as unknown as [string, ...string[]], { errorMap: () => ({ message }) })
		.default('')
		.refine((v): v is T => v !== '', message);
}
