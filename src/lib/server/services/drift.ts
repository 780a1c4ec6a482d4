// Supplier drift: per supplier and material, a lot statistic on an individuals chart against the supplier's own
// history of accepted lots (pure computation in $lib/analysis/drift.ts; docs/methods.md §16).
//
// Lot statistic: the mean, over the lot's counted scans (every valid, non-invalidated scan) that carry the genuine
// class model's distances, of c/c_crit of that genuine class model; the mean h/h₀ and v/v₀ are kept beside it as
// evidence of which distance moves. A lot enters the chart once its screening is complete.
//
// A lot that breaks a rule raises a drift signal when its screening completes (called from the scan workflow, inside
// its transaction): a drift_signals row, an alert of kind 'drift' (apart from verdict alerts), and an e-mail to
// procurement and the chemometricians through the outbox. A drift signal never blocks a release.
import { LRUCache } from 'lru-cache';
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { driftSeries, type IndividualsLimits, type RuleHit } from '../../analysis';
import { sequelize, transaction } from '../db';
import { col, returning, select, selectOne } from '../db/rows';
import { queueMail } from '../mail';
import { can } from '../../permissions';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { conflict, forbidden, invalid, notFound } from './errors';
import { VALID_VERDICTS } from './lots';

export const STATISTIC = 'mean c/c_crit of the genuine class model';

export interface DriftLot {
	lotId: number;
	internalLot: string;
	receivedAt: string;
	status: string;
	identity: string | null;
	value: number;
	meanH: number | null;
	meanV: number | null;
	scans: number;
	accepted: boolean;
	segment: number;
	limits: Pick<IndividualsLimits, 'centre' | 'lcl' | 'ucl' | 'sigma'> | null;
	signal: { rule: number; message: string } | null;
	inBaseline: boolean;
}

export interface DriftChart {
	supplier: { id: number; code: string; name: string };
	material: { id: number; code: string; name: string };
	statistic: string;
	lots: DriftLot[];
	centre: number | null;
	lcl: number | null;
	ucl: number | null;
	sigma: number | null;
	state: 'collecting' | 'in-control' | 'signal';
	baselineCount: number;
	/** The current baseline restart, if any. */
	restart: { at: string; by: string | null; reason: string; afterLot: string } | null;
	restarts: { at: string; by: string | null; reason: string; afterLot: string }[];
}

interface Pair {
	supplier: { id: number; code: string; name: string };
	material: { id: number; code: string; name: string };
}

const IdRow = z.object({ id: col.id });
const CodeRow = z.object({ id: col.id, code: col.text, name: col.text });

async function pair(supplierRef: string | number, materialRef: string | number, tx?: Transaction): Promise<Pair> {
	const s = String(supplierRef).trim();
	const m = String(materialRef ?? '').trim();
	if (!m) throw invalid('Name the material: ?material=<material code>', 'material');
	const sup = await selectOne(
		CodeRow,
		/^\d+$/.test(s) ? 'SELECT id, code, name FROM suppliers WHERE id = :s' : 'SELECT id, code, name FROM suppliers WHERE code = upper(:s)',
		{ replacements: { s }, transaction: tx }
	);
	if (!sup) throw notFound(`Supplier ${s}`);
	const mat = await selectOne(
		CodeRow,
		/^\d+$/.test(m) ? 'SELECT id, code, name FROM materials WHERE id = :m' : 'SELECT id, code, name FROM materials WHERE code = upper(:m)',
		{ replacements: { m }, transaction: tx }
	);
	if (!mat) throw notFound(`Material ${m}`);
	return { supplier: sup, material: mat };
}

const LotRow = z.object({ id: col.id, internal_lot: col.text, received_at: col.text, status: col.text, identity: col.text.nullable() });
interface LotStat extends z.infer<typeof LotRow> {
	value: number | null;
	mean_h: number | null;
	mean_v: number | null;
	scans: number;
}
const GenuineRow = z.object({ name: col.text.nullable(), h0: col.num.nullable(), v0: col.num.nullable() });
const ClassStats = z.record(z.object({ c: col.num, cCrit: col.num, h: col.num, v: col.num }).passthrough());
const CountedRow = z.object({ lot_id: col.id, model_version_id: col.id.nullable(), classes: ClassStats.nullable() });

