// Supplier scorecard for procurement: lots received, identity pass rate, verdicts by profile, a monthly trend and the
// open alerts. Set-based reads only. A container counts with its worst material verdict over every scan that is not
// invalidated (the result policy of container-results.ts); unusable scans are laboratory or instrument problems and
// never count against the supplier.
import { QueryTypes } from 'sequelize';
import { sequelize } from '../db';
import * as alerts from './alerts';
import { VALID_VERDICTS } from './lots';
import * as suppliers from './suppliers';

export interface MonthPoint {
	month: string;
	received: number;
	meets: number;
	fails: number;
	/** meets / (meets + fails), or null when no lot of that month completed screening. */
	passRate: number | null;
}

/** The trend covers the `months` months up to the supplier's latest delivery (or this month without any). */
export async function scorecard(supplierRef: string | number, options: { months?: number } = {}) {
	const supplier = await suppliers.get(supplierRef);
	const months = Math.min(Math.max(options.months ?? 12, 1), 60);
	const [totals] = await sequelize().query<{ received: string; meets: string; fails: string; not_screened: string; awaiting: string; released: string; quarantined: string; rejected: string; containers: string }>(
		`SELECT count(*) AS received,
		        count(*) FILTER (WHERE identity = 'meets') AS meets,
		        count(*) FILTER (WHERE identity = 'fails') AS fails,
		        count(*) FILTER (WHERE identity = 'not-screened') AS not_screened,
		        count(*) FILTER (WHERE identity IS NULL) AS awaiting,
		        count(*) FILTER (WHERE status = 'released') AS released,
		        count(*) FILTER (WHERE status = 'quarantined') AS quarantined,
		        count(*) FILTER (WHERE status = 'rejected') AS rejected,
		        coalesce(sum(containers), 0) AS containers
		   FROM lots WHERE supplier_id = :id`,
		{ replacements: { id: supplier.id }, type: QueryTypes.SELECT }
	);
	const verdicts = await sequelize().query<{ verdict: string; profile: string | null; material: string; n: string }>(
		`WITH counted AS (
		   SELECT DISTINCT ON (sc.lot_id, sc.container) sc.lot_id, sc.verdict, sc.profile
		     FROM scans sc JOIN lots l ON l.id = sc.lot_id
		    WHERE l.supplier_id = :id AND sc.verdict IN (:valid)
		      AND NOT EXISTS (SELECT 1 FROM scan_invalidations si WHERE si.scan_id = sc.id AND si.state = 'approved')
		    ORDER BY sc.lot_id, sc.container,
		             array_position(ARRAY['not-this-material','unknown','suspect','genuine']::text[], sc.verdict), sc.id)
		 SELECT c.verdict, c.profile, m.code AS material, count(*) AS n
		   FROM counted c JOIN lots l ON l.id = c.lot_id JOIN materials m ON m.id = l.material_id
		  GROUP BY c.verdict, c.profile, m.code ORDER BY count(*) DESC, c.verdict, c.profile NULLS FIRST`,
		{ replacements: { id: supplier.id, valid: VALID_VERDICTS }, type: QueryTypes.SELECT }
	);
	const trendRows = await sequelize().query<{ month: string; received: string; meets: string; fails: string }>(
		`SELECT to_char(m.month, 'YYYY-MM') AS month,
		        count(l.id) AS received,
		        count(l.id) FILTER (WHERE l.identity = 'meets') AS meets,
		        count(l.id) FILTER (WHERE l.identity = 'fails') AS fails
		   FROM (SELECT date_trunc('month', coalesce((SELECT max(received_at) FROM lots WHERE supplier_id = :id), current_date)) AS last) w,
		        generate_series(w.last - make_interval(months => :back), w.last, interval '1 month') AS m(month)
		   LEFT JOIN lots l ON l.supplier_id = :id AND date_trunc('month', l.received_at) = m.month
		  GROUP BY m.month ORDER BY m.month`,
		{ replacements: { id: supplier.id, back: months - 1 }, type: QueryTypes.SELECT }
	);
	const trend: MonthPoint[] = trendRows.map((r) => {
		const meets = Number(r.meets);
		const fails = Number(r.fails);
		return { month: r.month, received: Number(r.received), meets, fails, passRate: meets + fails ? meets / (meets + fails) : null };
	});
	const meets = Number(totals.meets);
	const fails = Number(totals.fails);
	const openAlerts = (await alerts.list({ supplier: supplier.id, state: 'live', sort: 'severity:desc', pageSize: 50 })).rows;
	const [alertCounts] = await sequelize().query<{ total: string; high: string }>(
		"SELECT count(*) AS total, count(*) FILTER (WHERE severity = 'high') AS high FROM alerts WHERE supplier_id = :id",
		{ replacements: { id: supplier.id }, type: QueryTypes.SELECT }
	);
	return {
		supplier: suppliers.toPublic(supplier),
		lots: {
			received: Number(totals.received),
			containers: Number(totals.containers),
			meets,
			fails,
			notScreened: Number(totals.not_screened),
			awaiting: Number(totals.awaiting),
			released: Number(totals.released),
			quarantined: Number(totals.quarantined),
			rejected: Number(totals.rejected)
		},
		/** Share of lots that completed screening and met identity. */
		passRate: meets + fails ? meets / (meets + fails) : null,
		verdicts: verdicts.map((v) => ({ verdict: v.verdict, profile: v.profile, material: v.material, count: Number(v.n) })),
		trend,
		alerts: { open: openAlerts, total: Number(alertCounts.total), high: Number(alertCounts.high) }
	};
}
export type Scorecard = Awaited<ReturnType<typeof scorecard>>;
