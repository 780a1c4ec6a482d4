import { json } from '@sveltejs/kit';
import { handler, requireActor } from '$lib/server/api';
import * as dispositions from '$lib/server/services/dispositions';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = handler(async (event) => {
	requireActor(event);
	return json({ disposition: await dispositions.get(Number(event.params.id)) });
});