// Genuine class name and its h₀, v₀ per model version: an artefact never changes (a rebuild is a new version), so
// nothing invalidates an entry; bounded to the 256 most recently used versions. Wrapped because LRUCache holds no null.
const genuineOf = new LRUCache<number, { model: { name: string; h0: number; v0: number } | null }>({ max: 256 });
async function genuineModel(versionId: number, tx?: Transaction) {
	const hit = genuineOf.get(versionId);
	if (hit) return hit.model;
	const r = await selectOne(
		GenuineRow,
		`SELECT artefact->>'genuine' AS name, (artefact->'models'->(artefact->>'genuine')->>'h0')::float8 AS h0, (artefact->'models'->(artefact->>'genuine')->>'v0')::float8 AS v0
		   FROM model_versions WHERE id = :versionId`,
		{ replacements: { versionId }, transaction: tx }
	);
	// a missing h0/v0 reads as 0, which the callers treat as "no scaled distance"
	const g = r?.name ? { name: r.name, h0: r.h0 ?? 0, v0: r.v0 ?? 0 } : null;
	genuineOf.set(versionId, { model: g });
	return g;
}

/** Lots of the pair whose screening is complete, in received order, with their statistic (null when no scan carries genuine-class distances). */
async function lotStats(supplierId: number, materialId: number, tx?: Transaction): Promise<LotStat[]> {
	const lotRows = await select(
		LotRow,
		`SELECT l.id, l.internal_lot, to_char(l.received_at, 'YYYY-MM-DD') AS received_at, l.status, l.identity
		   FROM lots l WHERE l.supplier_id = :supplierId AND l.material_id = :materialId AND l.status <> 'awaiting-scans'
		  ORDER BY l.received_at, l.id`,
		{ replacements: { supplierId, materialId }, transaction: tx }
	);
	if (!lotRows.length) return [];
	// The counted scans: every valid scan of a sampled container that no approved invalidation has set aside (the
	// result policy of ./scans.ts: a later scan never overwrites an earlier one).
	const counted = await select(
		CountedRow,
		`SELECT sc.lot_id, sc.model_version_id, sc.result->'classes' AS classes
		   FROM scans sc JOIN lots l ON l.id = sc.lot_id
		  WHERE sc.lot_id IN (:lotIds) AND sc.verdict IN (:valid) AND sc.container = ANY(l.sampled)
		    AND NOT EXISTS (SELECT 1 FROM scan_invalidations i WHERE i.scan_id = sc.id AND i.state = 'approved')
		  ORDER BY sc.lot_id, sc.id`,
		{ replacements: { lotIds: lotRows.map((l) => l.id), valid: VALID_VERDICTS }, transaction: tx }
	);
	const acc = new Map<number, { r: number[]; h: number[]; v: number[] }>();
	for (const sc of counted) {
		if (sc.model_version_id == null || !sc.classes) continue;
		const g = await genuineModel(sc.model_version_id, tx);
		const st = g ? sc.classes[g.name] : undefined;
		if (!g || !st || !(st.cCrit > 0) || !Number.isFinite(st.c)) continue;
		const a = acc.get(sc.lot_id) ?? { r: [], h: [], v: [] };
		a.r.push(st.c / st.cCrit);
		if (g.h0 > 0 && Number.isFinite(st.h)) a.h.push(st.h / g.h0);
		if (g.v0 > 0 && Number.isFinite(st.v)) a.v.push(st.v / g.v0);
		acc.set(sc.lot_id, a);
	}
	const mean = (x: number[]) => (x.length ? x.reduce((s, v) => s + v, 0) / x.length : null);
	return lotRows.map((l) => {
		const a = acc.get(l.id);
		return { ...l, value: a ? mean(a.r) : null, mean_h: a ? mean(a.h) : null, mean_v: a ? mean(a.v) : null, scans: a?.r.length ?? 0 };
	});
}

const RestartRow = z.object({ after_received_at: col.text, after_lot_id: col.id, after_lot: col.text, reason: col.text, created_at: col.date, by: col.text.nullable() });
type RestartRow = z.infer<typeof RestartRow>;

async function restarts(supplierId: number, materialId: number, tx?: Transaction): Promise<RestartRow[]> {
	return select(
		RestartRow,
		`SELECT to_char(b.after_received_at, 'YYYY-MM-DD') AS after_received_at, b.after_lot_id, l.internal_lot AS after_lot, b.reason, b.created_at, u.name AS by
		   FROM drift_baselines b JOIN lots l ON l.id = b.after_lot_id LEFT JOIN users u ON u.id = b.created_by
		  WHERE b.supplier_id = :supplierId AND b.material_id = :materialId ORDER BY b.id`,
		{ replacements: { supplierId, materialId }, transaction: tx }
	);
}

