import { can } from '$lib/permissions';
import { error, json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as versions from '$lib/server/services/model-versions';
import * as transfers from '$lib/server/services/transfers';
import type { RequestHandler } from './$types';

/** POST …/transfers/{transferId}/approve|refuse { password, meaning, reason }: QA only, never the person who ran the check. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.approveModels);
	const { decision, transferId } = event.params;
	if (decision !== 'approve' && decision !== 'refuse') error(404, 'Use …/approve or …/refuse');
	if (!/^\d+$/.test(transferId)) error(404, `Transfer check ${transferId} was not found`);
	const body = await readJson(event.request);
	const result = await transfers.decide(actor, Number(transferId), decision === 'approve', { password: String(body.password ?? ''), meaning: String(body.meaning ?? ''), reason: String(body.reason ?? '') }, await versions.resolve(event.params.id));
	return json(result);
});
