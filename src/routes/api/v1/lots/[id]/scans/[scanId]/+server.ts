import { ANY_SIGNED_IN } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, requireActor } from '$lib/server/api';
import { notFound } from '$lib/server/services/errors';
import * as scans from '$lib/server/services/scans';
import type { RequestHandler } from './$types';

/** One scan with its stored spectrum and the per-variable T² and SPE contributions of every model. */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, ANY_SIGNED_IN);
	const scanId = Number(event.params.scanId);
	if (!Number.isInteger(scanId) || scanId < 1) throw notFound(`Scan ${event.params.scanId}`);
	return json(await scans.detail(event.params.id, scanId));
});