const after = (lot: { received_at: string; id: number }, r: { after_received_at: string; after_lot_id: number }) =>
	lot.received_at > r.after_received_at || (lot.received_at === r.after_received_at && lot.id > r.after_lot_id);

const round = (x: number | null) => (x == null || !Number.isFinite(x) ? null : Math.round(x * 1e6) / 1e6);

/** The chart of one supplier and material: every complete lot in received order, judged segment by segment. */
export async function chart(supplierRef: string | number, materialRef: string | number, tx?: Transaction): Promise<DriftChart> {
	const p = await pair(supplierRef, materialRef, tx);
	const stats = (await lotStats(p.supplier.id, p.material.id, tx)).filter((l) => l.value != null);
	const rs = await restarts(p.supplier.id, p.material.id, tx);
	// Segment of a lot: how many restarts lie before it.
	const segmentOf = (l: LotStat) => rs.filter((r) => after(l, r)).length;
	const lots: DriftLot[] = [];
	let last: ReturnType<typeof driftSeries> | null = null;
	for (let seg = 0; seg <= rs.length; seg++) {
		const members = stats.filter((l) => segmentOf(l) === seg);
		const series = driftSeries(members.map((l) => ({ value: l.value!, accepted: l.identity === 'meets' && l.status !== 'rejected' })));
		members.forEach((l, i) => {
			const r = series.lots[i];
			lots.push({
				lotId: l.id,
				internalLot: l.internal_lot,
				receivedAt: l.received_at,
				status: l.status,
				identity: l.identity,
				value: round(l.value)!,
				meanH: round(l.mean_h),
				meanV: round(l.mean_v),
				scans: l.scans,
				accepted: l.identity === 'meets' && l.status !== 'rejected',
				segment: seg,
				limits: r.limits ? { centre: round(r.limits.centre)!, lcl: round(r.limits.lcl)!, ucl: round(r.limits.ucl)!, sigma: round(r.limits.sigma)! } : null,
				signal: r.signal ? { rule: r.signal.rule, message: r.signal.message } : null,
				inBaseline: r.inBaseline
			});
		});
		last = series;
	}
	lots.sort((a, b) => (a.receivedAt < b.receivedAt ? -1 : a.receivedAt > b.receivedAt ? 1 : a.lotId - b.lotId));
	const cur = last!.current;
	const view = (r: RestartRow) => ({ at: new Date(r.created_at).toISOString(), by: r.by, reason: r.reason, afterLot: r.after_lot });
	return {
		...p,
		statistic: STATISTIC,
		lots,
		centre: round(cur?.centre ?? null),
		lcl: round(cur?.lcl ?? null),
		ucl: round(cur?.ucl ?? null),
		sigma: round(cur?.sigma ?? null),
		state: last!.state,
		baselineCount: last!.baselineCount,
		restart: rs.length ? view(rs[rs.length - 1]) : null,
		restarts: rs.map(view)
	};
}

/** The exact API shape of GET /api/v1/suppliers/{code}/drift?material=… */
export async function apiChart(supplierRef: string, materialRef: string | null) {
	const c = await chart(supplierRef, materialRef ?? '');
	return {
		material: c.material.code,
		statistic: c.statistic,
		lots: c.lots.map((l) => ({ lotId: l.lotId, receivedAt: l.receivedAt, value: l.value, signal: l.signal })),
		centre: c.centre,
		lcl: c.lcl,
		ucl: c.ucl,
		state: c.state
	};
}

/** Materials this supplier has delivered, for the supplier page's one chart per material. */
export async function chartsForSupplier(supplierRef: string | number) {
	const s = String(supplierRef).trim();
	const mats = await select(
		z.object({ code: col.text }),
		`SELECT DISTINCT m.code FROM lots l JOIN materials m ON m.id = l.material_id JOIN suppliers s ON s.id = l.supplier_id
		  WHERE ${/^\d+$/.test(s) ? 's.id = :s' : 's.code = upper(:s)'} ORDER BY m.code`,
		{ replacements: { s } }
	);
	return Promise.all(mats.map((m) => chart(s, m.code)));
}

async function recipients(tx: Transaction): Promise<string[]> {
	const rows = await select(z.object({ email: col.text }), "SELECT email FROM users WHERE active AND ('procurement' = ANY(roles) OR 'chemometrician' = ANY(roles)) ORDER BY email", {
		transaction: tx
	});
	return rows.map((r) => r.email);
}

