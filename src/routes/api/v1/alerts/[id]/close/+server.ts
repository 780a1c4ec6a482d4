import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as alerts from '$lib/server/services/alerts';
import type { RequestHandler } from './$types';

/** { note } — procurement (or an admin). */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.handleAlerts);
	const body = await readJson(event.request);
	return json({ alert: await alerts.close(actor, Number(event.params.id), String(body.note ?? '')) });
});
