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
	return json({ tokens: await instruments.listTokens(actor, idOf(event.params.id)) });
});

/** { label } → 201 with `token`: the only time its text is shown; only its hash is stored. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.administer);
	const body = await readJson(event.request);
	return json(await instruments.createToken(actor, idOf(event.params.id), String(body.label ?? '')), { status: 201, headers: { 'cache-control': 'no-store' } });
});
