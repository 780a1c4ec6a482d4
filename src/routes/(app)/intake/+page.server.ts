import { can } from '$lib/permissions';
import { requireUser } from '$lib/server/guard';
import { hasRole } from '$lib/server/services/actor';
import * as instruments from '$lib/server/services/instruments';
import * as spectra from '$lib/server/services/spectra';
import { MB, maxBatchFiles, maxFileBytes } from '$lib/server/upload-limits';
import type { PageServerLoad } from './$types';

export const load = (async (event) => {
	const actor = requireUser(event, can.readSpectra);
	const q = event.url.searchParams;
	const today = instruments.today();
	const list = await spectra.list(actor, {
		page: Number(q.get('page') ?? 1) || 1,
		pageSize: 25,
		sort: q.get('sort') ?? 'created:desc',
		q: q.get('q') ?? undefined
	});
	return {
		canUpload: hasRole(actor, can.uploadSpectra),
		instruments: (await instruments.list())
			.filter((i) => i.active)
			.map((i) => ({ id: i.id, name: i.name, technique: i.technique, qualificationDue: i.qualificationDue, qualified: i.qualificationDue >= today })),
		limits: { fileMb: maxFileBytes() / MB, files: maxBatchFiles() },
		list,
		q: q.get('q') ?? ''
	};
}) satisfies PageServerLoad;
