import { json } from '@sveltejs/kit';
import { handler, requireActor } from '$lib/server/api';
import * as scorecards from '$lib/server/services/scorecards';
import { z } from 'zod';
import { pageSizeParam, parseQuery } from '$lib/server/query';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = handler(async (event) => {
	requireActor(event);
	const { months } = parseQuery(event.url, z.object({ months: pageSizeParam(120) }));
	return json(await scorecards.scorecard(event.params.code, { months: months ?? 12 }));
});
