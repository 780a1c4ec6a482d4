import { can } from '$lib/permissions';
import { toCsv } from '$lib/csv';
import { auditQueryFrom } from '$lib/server/audit-query';
import { requireUser } from '$lib/server/guard';
import * as audit from '$lib/server/services/audit';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async (event) => {
	requireUser(event, can.exportAudit);
	const query = auditQueryFrom(event.url);
	const rows: Record<string, unknown>[] = [];
	for (let page = 1; ; page++) {
		const batch = await audit.list({ ...query, page, pageSize: 5000 });
		for (const r of batch.rows) {
			rows.push({
				id: r.id,
				at: new Date(r.at).toISOString(),
				actor: r.actorLabel,
				action: r.action,
				entity: r.entity,
				entityId: r.entityId,
				reason: r.reason,
				before: r.before == null ? '' : JSON.stringify(r.before),
				after: r.after == null ? '' : JSON.stringify(r.after),
				hash: r.hash
			});
		}
		if (page * batch.pageSize >= batch.total) break;
	}
	const csv = toCsv(rows, ['id', 'at', 'actor', 'action', 'entity', 'entityId', 'reason', 'before', 'after', 'hash']);
	return new Response(csv, {
		headers: { 'content-type': 'text/csv; charset=utf-8', 'content-disposition': `attachment; filename="lotgate-audit-${new Date().toISOString().slice(0, 10)}.csv"` }
	});
};
