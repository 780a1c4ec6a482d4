import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as dispositions from '$lib/server/services/dispositions';
import type { RequestHandler } from './$types';

/** Every disposition of the lot, newest first (superseded ones included). */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event);
	return json({ dispositions: await dispositions.forLot(event.params.id) });
});

/**
 * { decision: "release"|"quarantine"|"reject", password, meaning, reason } — QA only. 201 with the signature
 * manifestation when the decision takes effect; 202 when a release of a failed lot now waits for a second signature.
 */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.signDispositions);
	const body = await readJson(event.request);
	const result = await dispositions.dispose(actor, event.params.id, {
		decision: String(body.decision ?? '') as dispositions.Decision,
		password: String(body.password ?? ''),
		meaning: String(body.meaning ?? ''),
		reason: String(body.reason ?? '')
	});
	const pending = result.disposition.state === 'awaiting-second-signature';
	return json({ ...result.manifestation, manifestation: result.manifestation, disposition: result.disposition, message: result.message }, { status: pending ? 202 : 201 });
});
