import { can } from '$lib/permissions';
import { fail, redirect } from '@sveltejs/kit';
import { ZodError } from 'zod';
import { requireUser } from '$lib/server/guard';
import { ServiceError } from '$lib/server/services/errors';
import * as growth from '$lib/server/services/library-growth';
import type { Actions, PageServerLoad } from './$types';

export const load = (async (event) => {
	requireUser(event, can.buildModels);
	try {
		return { view: await growth.candidates(event.params.code), problem: null };
	} catch (error) {
		if (error instanceof ServiceError && error.status !== 404) return { view: null, problem: error.message };
		throw error;
	}
}) satisfies PageServerLoad;

export const actions = {
	default: async (event) => {
		const actor = requireUser(event, can.buildModels);
		const data = await event.request.formData();
		const lotIds = data.getAll('lot').map((v) => String(v));
		let created: { version: number };
		try {
			if (lotIds.some((v) => !/^\d+$/.test(v))) throw new ServiceError(400, 'invalid', 'The selection must be lot numbers', 'lotIds');
			created = await growth.propose(actor, event.params.code, { lotIds: lotIds.map(Number), reason: String(data.get('reason') ?? '') });
		} catch (error) {
			if (error instanceof ServiceError) return fail(error.status === 403 ? 403 : error.status === 409 ? 409 : 400, { error: error.message, selected: lotIds });
			if (error instanceof ZodError) return fail(400, { error: error.issues.map((i) => i.message).join('; '), selected: lotIds });
			throw error;
		}
		redirect(303, `/materials/${event.params.code}/versions/${created.version}`);
	}
} satisfies Actions;
