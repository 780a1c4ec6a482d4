// Lots: the filtered, sorted, paged list and the home queues.
import { QueryTypes } from 'sequelize';
import { sequelize } from '../../db';
import { invalid } from '../errors';
import { type LotStatus, LOT_STATUSES, type Identity, VALID_VERDICTS, isoDate } from './schema';

export interface LotQuery {
	status?: string;
	material?: string | number;
	supplier?: string | number;
	from?: string;
	to?: string;
	q?: string;
	sort?: string;
	page?: number;
	pageSize?: number;
}

const SORTS: Record<string, string> = {
	internalLot: 'l.internal_lot',
	receivedAt: 'l.received_at',
	material: 'm.code',
	supplier: 's.code',
	status: 'l.status',
	identity: 'l.identity',
	containers: 'l.containers',
	createdAt: 'l.created_at'
};

export interface LotListRow {
	id: number;
	internalLot: string;
	material: { id: number; code: string; name: string };
	supplier: { id: number; code: string; name: string; status: string };
	supplierLot: string;
	containers: number;
	sampledCount: number;
	screenedCount: number;
	status: LotStatus;
	identity: Identity;
	supplierFlag: string | null;
	receivedAt: string;
	createdAt: string;
}

export async function list(query: LotQuery = {}) {
	const where: string[] = [];
	const replacements: Record<string, unknown> = {};
	if (query.status) {
		const statuses = String(query.status).split(',').filter((s) => (LOT_STATUSES as string[]).includes(s));
		if (!statuses.length) throw invalid(`Status is one of ${LOT_STATUSES.join(', ')}`, 'status');
		where.push('l.status IN (:statuses)');
		replacements.statuses = statuses;
	}
	if (query.material != null && query.material !== '') {
		const byId = /^\d+$/.test(String(query.material));
		where.push(byId ? 'm.id = :material' : 'm.code = upper(:material)');
		replacements.material = byId ? Number(query.material) : String(query.material);
	}
	if (query.supplier != null && query.supplier !== '') {
		const byId = /^\d+$/.test(String(query.supplier));
		where.push(byId ? 's.id = :supplier' : 's.code = upper(:supplier)');
		replacements.supplier = byId ? Number(query.supplier) : String(query.supplier);
	}
	for (const [key, op] of [['from', '>='], ['to', '<=']] as const) {
		const v = query[key];
		if (!v) continue;
		if (!isoDate.safeParse(v).success) throw invalid(`${key} must be a date, YYYY-MM-DD`, key);
		where.push(`l.received_at ${op} :${key}`);
		replacements[key] = v;
	}
	if (query.q) {
		where.push('(l.internal_lot ILIKE :q OR l.supplier_lot ILIKE :q)');
		replacements.q = `%${query.q}%`;
	}
	const [column, direction] = (query.sort ?? 'receivedAt:desc').split(':');
	const order = `${SORTS[column] ?? 'l.received_at'} ${direction === 'desc' ? 'DESC' : 'ASC'}, l.id DESC`;
	const pageSize = Math.min(Math.max(Number(query.pageSize) || 25, 1), 200);
	const page = Math.max(Number(query.page) || 1, 1);
	const whereSql = where.length ? `WHERE ${where.join(' AND ')}` : '';
	const rows = await sequelize().query<Record<string, unknown>>(
		`SELECT l.id, l.internal_lot, l.supplier_lot, l.containers, cardinality(l.sampled) AS sampled_count, l.status, l.identity, l.supplier_flag,
		        to_char(l.received_at, 'YYYY-MM-DD') AS received_at, l.created_at,
		        m.id AS material_id, m.code AS material_code, m.name AS material_name,
		        s.id AS supplier_id, s.code AS supplier_code, s.name AS supplier_name, s.status AS supplier_status,
		        (SELECT count(DISTINCT sc.container) FROM scans sc WHERE sc.lot_id = l.id AND sc.verdict IN (:valid)) AS screened_count,
		        count(*) OVER () AS total
		   FROM lots l JOIN materials m ON m.id = l.material_id JOIN suppliers s ON s.id = l.supplier_id
		   ${whereSql}
		  ORDER BY ${order} LIMIT :limit OFFSET :offset`,
		{ replacements: { ...replacements, valid: VALID_VERDICTS, limit: pageSize, offset: (page - 1) * pageSize }, type: QueryTypes.SELECT }
	);
	let total = rows.length ? Number(rows[0].total) : 0;
	if (!rows.length && page > 1) {
		const [c] = await sequelize().query<{ n: string }>(`SELECT count(*) AS n FROM lots l JOIN materials m ON m.id = l.material_id JOIN suppliers s ON s.id = l.supplier_id ${whereSql}`, {
			replacements,
			type: QueryTypes.SELECT
		});
		total = Number(c.n);
	}
	const out: LotListRow[] = rows.map((r) => ({
		id: Number(r.id),
		internalLot: r.internal_lot as string,
		material: { id: Number(r.material_id), code: r.material_code as string, name: r.material_name as string },
		supplier: { id: Number(r.supplier_id), code: r.supplier_code as string, name: r.supplier_name as string, status: r.supplier_status as string },
		supplierLot: r.supplier_lot as string,
		containers: Number(r.containers),
		sampledCount: Number(r.sampled_count),
		screenedCount: Number(r.screened_count),
		status: r.status as LotStatus,
		identity: (r.identity as Identity) ?? null,
		supplierFlag: (r.supplier_flag as string | null) ?? null,
		receivedAt: r.received_at as string,
		createdAt: new Date(r.created_at as Date).toISOString()
	}));
	return { rows: out, total, page, pageSize, sort: `${column in SORTS ? column : 'receivedAt'}${direction === 'desc' ? ':desc' : ''}` };
}

/** Home queues: lots waiting for scans (technicians) and screened lots waiting for a disposition (QA). */
export async function awaiting(status: 'awaiting-scans' | 'screened', limit = 20) {
	return (await list({ status, sort: 'receivedAt:asc', pageSize: limit })).rows;
}
