import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import { notFound } from '$lib/server/services/errors';
import * as instruments from '$lib/server/services/instruments';
import type { RequestHandler } from './$types';

const idOf = (text: string) => {
	const id = Number(text);
	if (!Number.isInteger(id) || id < 1) throw notFound(`Instrument ${text}`);
	return id;
};

export const GET: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.administer);
	const instrument = await instruments.get(idOf(event.params.id));
	return json({ ...instrument, tokens: await instruments.listTokens(actor, instrument.id) });
});

/** Any of { technique, serial, axisUnit, qualificationDue, active }, with an optional reason for the audit trail. */
export const PATCH: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.administer);
	const { reason, ...changes } = await readJson(event.request);
	return json(await instruments.update(actor, idOf(event.params.id), changes as instruments.InstrumentUpdate, typeof reason === 'string' ? reason : undefined));
});
