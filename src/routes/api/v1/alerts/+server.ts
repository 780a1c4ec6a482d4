import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, requireActor } from '$lib/server/api';
import * as alerts from '$lib/server/services/alerts';
import type { RequestHandler } from './$types';

/** ?state=open|acknowledged|closed|live&supplier=&lot=&sort=severity:desc&page= */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, can.readAlerts);
	const p = event.url.searchParams;
	return json(
		await alerts.list({
			state: p.get('state') ?? undefined,
			supplier: p.get('supplier') ?? undefined,
			lot: p.get('lot') ? Number(p.get('lot')) : undefined,
			sort: p.get('sort') ?? undefined,
			page: Number(p.get('page') ?? 1),
			pageSize: Number(p.get('pageSize') ?? 25)
		})
	);
});
