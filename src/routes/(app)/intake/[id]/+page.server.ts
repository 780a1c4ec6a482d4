import { requireUser } from '$lib/server/guard';
import * as spectra from '$lib/server/services/spectra';
import type { PageServerLoad } from './$types';

export const load = (async (event) => {
	const actor = requireUser(event, 'technician', 'chemometrician', 'qa', 'admin');
	return { spectrum: await spectra.get(actor, event.params.id) };
}) satisfies PageServerLoad;
