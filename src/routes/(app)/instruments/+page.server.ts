import { can } from '$lib/permissions';
import { requireUser } from '$lib/server/guard';
import * as checks from '$lib/server/services/instrument-checks';
import type { PageServerLoad } from './$types';

export const load = (async (event) => {
	requireUser(event, can.read);
	return { rows: await checks.overview() };
}) satisfies PageServerLoad;
