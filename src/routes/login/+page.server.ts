import { fail, isRedirect, redirect } from '@sveltejs/kit';
import { message, superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { z } from 'zod';
import { CredentialsSignin } from '@auth/sveltekit';
import { CLIENT_IP_HEADER, signIn, signInRetryAfter } from '$lib/server/auth';
import { LOGIN_PER_ACCOUNT } from '$lib/server/rate-limit';
import { LOCKED_MESSAGE } from '$lib/server/services/users';
import type { Actions, PageServerLoad } from './$types';
import { config } from '$lib/server/config';

const signInSchema = z.object({
	email: z.string().trim().max(320).email('Enter your e-mail address'),
	password: z.string().min(1, 'Enter your password').max(1000),
	redirectTo: z.string().max(2000).default('/')
});

// The same texts whether or not the e-mail belongs to an account.
const FAILURE_TEXT: Record<string, string> = {
	'wrong-credentials': 'The e-mail or password is not correct.',
	locked: LOCKED_MESSAGE,
	inactive: 'This account has been deactivated. Ask an admin.'
};
const FAILURE_STATUS: Record<string, number> = { 'wrong-credentials': 401, locked: 429, inactive: 401 };

/** The refusal beside the form; a lockout also answers 429 with Retry-After. */
function refuse(event: Parameters<Actions['default']>[0], code: string) {
	const known = code in FAILURE_TEXT ? code : 'wrong-credentials';
	if (known === 'locked') {
		const wait = signInRetryAfter.get(event.locals.requestId) ?? LOGIN_PER_ACCOUNT.windowSeconds;
		event.setHeaders({ 'retry-after': String(wait) });
	}
	signInRetryAfter.delete(event.locals.requestId);
	return known;
}

const safeTarget = (target: string | null) => (target && target.startsWith('/') && !target.startsWith('//') ? target : '/');

export const load = (async ({ locals, url }) => {
	if (locals.user) redirect(303, safeTarget(url.searchParams.get('redirectTo')));
	const form = await superValidate({ redirectTo: safeTarget(url.searchParams.get('redirectTo')) }, zod(signInSchema), { errors: false });
	return { form, demo: config().LOTGATE_DEMO, changed: url.searchParams.get('changed') === '1' };
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
		headers.set(CLIENT_IP_HEADER, event.getClientAddress());
		const request = new Request(event.request.url, { method: 'POST', headers, body });
		try {
			await signIn({ ...event, request });
		} catch (thrown) {
			// Auth.js throws the provider's CredentialsSignin (with our reason code) when the check fails.
			if (thrown instanceof CredentialsSignin) {
				form.data.password = '';
				const code = refuse(event, thrown.code);
				return message(form, FAILURE_TEXT[code], { status: FAILURE_STATUS[code] as 401 });
			}
			if (isRedirect(thrown)) {
				const location = new URL(thrown.location, event.url);
				if (location.searchParams.has('error')) {
					const code = refuse(event, location.searchParams.get('code') ?? 'wrong-credentials');
					form.data.password = '';
					return message(form, FAILURE_TEXT[code], { status: FAILURE_STATUS[code] as 401 });
				}
				redirect(303, safeTarget(location.pathname + location.search));
			}
			throw thrown;
		}
		redirect(303, safeTarget(form.data.redirectTo));
	}
} satisfies Actions;
