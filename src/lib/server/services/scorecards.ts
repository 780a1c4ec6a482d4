// Supplier scorecard for procurement: lots received, identity pass rate, verdicts by profile, a monthly trend and the
// open alerts. Set-based reads only. A container counts with its worst material verdict over every scan that is not
// invalidated (the result policy of container-results.ts); unusable scans are laboratory or instrument problems and
// never count against the supplier.
import { col, returning, select, z } from '../db/rows';
import * as alerts from './alerts';
import { VALID_VERDICTS } from './lots';
import { ServiceError } from './errors';
import * as suppliers from './suppliers';

export interface MonthPoint {
	month: string;
	received: number;
	meets: number;
	fails: number;
	/** meets / (meets + fails), or null when no lot of that month completed screening. */
	passRate: number | null;
}

/** Periods offered for a scorecard: whole months ending with the current month, or every month since the first lot. */
export const PERIODS = ['6', '12', '24', '60', 'all'] as const;
export type Period = number | 'all';
const MAX_MONTHS = 120;

/**
 * One period for every figure: the tiles, the verdicts by profile and the monthly trend all count the lots received
 * in the same whole months, ending with the current month (never at the supplier's last delivery). `months`: that many
 * months; 'all' (the default): every month since the supplier's first lot, at most 120. Open alerts are as of now.
 */
export async function scorecard(supplierRef: string | number, options: { months?: Period } = {}) {
	const supplier = await suppliers.get(supplierRef);
	const choice = options.months ?? 'all';
	if (choice !== 'all' && !(Number.isInteger(choice) && choice >= 1 && choice <= MAX_MONTHS)) throw new ServiceError(400, 'bad-period', `The period is a whole number of months from 1 to ${MAX_MONTHS}, or all`, 'months');
	const b = await returning(
		z.object({ last: col.text, first: col.text.nullable() }),
		`SELECT to_char(date_trunc('month', current_date), 'YYYY-MM-DD') AS last,
		        to_char(date_trunc('month', min(received_at)), 'YYYY-MM-DD') AS first
		   FROM lots WHERE supplier_id = :id`,
		{ replacements: { id: supplier.id } }
	);
	const index = (ymd: string) => Number(ymd.slice(0, 4)) * 12 + Number(ymd.slice(5, 7)) - 1;
	const ymd = (i: number) => `${Math.floor(i / 12)}-${String((i % 12) + 1).padStart(2, '0')}-01`;
	const last = index(b.last);
	const wanted = choice === 'all' ? last - Math.min(b.first ? index(b.first) : last, last) + 1 : choice;
	const months = Math.min(wanted, MAX_MONTHS);
	const w = { from: ymd(last - months + 1), to: b.last, months, first: b.first?.slice(0, 7) ?? null };
	const window = { id: supplier.id, from: w.from, to: w.to };
	const inPeriod = (alias = '') => `${alias}received_at >= CAST(:from AS date) AND ${alias}received_at < CAST(:to AS date) + interval '1 month'`;
	const totals = await returning(
		z.object({ received: col.count, meets: col.count, fails: col.count, not_screened: col.count, awaiting: col.count, released: col.count, quarantined: col.count, rejected: col.count, containers: col.count }),
		`SELECT count(*) AS received,
		        count(*) FILTER (WHERE identity = 'meets') AS meets,
		        count(*) FILTER (WHERE identity = 'fails') AS fails,
		        count(*) FILTER (WHERE identity = 'not-screened') AS not_screened,
		        count(*) FILTER (WHERE identity IS NULL) AS awaiting,
		        count(*) FILTER (WHERE status = 'released') AS released,
		        count(*) FILTER (WHERE status = 'quarantined') AS quarantined,
		        count(*) FILTER (WHERE status = 'rejected') AS rejected,
		        coalesce(sum(containers), 0) AS containers
		   FROM lots WHERE supplier_id = :id AND ${inPeriod()}`,
		{ replacements: window }
	);
	const verdicts = await select(
		z.object({ verdict: col.text, profile: col.text.nullable(), material: col.text, n: col.count }),
		`WITH counted AS (
		   SELECT DISTINCT ON (sc.lot_id, sc.container) sc.lot_id, sc.verdict, sc.profile
		     FROM scans sc JOIN lots l ON l.id = sc.lot_id
		    WHERE l.supplier_id = :id AND sc.verdict IN (:valid) AND ${inPeriod('l.')}
		      AND NOT EXISTS (SELECT 1 FROM scan_invalidations si WHERE si.scan_id = sc.id AND si.state = 'approved')
		    ORDER BY sc.lot_id, sc.container,
		             array_position(ARRAY['not-this-material','unknown','suspect','genuine']::text[], sc.verdict), sc.id)
		 SELECT c.verdict, c.profile, m.code AS material, count(*) AS n
		   FROM counted c JOIN lots l ON l.id = c.lot_id JOIN materials m ON m.id = l.material_id
		  GROUP BY c.verdict, c.profile, m.code ORDER BY count(*) DESC, c.verdict, c.profile NULLS FIRST`,
		{ replacements: { ...window, valid: VALID_VERDICTS } }
	);
	const trendRows = await select(
		z.object({ month: col.text, received: col.count, meets: col.count, fails: col.count }),
		`SELECT to_char(m.month, 'YYYY-MM') AS month,
		        count(l.id) AS received,
		        count(l.id) FILTER (WHERE l.identity = 'meets') AS meets,
		        count(l.id) FILTER (WHERE l.identity = 'fails') AS fails
		   FROM generate_series(CAST(:from AS date), CAST(:to AS date), interval '1 month') AS m(month)
		   LEFT JOIN lots l ON l.supplier_id = :id AND date_trunc('month', l.received_at) = m.month
		  GROUP BY m.month ORDER BY m.month`,
		{ replacements: window }
	);
	const trend: MonthPoint[] = trendRows.map((r) => {
		const { meets, fails } = r;
		return { month: r.month, received: r.received, meets, fails, passRate: meets + fails ? meets / (meets + fails) : null };
	});
	const { meets, fails } = totals;
	const openAlerts = (await alerts.list({ supplier: supplier.id, state: 'live', sort: 'severity:desc', pageSize: 50 })).rows;
	const alertCounts = await returning(
		z.object({ total: col.count, high: col.count }),
		"SELECT count(*) AS total, count(*) FILTER (WHERE severity = 'high') AS high FROM alerts WHERE supplier_id = :id",
		{ replacements: { id: supplier.id } }
	);
	return {
		supplier: suppliers.toPublic(supplier),
		/** The months every figure below counts (alerts: as of now). */
		period: { choice: String(choice), from: w.from.slice(0, 7), to: w.to.slice(0, 7), months: w.months, firstLot: w.first },
		lots: {
			received: totals.received,
			containers: totals.containers,
			meets,
			fails,
			notScreened: totals.not_screened,
			awaiting: totals.awaiting,
			released: totals.released,
			quarantined: totals.quarantined,
			rejected: totals.rejected
		},
		/** Share of lots that completed screening and met identity. */
		passRate: meets + fails ? meets / (meets + fails) : null,
		verdicts: verdicts.map((v) => ({ verdict: v.verdict, profile: v.profile, material: v.material, count: v.n })),
		trend,
		alerts: { open: openAlerts, total: alertCounts.total, high: alertCounts.high }
	};
}
export type Scorecard = Awaited<ReturnType<typeof scorecard>>;
