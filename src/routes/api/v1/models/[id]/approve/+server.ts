import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as versions from '$lib/server/services/model-versions';
import type { RequestHandler } from './$types';

/** { password, meaning: "approved for screening", reason } — QA only, never the version's builder. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.approveModels);
	const body = await readJson(event.request);
	const result = await versions.approve(actor, event.params.id, { password: String(body.password ?? ''), meaning: String(body.meaning ?? '') as typeof versions.APPROVAL_MEANING, reason: String(body.reason ?? '') });
	return json({ ...result, version: await versions.get(event.params.id) });
});
