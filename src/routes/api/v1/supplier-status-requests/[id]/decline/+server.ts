import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as supplierStatus from '$lib/server/services/supplier-status';
import type { RequestHandler } from './$types';

/** { note } — QA declines the requested status change. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.cosignSupplierStatus);
	const body = await readJson(event.request);
	return json({ request: await supplierStatus.decline(actor, Number(event.params.id), String(body.note ?? '')) });
});
