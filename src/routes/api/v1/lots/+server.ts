import { ANY_SIGNED_IN, can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as lots from '$lib/server/services/lots';
import { z } from 'zod';
import { dateParam, pageParam, pageSizeParam, parseQuery } from '$lib/server/query';
import type { RequestHandler } from './$types';

/** ?status=&material=&supplier=&from=&to=&q=&sort=receivedAt:desc&page=&pageSize= — every signed-in role. */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, ANY_SIGNED_IN);
	const p = event.url.searchParams;
	const checked = parseQuery(event.url, z.object({ page: pageParam, pageSize: pageSizeParam(200), from: dateParam, to: dateParam }).passthrough());
	const result = await lots.list({
		status: p.get('status') ?? undefined,
		material: p.get('material') ?? undefined,
		supplier: p.get('supplier') ?? undefined,
		from: p.get('from') ?? undefined,
		to: p.get('to') ?? undefined,
		q: p.get('q') ?? undefined,
		sort: p.get('sort') ?? undefined,
		page: checked.page ?? 1,
		pageSize: checked.pageSize ?? 25
	});
	return json(result);
});

/**
 * { material, supplier (code or id), supplierLot, containers, receivedAt (YYYY-MM-DD),
 *   plan?: "every"|"n"|"p"|"r" | { kind, justification?, seed? }, justification?, reason? } — technician or admin.
 * 201 with the lot: internal lot number, plan, containers numbered 1..N.
 */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.receiveLots);
	const body = await readJson(event.request);
	const created = await lots.create(actor, lots.lotSchema.parse(body), typeof body.reason === 'string' ? body.reason : undefined);
	return json(created, { status: 201, headers: { location: `/api/v1/lots/${created.id}` } });
});
