import { json } from '@sveltejs/kit';
import { handler, requireActor } from '$lib/server/api';
import * as lots from '$lib/server/services/lots';
import type { RequestHandler } from './$types';

/** The lot (by id or internal lot number) with its plan, containers, and every scan with verdict, statistics, model version, fileName and title. */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, 'technician', 'chemometrician', 'qa', 'procurement', 'admin');
	return json(await lots.get(event.params.id));
});
