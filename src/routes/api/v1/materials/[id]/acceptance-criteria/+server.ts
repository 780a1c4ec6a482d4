import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as acceptance from '$lib/server/services/acceptance';
import * as materials from '$lib/server/services/materials';
import type { RequestHandler } from './$types';

/** The material's criteria: the one that applies now, and every revision with its state. */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, can.readModels);
	const material = await materials.get(event.params.id);
	return json({ effective: await acceptance.effective(material.id), revisions: await acceptance.list(material.id) });
});

/** A chemometrician proposes a revision: { genuineTestMin?, …, reviewMonths?, reason }. Answers 201 { id, revision, criteria, state }. */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.buildModels);
	const body = await readJson(event.request);
	return json(await acceptance.propose(actor, event.params.id, body as never), { status: 201 });
});
