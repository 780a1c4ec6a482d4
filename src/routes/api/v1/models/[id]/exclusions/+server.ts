import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as versions from '$lib/server/services/model-versions';
import type { RequestHandler } from './$types';

/** { entryIds, category, reason }: marks training spectra to leave out of the next rebuild. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.buildModels);
	const body = await readJson(event.request);
	return json({ pending: await versions.markExclusion(actor, await versions.resolve(event.params.id), body as never) });
});
