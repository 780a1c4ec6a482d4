import { ANY_SIGNED_IN, can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as materials from '$lib/server/services/materials';
import type { RequestHandler } from './$types';

/** The material's declared measurement axis, or null before its first library upload. */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, ANY_SIGNED_IN);
	const material = await materials.get(event.params.id);
	return json({ axis: material.axis });
});

/** { unit, from, to, step?, reason } — chemometrician or admin; the reason is required and audited. */
export const PUT: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.manageMaterials);
	const material = await materials.get(event.params.id);
	const body = await readJson(event.request);
	const { reason, ...axis } = body as Record<string, unknown>;
	return json(await materials.setAxis(actor, material.id, axis as materials.AxisInput, typeof reason === 'string' ? reason : ''));
});
