import { error } from '@sveltejs/kit';
import { requireUser } from '$lib/server/guard';
import * as versions from '$lib/server/services/model-versions';
import { versionIdFor } from '../version.server';
import type { PageServerLoad } from './$types';

export const load = (async (event) => {
	requireUser(event);
	const id = await versionIdFor(event.params);
	const current = await versions.get(id);
	const against = event.url.searchParams.get('against');
	const otherId = against ? await versionIdFor({ code: event.params.code, version: against }) : current.parentId;
	if (!otherId) error(404, 'This version has no parent; choose a version to compare with');
	const all = await versions.listForMaterial(current.materialId);
	return { diff: await versions.diff(otherId, id), versions: all, current: { version: current.version, code: current.materialCode } };
}) satisfies PageServerLoad;
