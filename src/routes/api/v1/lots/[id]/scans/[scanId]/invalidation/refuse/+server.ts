import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as invalidations from '$lib/server/services/invalidations';
import type { RequestHandler } from './$types';

/** { password, meaning, reason } — a QA user who did not propose it refuses the proposed invalidation with a signature. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.decideInvalidation);
	const body = await readJson(event.request);
	const out = await invalidations.refuse(actor, event.params.id, event.params.scanId, {
		password: String(body.password ?? ''),
		meaning: String(body.meaning ?? ''),
		reason: String(body.reason ?? '')
	});
	return json({ state: out.invalidation.state, invalidation: out.invalidation, manifestation: out.manifestation, lot: { status: out.status.status, identity: out.status.identity ?? 'incomplete' } });
});
