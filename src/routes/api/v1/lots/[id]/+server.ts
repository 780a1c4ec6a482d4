import { ANY_SIGNED_IN } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, requireActor } from '$lib/server/api';
import * as lots from '$lib/server/services/lots';
import type { RequestHandler } from './$types';

/**
 * The lot (by id or internal lot number) with its plan, containers, and every scan with verdict, statistics, model
 * version, fileName and title. Each container carries its `result` (the result policy) and its `scans`, each with
 * `invalidated` (null or { cause, description, proposedBy, approvedBy, at }). `identity` is meets, fails or incomplete;
 * `screening` keeps the finer state (not-screened when no model is approved).
 */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, ANY_SIGNED_IN);
	const lot = await lots.get(event.params.id);
	const identity = lot.identity === 'meets' || lot.identity === 'fails' ? lot.identity : 'incomplete';
	return json({ ...lot, identity, screening: lot.identity ?? 'incomplete' });
});
