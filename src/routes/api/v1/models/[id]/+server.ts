import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, requireActor } from '$lib/server/api';
import * as versions from '$lib/server/services/model-versions';
import type { RequestHandler } from './$types';

/** State, progress, figures, validation and errors of one version ({id}: a version id, or a material code for its approved/latest version). */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, can.readModels);
	return json(await versions.get(event.params.id));
});
