import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as invalidations from '$lib/server/services/invalidations';
import type { RequestHandler } from './$types';

/**
 * { cause: "sample-presentation|instrument-fault|wrong-container|data-transfer|other", description } — a technician,
 * chemometrician or admin proposes invalidating this scan's result. 201 { id, state: "proposed", … }.
 */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.proposeInvalidation);
	const body = await readJson(event.request);
	const v = await invalidations.propose(actor, event.params.id, event.params.scanId, {
		cause: body.cause as invalidations.InvalidationCause,
		description: body.description as string
	});
	return json({ ...v, id: v.id, state: v.state }, { status: 201 });
});
