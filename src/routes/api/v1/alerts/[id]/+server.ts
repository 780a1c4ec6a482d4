import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, requireActor } from '$lib/server/api';
import * as alerts from '$lib/server/services/alerts';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, can.readAlerts);
	return json({ alert: await alerts.get(Number(event.params.id)) });
});
