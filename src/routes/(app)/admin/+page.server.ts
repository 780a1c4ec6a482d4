import { can } from '$lib/permissions';
import { requireUser } from '$lib/server/guard';
import type { PageServerLoad } from './$types';
import { config } from '$lib/server/config';

export const load = (async (event) => {
	requireUser(event, can.administer);
	return { demo: config().LOTGATE_DEMO || config().LOTGATE_TEST };
}) satisfies PageServerLoad;
