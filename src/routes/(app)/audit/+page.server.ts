import { can } from '$lib/permissions';
import { auditQueryFrom } from '$lib/server/audit-query';
import { requireUser } from '$lib/server/guard';
import * as audit from '$lib/server/services/audit';
import type { PageServerLoad } from './$types';

export const load = (async (event) => {
	requireUser(event, can.readAudit);
	const query = auditQueryFrom(event.url);
	const result = await audit.list({ ...query, pageSize: 50 });
	return {
		filters: query.raw,
		entities: await audit.entities(),
		result: { ...result, rows: result.rows.map((r) => ({ ...r, at: new Date(r.at).toISOString() })) }
	};
}) satisfies PageServerLoad;
