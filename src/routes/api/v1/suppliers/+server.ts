import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as suppliers from '$lib/server/services/suppliers';
import { z } from 'zod';
import { pageParam, parseQuery } from '$lib/server/query';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = handler(async (event) => {
	requireActor(event);
	const q = event.url.searchParams;
	const { page } = parseQuery(event.url, z.object({ page: pageParam }).passthrough());
	return json(await suppliers.list({ q: q.get('q') ?? undefined, status: q.get('status') ?? undefined, page: page ?? 1, sort: q.get('sort') ?? undefined }));
});

export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.manageSuppliers);
	const body = await readJson(event.request);
	const created = await suppliers.create(actor, suppliers.supplierSchema.parse(body), typeof body.reason === 'string' ? body.reason : undefined);
	return json(created, { status: 201 });
});
