import { json } from '@sveltejs/kit';
import { handler, requireActor } from '$lib/server/api';
import * as scorecards from '$lib/server/services/scorecards';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = handler(async (event) => {
	requireActor(event);
	return json(await scorecards.scorecard(event.params.code, { months: Number(event.url.searchParams.get('months') ?? 12) || 12 }));
});
