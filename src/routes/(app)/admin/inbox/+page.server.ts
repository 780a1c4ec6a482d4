import { can } from '$lib/permissions';
import { requireUser } from '$lib/server/guard';
import * as inbox from '$lib/server/inbox';
import type { PageServerLoad } from './$types';

export const load = (async (event) => {
	requireUser(event, can.administer);
	inbox.requireInbox();
	const q = event.url.searchParams;
	return { result: await inbox.list({ page: Number(q.get('page') ?? 1) || 1, q: q.get('q') ?? undefined }), q: q.get('q') ?? '' };
}) satisfies PageServerLoad;
