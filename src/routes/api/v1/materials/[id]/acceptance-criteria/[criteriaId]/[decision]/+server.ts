import { can } from '$lib/permissions';
import { error, json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as acceptance from '$lib/server/services/acceptance';
import type { RequestHandler } from './$types';

/** QA approves or refuses proposed criteria: POST …/{criteriaId}/approve | …/refuse with { password, meaning, reason }. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.approveModels);
	const { decision, criteriaId } = event.params;
	if (decision !== 'approve' && decision !== 'refuse') error(404, 'Use …/approve or …/refuse');
	if (!/^\d+$/.test(criteriaId)) error(404, 'Unknown acceptance criteria');
	const body = await readJson(event.request);
	return json(await acceptance.decide(actor, event.params.id, Number(criteriaId), decision === 'approve', body as never));
});
