import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as supplierStatus from '$lib/server/services/supplier-status';
import type { RequestHandler } from './$types';

/** { password, meaning, reason } — the QA co-signature that applies the requested status. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.cosignSupplierStatus);
	const body = await readJson(event.request);
	const request = await supplierStatus.approve(actor, Number(event.params.id), { password: String(body.password ?? ''), meaning: String(body.meaning ?? ''), reason: String(body.reason ?? '') });
	return json({ request });
});
