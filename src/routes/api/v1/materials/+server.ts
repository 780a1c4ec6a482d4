import { ANY_SIGNED_IN, can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as materials from '$lib/server/services/materials';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, ANY_SIGNED_IN);
	return json({ rows: await materials.list() });
});

/** { code, name, technique, samplingPolicy?, samplingJustification?, recipients?, reason? } — chemometrician or admin. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.manageMaterials);
	const body = await readJson(event.request);
	const created = await materials.create(actor, materials.materialSchema.parse(body), typeof body.reason === 'string' ? body.reason : undefined);
	return json(created, { status: 201 });
});
