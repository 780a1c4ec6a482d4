import { requireUser } from '$lib/server/guard';
import { queuesFor } from '$lib/server/services/queues';
import type { PageServerLoad } from './$types';

export const load = (async (event) => {
	const actor = requireUser(event);
	return { queues: await queuesFor(actor) };
}) satisfies PageServerLoad;
