import { can } from '$lib/permissions';
import { requireUser } from '$lib/server/guard';
import * as alerts from '$lib/server/services/alerts';
import type { PageServerLoad } from './$types';

export const load = (async (event) => {
	requireUser(event, can.readAlerts);
	const q = event.url.searchParams;
	const state = q.get('state') ?? 'live';
	const supplier = q.get('supplier') ?? '';
	const sort = q.get('sort') ?? 'severity:desc';
	const result = await alerts.list({ state: state === 'all' ? undefined : state, supplier: supplier || undefined, sort, page: Number(q.get('page') ?? 1) || 1, pageSize: 25 });
	return { result, filters: { state, supplier, sort: result.sort } };
}) satisfies PageServerLoad;
