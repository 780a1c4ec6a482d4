import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as versions from '$lib/server/services/model-versions';
import * as transfers from '$lib/server/services/transfers';
import type { RequestHandler } from './$types';

/** The version's home instruments, the instruments it is approved for, and its transfer checks. */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, can.readModels);
	return json(await transfers.forVersion(await versions.resolve(event.params.id)));
});

/** { instrument: id or name, note }: runs a transfer check (chemometrician); 201 with its state and evaluation. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.buildModels);
	const body = await readJson(event.request);
	const result = await transfers.check(actor, await versions.resolve(event.params.id), { instrument: body.instrument as string | number, note: String(body.note ?? '') });
	return json(result, { status: 201 });
});
