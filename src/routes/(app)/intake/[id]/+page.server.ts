import { can } from '$lib/permissions';
import { requireUser } from '$lib/server/guard';
import * as spectra from '$lib/server/services/spectra';
import type { PageServerLoad } from './$types';

export const load = (async (event) => {
	const actor = requireUser(event, can.readSpectra);
	return { spectrum: await spectra.get(actor, event.params.id) };
}) satisfies PageServerLoad;
