import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, requireActor } from '$lib/server/api';
import { notFound } from '$lib/server/services/errors';
import * as instruments from '$lib/server/services/instruments';
import type { RequestHandler } from './$types';

/** Revokes the token (kept, with its revocation time, for the record); ?reason= goes into the audit trail. */
export const DELETE: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.administer);
	const tokenId = Number(event.params.tokenId);
	const instrumentId = Number(event.params.id);
	const tokens = Number.isInteger(tokenId) ? await instruments.listTokens(actor, instrumentId) : [];
	if (!tokens.some((t) => t.id === tokenId)) throw notFound(`Token ${event.params.tokenId} of instrument ${event.params.id}`);
	return json(await instruments.revokeToken(actor, tokenId, event.url.searchParams.get('reason') ?? undefined));
});
