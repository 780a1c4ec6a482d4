import { can } from '$lib/permissions';
import { requireUser } from '$lib/server/guard';
import type { PageServerLoad } from './$types';

export const load = (async (event) => {
	requireUser(event, can.administer);
	return { demo: process.env.LOTGATE_DEMO === '1' || process.env.LOTGATE_TEST === '1' };
}) satisfies PageServerLoad;
