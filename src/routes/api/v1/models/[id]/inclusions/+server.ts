import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as versions from '$lib/server/services/model-versions';
import type { RequestHandler } from './$types';

/** { entryIds, reason }: marks excluded spectra to come back in the next rebuild. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.buildModels);
	const body = await readJson(event.request);
	return json({ pending: await versions.markInclusion(actor, await versions.resolve(event.params.id), body as never) });
});
