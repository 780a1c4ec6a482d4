import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as instruments from '$lib/server/services/instruments';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, can.administer);
	const today = instruments.today();
	return json({ instruments: (await instruments.list()).map((i) => ({ ...i, qualified: i.active && i.qualificationDue >= today })) });
});

/** { name, technique, serial, axisUnit, qualificationDue (YYYY-MM-DD), reason? } */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.administer);
	const body = await readJson(event.request);
	const reason = typeof body.reason === 'string' ? body.reason : undefined;
	return json(await instruments.create(actor, body as instruments.InstrumentInput, reason), { status: 201 });
});
