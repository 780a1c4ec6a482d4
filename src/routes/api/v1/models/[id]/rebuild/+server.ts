import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as versions from '$lib/server/services/model-versions';
import type { RequestHandler } from './$types';

/** { ...changed build parameters, note? }: a new draft with this version as parent; 201 { id, jobId }. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.buildModels);
	const body = await readJson(event.request);
	const { note, ...changes } = body;
	return json(await versions.rebuild(actor, await versions.resolve(event.params.id), changes as never, { note: typeof note === 'string' ? note : undefined }), { status: 201 });
});
