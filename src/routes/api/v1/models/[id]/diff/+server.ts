import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { apiError, handler, requireActor } from '$lib/server/api';
import * as versions from '$lib/server/services/model-versions';
import type { RequestHandler } from './$types';

/** ?against={otherId}: what changed from the other version to this one. */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, can.readModels);
	const against = event.url.searchParams.get('against');
	if (!against) return apiError(400, 'invalid', 'Name the version to compare with: ?against={id}', 'against');
	return json(await versions.diff(against, event.params.id));
});
