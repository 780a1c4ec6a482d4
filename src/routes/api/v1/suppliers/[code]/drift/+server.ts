import { json } from '@sveltejs/kit';
import { can } from '$lib/permissions';
import { handler, requireActor } from '$lib/server/api';
import * as drift from '$lib/server/services/drift';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, can.read);
	return json(await drift.apiChart(event.params.code, event.url.searchParams.get('material')));
});
