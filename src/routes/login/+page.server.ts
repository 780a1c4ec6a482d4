import { fail, isRedirect, redirect } from '@sveltejs/kit';
import { message, superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { z } from 'zod';
import { CredentialsSignin } from '@auth/sveltekit';
import { signIn } from '$lib/server/auth';
import type { Actions, PageServerLoad } from './$types';

const signInSchema = z.object({
	email: z.string().trim().email('Enter your e-mail address'),
	password: z.string().min(1, 'Enter your password'),
	redirectTo: z.string().default('/')
});

const FAILURE_TEXT: Record<string, string> = {
	'wrong-credentials': 'The e-mail or password is not correct.',
	locked: 'Too many failed attempts: this account is locked for 15 minutes. Ask an admin, or try again later.',
	inactive: 'This account has been deactivated. Ask an admin.'
};

const safeTarget = (target: string | null) => (target && target.startsWith('/') && !target.startsWith('//') ? target : '/');

export const load = (async ({ locals, url }) => {
	if (locals.user) redirect(303, safeTarget(url.searchParams.get('redirectTo')));
	const form = await superValidate({ redirectTo: safeTarget(url.searchParams.get('redirectTo')) }, zod(signInSchema), { errors: false });
	return { form, demo: process.env.LOTGATE_DEMO === '1' };
}) satisfies PageServerLoad;

export const actions = {
	default: async (event) => {
		const form = await superValidate(event.request, zod(signInSchema));
		if (!form.valid) return fail(400, { form });
		// Auth.js reads the credentials from a form body of its own.
		const body = new FormData();
		body.set('providerId', 'credentials');
		body.set('email', form.data.email);
		body.set('password', form.data.password);
		body.set('redirectTo', safeTarget(form.data.redirectTo));
		const headers = new Headers(event.request.headers);
		headers.delete('content-type');
		headers.delete('content-length');
		headers.set('x-request-id', event.locals.requestId);
		const request = new Request(event.request.url, { method: 'POST', headers, body });
		try {
			await signIn({ ...event, request });
		} catch (thrown) {
			// Auth.js throws the provider's CredentialsSignin (with our reason code) when the check fails.
			if (thrown instanceof CredentialsSignin) {
				form.data.password = '';
				const code = thrown.code in FAILURE_TEXT ? thrown.code : 'wrong-credentials';
				return message(form, FAILURE_TEXT[code], { status: code === 'locked' ? 423 : 401 });
			}
			if (isRedirect(thrown)) {
				const location = new URL(thrown.location, event.url);
				if (location.searchParams.has('error')) {
					const code = location.searchParams.get('code') ?? 'wrong-credentials';
					form.data.password = '';
					return message(form, FAILURE_TEXT[code] ?? FAILURE_TEXT['wrong-credentials'], { status: code === 'locked' ? 423 : 401 });
				}
				redirect(303, safeTarget(location.pathname + location.search));
			}
			throw thrown;
		}
		redirect(303, safeTarget(form.data.redirectTo));
	}
} satisfies Actions;
