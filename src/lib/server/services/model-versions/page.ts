// Model versions: everything the version page shows, in one call.
import * as library from '../library';
import { row, toPublic, listForMaterial, memberships } from './read';

/** Everything the version page shows, in one call (the page's server load times this). */
export async function pageData(versionId: number) {
	const r = await row(versionId);
	const [version, members, entries, versions] = await Promise.all([
		toPublic(r),
		memberships(versionId),
		library.entriesOf(r.material_id, ['training', 'test', 'challenge']),
		listForMaterial(r.material_id)
	]);
	const memberOf = new Map(members.map((m) => [m.entryId, m]));
	const rows = entries.map((e) => ({ ...e, membership: memberOf.get(e.id) ?? null }));
	return { version, rows, meta: library.plotMeta(entries), artefact: r.artefact, projections: r.figures?.projections ?? {}, overview: r.figures?.overview ?? null, versions };
}
