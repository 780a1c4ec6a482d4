import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as supplierStatus from '$lib/server/services/supplier-status';
import * as suppliers from '$lib/server/services/suppliers';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = handler(async (event) => {
	requireActor(event);
	const supplier = await suppliers.get(event.params.code);
	return json({ requests: await supplierStatus.forSupplier(supplier.id) });
});

/** { status: "qualified"|"on-watch"|"blocked", reason } — procurement; applied when QA co-signs. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.requestSupplierStatus);
	const body = await readJson(event.request);
	const request = await supplierStatus.request(actor, event.params.code, { status: String(body.status ?? '') as 'qualified', reason: String(body.reason ?? '') });
	return json({ request }, { status: 201 });
});
