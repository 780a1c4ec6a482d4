import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, requireActor } from '$lib/server/api';
import * as spectra from '$lib/server/services/spectra';
import type { RequestHandler } from './$types';

/** Metadata, axis and values of one stored spectrum (gaps as null). */
export const GET: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.readSpectra);
	return json(await spectra.get(actor, event.params.id));
});
