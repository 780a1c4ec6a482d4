import { ANY_SIGNED_IN } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, requireActor } from '$lib/server/api';
import * as library from '$lib/server/services/library';
import * as materials from '$lib/server/services/materials';
import * as versions from '$lib/server/services/model-versions';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, ANY_SIGNED_IN);
	const material = await materials.get(event.params.id);
	const [classes, librarySummary, modelVersions] = await Promise.all([materials.classes(material.id), library.summary(material.id), versions.listForMaterial(material.id)]);
	return json({ ...materials.toPublic(material), classes, library: librarySummary, versions: modelVersions });
});