/**
 * Called by the scan workflow inside its transaction once a lot's screening is complete. Judges the lot on its
 * supplier's chart and, the first time it breaks a rule, records the signal, opens a drift alert and mails
 * procurement and the chemometricians. Idempotent: a lot raises at most one drift signal.
 */
export async function evaluateLot(tx: Transaction, actor: Actor, lotId: number) {
	const lot = await selectOne(
		z.object({ supplier_id: col.id, material_id: col.id, internal_lot: col.text, status: col.text, supplier_code: col.text, supplier_name: col.text, material_code: col.text }),
		`SELECT l.supplier_id, l.material_id, l.internal_lot, l.status, s.code AS supplier_code, s.name AS supplier_name, m.code AS material_code
		   FROM lots l JOIN suppliers s ON s.id = l.supplier_id JOIN materials m ON m.id = l.material_id WHERE l.id = :lotId`,
		{ replacements: { lotId }, transaction: tx }
	);
	if (!lot || lot.status === 'awaiting-scans') return null;
	const existing = await sequelize().query('SELECT 1 FROM drift_signals WHERE lot_id = :lotId', { replacements: { lotId }, type: QueryTypes.SELECT, transaction: tx });
	if (existing.length) return null;
	const c = await chart(lot.supplier_id, lot.material_id, tx);
	const mine = c.lots.find((l) => l.lotId === lotId);
	if (!mine?.signal || !mine.limits) return null;
	const finding = { rule: mine.signal.rule, message: mine.signal.message, value: mine.value, centre: mine.limits.centre, lcl: mine.limits.lcl, ucl: mine.limits.ucl, meanH: mine.meanH, meanV: mine.meanV };
	const alert = await returning(
		IdRow,
		`INSERT INTO alerts (kind, supplier_id, material_id, lot_id, scan_id, severity, severity_rank, verdict, profile, findings)
		 VALUES ('drift', :supplierId, :materialId, :lotId, NULL, 'medium', 2, 'drift', NULL, CAST(:findings AS jsonb)) RETURNING id`,
		{ replacements: { supplierId: lot.supplier_id, materialId: lot.material_id, lotId, findings: JSON.stringify([finding]) }, transaction: tx }
	);
	const alertId = alert.id;
	const sig = await returning(
		IdRow,
		`INSERT INTO drift_signals (supplier_id, material_id, lot_id, rule, message, value, centre, lcl, ucl, alert_id)
		 VALUES (:supplierId, :materialId, :lotId, :rule, :message, :value, :centre, :lcl, :ucl, :alertId) RETURNING id`,
		{ replacements: { supplierId: lot.supplier_id, materialId: lot.material_id, lotId, ...finding, alertId }, transaction: tx }
	);
	await audit.record(tx, actor, {
		action: 'drift.signal',
		entity: 'lot',
		entityId: lotId,
		after: { signalId: sig.id, alertId, supplier: lot.supplier_code, material: lot.material_code, statistic: STATISTIC, ...finding }
	});
	await queueMail(tx, {
		kind: 'alert',
		recipients: await recipients(tx),
		subject: `Drift signal: ${lot.supplier_code} ${lot.material_code}, lot ${lot.internal_lot} (rule ${finding.rule})`,
		body: [
			`Lot ${lot.internal_lot} of ${lot.material_code} from ${lot.supplier_code} · ${lot.supplier_name} left the supplier's own history on the drift chart.`,
			`${finding.message}. Lot statistic (${STATISTIC}) ${finding.value.toFixed(4)}; centre ${finding.centre.toFixed(4)}, limits ${finding.lcl.toFixed(4)} to ${finding.ucl.toFixed(4)}.`,
			finding.meanH != null && finding.meanV != null ? `Mean h/h0 ${finding.meanH.toFixed(3)}, mean v/v0 ${finding.meanV.toFixed(3)}.` : '',
			'The containers may still be genuine: this signal does not block a release by itself. See the supplier page in Lotgate (alert #' + alertId + ').'
		]
			.filter(Boolean)
			.join('\n'),
		lotId,
		alertId
	});
	return { signalId: sig.id, alertId, ...finding };
}

export interface LotDriftSignal {
	rule: number;
	message: string;
	value: number;
	centre: number;
	lcl: number;
	ucl: number;
	at: string;
	alertId: number | null;
	supplierCode: string;
	materialCode: string;
}

const SignalRow = z.object({
	rule: col.id,
	message: col.text,
	value: col.num,
	centre: col.num,
	lcl: col.num,
	ucl: col.num,
	created_at: col.date,
	alert_id: col.id.nullable(),
	supplier_code: col.text,
	material_code: col.text
});

