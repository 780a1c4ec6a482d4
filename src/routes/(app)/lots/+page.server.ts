import { can } from '$lib/permissions';
import { error } from '@sveltejs/kit';
import { requireUser } from '$lib/server/guard';
import { hasRole } from '$lib/server/services/actor';
import { ServiceError } from '$lib/server/services/errors';
import * as lots from '$lib/server/services/lots';
import * as materials from '$lib/server/services/materials';
import * as suppliers from '$lib/server/services/suppliers';
import { z } from 'zod';
import { dateParam, pageParam, parseQuery } from '$lib/server/query';
import type { PageServerLoad } from './$types';

export const load = (async (event) => {
	const actor = requireUser(event);
	const q = event.url.searchParams;
	const filters = {
		status: q.get('status') ?? '',
		material: q.get('material') ?? '',
		supplier: q.get('supplier') ?? '',
		from: q.get('from') ?? '',
		to: q.get('to') ?? '',
		q: q.get('q') ?? '',
		sort: q.get('sort') ?? 'receivedAt:desc'
	};
	let result;
	try {
		const { page } = parseQuery(event.url, z.object({ page: pageParam, from: dateParam, to: dateParam }).passthrough());
		result = await lots.list({ ...filters, page: page ?? 1, pageSize: 25 });
	} catch (e) {
		if (e instanceof ServiceError) error(400, e.message);
		throw e;
	}
	return {
		result,
		filters,
		statuses: lots.LOT_STATUSES.map((s) => ({ value: s, label: lots.STATUS_LABELS[s] })),
		materials: (await materials.list()).map((m) => ({ code: m.code, name: m.name })),
		suppliers: (await suppliers.list({ pageSize: 500 })).rows.map((s) => ({ code: s.code, name: s.name })),
		canReceive: hasRole(actor, can.receiveLots)
	};
}) satisfies PageServerLoad;
