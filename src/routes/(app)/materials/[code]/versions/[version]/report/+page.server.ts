import { requireUser } from '$lib/server/guard';
import * as versions from '$lib/server/services/model-versions';
import { versionIdFor } from '../version.server';
import type { PageServerLoad } from './$types';

export const load = (async (event) => {
	requireUser(event);
	return { version: await versions.get(await versionIdFor(event.params)) };
}) satisfies PageServerLoad;