/** The drift signal a lot raised, for the lot page (QA sees it before signing). */
export async function forLot(lotId: number): Promise<LotDriftSignal | null> {
	const r = await selectOne(
		SignalRow,
		`SELECT d.rule, d.message, d.value, d.centre, d.lcl, d.ucl, d.created_at, d.alert_id, s.code AS supplier_code, m.code AS material_code
		   FROM drift_signals d JOIN suppliers s ON s.id = d.supplier_id JOIN materials m ON m.id = d.material_id WHERE d.lot_id = :lotId`,
		{ replacements: { lotId } }
	);
	if (!r) return null;
	return {
		rule: r.rule,
		message: r.message,
		value: r.value,
		centre: r.centre,
		lcl: r.lcl,
		ucl: r.ucl,
		at: r.created_at.toISOString(),
		alertId: r.alert_id,
		supplierCode: r.supplier_code,
		materialCode: r.material_code
	};
}

export const restartSchema = z.object({
	material: z.string().trim().min(1, 'Choose the material'),
	reason: z.string().trim().min(10, 'Describe the confirmed process change (at least 10 characters)').max(2000, 'At most 2000 characters')
});

/**
 * Restarts the baseline after a confirmed process change: lots received after the latest current lot form a new
 * history, and the chart collects 5 lots again. Chemometrician only, with a reason, audited.
 */
export async function restartBaseline(actor: Actor, supplierRef: string | number, input: z.input<typeof restartSchema>) {
	if (!hasRole(actor, can.restartDriftBaseline)) throw forbidden('Only a chemometrician re-estimates a drift baseline');
	if (actor.id == null) throw forbidden('A baseline restart is recorded by a signed-in chemometrician');
	const data = restartSchema.parse(input);
	return transaction(async (tx) => {
		const p = await pair(supplierRef, data.material, tx);
		const latest = await selectOne(
			z.object({ id: col.id, received_at: col.text, internal_lot: col.text }),
			`SELECT id, to_char(received_at, 'YYYY-MM-DD') AS received_at, internal_lot FROM lots WHERE supplier_id = :s AND material_id = :m ORDER BY received_at DESC, id DESC LIMIT 1`,
			{ replacements: { s: p.supplier.id, m: p.material.id }, transaction: tx }
		);
		if (!latest) throw conflict(`${p.supplier.code} has delivered no lot of ${p.material.code}: there is no history to restart`);
		const before = await chart(p.supplier.id, p.material.id, tx);
		const row = await returning(
			IdRow,
			`INSERT INTO drift_baselines (supplier_id, material_id, after_received_at, after_lot_id, reason, created_by)
			 VALUES (:s, :m, :at, :lotId, :reason, :by) RETURNING id`,
			{ replacements: { s: p.supplier.id, m: p.material.id, at: latest.received_at, lotId: latest.id, reason: data.reason, by: actor.id }, transaction: tx }
		);
		await audit.record(tx, actor, {
			action: 'drift.baseline-restarted',
			entity: 'supplier',
			entityId: p.supplier.id,
			before: { material: p.material.code, state: before.state, centre: before.centre, lcl: before.lcl, ucl: before.ucl, baselineLots: before.baselineCount },
			after: { material: p.material.code, restartId: row.id, afterLot: latest.internal_lot, state: 'collecting' },
			reason: data.reason
		});
		return { restartId: row.id, afterLot: latest.internal_lot };
	});
}

/** Chemometrician home queue: live drift alerts. */
export async function queueItems() {
	const rows = await select(
		z.object({ id: col.id, supplier_code: col.text, material_code: col.text, internal_lot: col.text, state: col.text, findings: z.array(z.object({ rule: col.num }).passthrough()).nullable() }),
		`SELECT a.id, s.code AS supplier_code, m.code AS material_code, l.internal_lot, a.state, a.findings
		   FROM alerts a JOIN suppliers s ON s.id = a.supplier_id JOIN materials m ON m.id = a.material_id JOIN lots l ON l.id = a.lot_id
		  WHERE a.kind = 'drift' AND a.state <> 'closed' ORDER BY a.opened_at DESC LIMIT 20`
	);
	return rows.map((r) => ({
		href: `/suppliers/${r.supplier_code}#drift-${r.material_code}`,
		label: `${r.supplier_code} · ${r.material_code}: drift at ${r.internal_lot}`,
		detail: `rule ${r.findings?.[0]?.rule ?? '?'} · alert ${r.state}`
	}));
}

export type { RuleHit };
