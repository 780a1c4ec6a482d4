import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as dispositions from '$lib/server/services/dispositions';
import type { RequestHandler } from './$types';

/** { password, meaning, reason, lotId? } — the second QA signature of a release despite failed identity; never the first
 * signer. With `lotId` the signature is refused (409 wrong-lot) unless the disposition belongs to that lot. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.signDispositions);
	const body = await readJson(event.request);
	const result = await dispositions.cosign(actor, Number(event.params.id), {
		password: String(body.password ?? ''),
		meaning: String(body.meaning ?? ''),
		reason: String(body.reason ?? '')
	}, body.lotId === undefined ? undefined : Number(body.lotId));
	return json({ ...result.manifestation, manifestation: result.manifestation, disposition: result.disposition, message: result.message }, { status: 201 });
});
