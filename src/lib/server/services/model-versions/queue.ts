// Model versions: home-page queue items for chemometricians and QA.
import { QueryTypes } from 'sequelize';
import { sequelize } from '../../db';
import { type Actor } from '../actor';

export async function draftsAwaiting(kind: 'chemometrician' | 'qa', actor: Actor) {
	const rows = await sequelize().query<{ id: number; version: number; code: string; state: string; built_by: number; created_at: Date; name: string }>(
		`SELECT v.id, v.version, m.code, v.state, v.built_by, v.created_at, u.name FROM model_versions v
		   JOIN materials m ON m.id = v.material_id JOIN users u ON u.id = v.built_by
		  WHERE ${kind === 'qa' ? "v.state = 'draft' AND v.built_by <> :actorId" : "v.state IN ('building','failed','draft') AND v.built_by = :actorId"}
		  ORDER BY v.created_at DESC LIMIT 20`,
		{ replacements: { actorId: actor.id ?? 0 }, type: QueryTypes.SELECT }
	);
	return rows;
}

/** Home-page queue items: a chemometrician's open builds and drafts, or the drafts a QA user may approve. */
export async function queueItems(kind: 'chemometrician' | 'qa', actor: Actor) {
	const rows = await draftsAwaiting(kind, actor);
	return rows.map((r) => ({
		href: `/materials/${r.code}/versions/${r.version}${kind === 'qa' ? '/approve' : ''}`,
		label: `${r.code} v${r.version}`,
		detail: kind === 'qa' ? `draft built by ${r.name}, ${new Date(r.created_at).toISOString().slice(0, 10)}` : r.state
	}));
}
