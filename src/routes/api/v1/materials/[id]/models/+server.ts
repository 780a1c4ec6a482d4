import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as materials from '$lib/server/services/materials';
import * as versions from '$lib/server/services/model-versions';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, can.readModels);
	const material = await materials.get(event.params.id);
	return json({ rows: await versions.listForMaterial(material.id) });
});

/**
 * Build parameters, as `lotgate build`: { recipe, components, familyComponents, alpha, familyAlpha, gamma, limits, folds,
 * groupBy, speLimit, genuine, note }. The build starts from the material's current version with its exclusions;
 * `reinclude: [{ entryId, reason }]` brings excluded spectra back, each with its reason. Queues a job and answers
 * 201 { id, jobId }; poll GET /api/v1/models/{id}.
 */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.buildModels);
	const { reinclude, ...body } = ((await readJson(event.request)) ?? {}) as Record<string, unknown>;
	const created = await versions.createBuild(actor, event.params.id, body, { reinclude: reinclude as never });
	return json(created, { status: 201 });
});
