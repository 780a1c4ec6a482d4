// Supplier alerts for procurement: opened automatically (inside the scan's transaction) when a lot gets a
import { can } from '../../permissions';
// non-genuine verdict, then acknowledged and closed by procurement, each step with a note and an audit event.
//
// Severity follows the verdict, worst first:
//   high   — suspect (matches a known bad profile: diluted, substituted, counterfeit source) and not-this-material
//            (fails the family model: a different material). Both are positive evidence that the supplier shipped
//            something other than what was ordered.
//   medium — unknown: inside the material family but accepted by no class model. Possibly a new adulteration, possibly
//            an unusual genuine lot; it calls for investigation, not a conclusion about the supplier.
//   low    — kept for alerts opened before issue #11; no new alert has it.
// `unusable` (a file or spectrum that failed a quality gate: unreadable, flat, saturated, no sample, wrong ordinate,
// wrong technique or axis) and `not-screened` (no approved model) open no alert: they are laboratory problems, not the
// supplier's. An alert, once opened by a valid non-genuine scan, stays even if that scan is later invalidated; the
// invalidation is added to its findings (see `noteInvalidation`) and procurement closes it.
import type { Transaction } from 'sequelize';
import { z } from 'zod';
import { proseText } from '../../validation/text';
import { sequelize, transaction } from '../db';
import { col, returning, select, selectOne, type RowSchema } from '../db/rows';
import { queueMail } from '../mail';
import { hasRole, type Actor } from './actor';
import { containerLabel } from '../../labels';
import * as audit from './audit';
import { conflict, forbidden, invalid, notFound } from './errors';
import * as containerResults from './container-results';
import { lotIdentity, MATERIAL_VERDICTS, type ContainerResultWord } from '../../analysis/container-result';
import { IDENTITY_LABELS, STATUS_LABELS, type Identity, type LotStatus } from './lots';

export type Severity = 'high' | 'medium' | 'low';
export type AlertState = 'open' | 'acknowledged' | 'closed';
export const ALERT_STATES: AlertState[] = ['open', 'acknowledged', 'closed'];

export const SEVERITY_OF: Record<string, { severity: Severity; rank: number }> = {
	suspect: { severity: 'high', rank: 3 },
	'not-this-material': { severity: 'high', rank: 3 },
	unknown: { severity: 'medium', rank: 2 },
	unusable: { severity: 'low', rank: 1 }
};
export const SEVERITY_LABELS: Record<Severity, string> = { high: 'high', medium: 'medium', low: 'low' };

export interface ScanFinding {
	/** The scan's id. */
	id: number;
	lotId: number;
	container: number;
	verdict: string;
	profile?: string | null;
	reason?: string | null;
}

export const noteSchema = z.object({ note: proseText(z.string().trim().min(3, 'Write a note of at least 3 characters').max(2000, 'At most 2000 characters')) });

function requireProcurement(actor: Actor) {
	if (!hasRole(actor, can.handleAlerts)) throw forbidden('Only procurement (or an admin) handles supplier alerts');
}

const verdictText = (f: { verdict: string; profile?: string | null }) => (f.verdict === 'drift' ? 'drift signal' : f.verdict === 'suspect' ? `suspect (${f.profile ?? 'profile'})` : f.verdict === 'not-this-material' ? 'not this material' : f.verdict);

/**
 * Called by the scan workflow inside its transaction for every screened scan. Opens one live alert per lot, adds later
 * findings to it, and raises its severity when a worse verdict arrives. Mails procurement on opening and raising.
 */
export async function openForScan(tx: Transaction, actor: Actor, scan: ScanFinding) {
	if (scan.verdict === 'unusable' || scan.verdict === 'not-screened') return null;
	const level = SEVERITY_OF[scan.verdict];
	if (!level) return null;
	const lot = await selectOne(
		z.object({ internal_lot: col.text, supplier_id: col.id, material_id: col.id, supplier_code: col.text, supplier_name: col.text, material_code: col.text }),
		`SELECT l.internal_lot, l.supplier_id, l.material_id, s.code AS supplier_code, s.name AS supplier_name, m.code AS material_code
		   FROM lots l JOIN suppliers s ON s.id = l.supplier_id JOIN materials m ON m.id = l.material_id WHERE l.id = :lotId`,
		{ replacements: { lotId: scan.lotId }, transaction: tx }
	);
	if (!lot) throw notFound(`Lot ${scan.lotId}`);
	const finding = { scanId: scan.id, container: scan.container, verdict: scan.verdict, profile: scan.profile ?? null, reason: scan.reason ?? null, severity: level.severity };
	const live = await select(
		z.object({ id: col.id, severity_rank: col.id, severity: SeverityCol }),
		"SELECT id, severity_rank, severity FROM alerts WHERE lot_id = :lotId AND kind = 'verdict' AND state <> 'closed' FOR UPDATE",
		{ replacements: { lotId: scan.lotId }, transaction: tx }
	);
	let alertId: number;
	let notify = false;
	if (live[0]) {
		const a = live[0];
		alertId = a.id;
		const raise = level.rank > a.severity_rank;
		await sequelize().query(
			`UPDATE alerts SET findings = findings || CAST(:finding AS jsonb)${raise ? ', severity = :severity, severity_rank = :rank, verdict = :verdict, profile = :profile, scan_id = :scanId' : ''} WHERE id = :id`,
			{ replacements: { id: alertId, finding: JSON.stringify([finding]), severity: level.severity, rank: level.rank, verdict: scan.verdict, profile: scan.profile ?? null, scanId: scan.id }, transaction: tx }
		);
		await audit.record(tx, actor, {
			action: raise ? 'alert.raised' : 'alert.finding-added',
			entity: 'alert',
			entityId: alertId,
			before: raise ? { severity: a.severity } : undefined,
			after: { finding, ...(raise ? { severity: level.severity } : {}) }
		});
		notify = raise;
	} else {
		const row = await returning(
			z.object({ id: col.id }),
			`INSERT INTO alerts (supplier_id, material_id, lot_id, scan_id, severity, severity_rank, verdict, profile, findings)
			 VALUES (:supplierId, :materialId, :lotId, :scanId, :severity, :rank, :verdict, :profile, CAST(:findings AS jsonb)) RETURNING id`,
			{
				replacements: {
					supplierId: lot.supplier_id,
					materialId: lot.material_id,
					lotId: scan.lotId,
					scanId: scan.id,
					severity: level.severity,
					rank: level.rank,
					verdict: scan.verdict,
					profile: scan.profile ?? null,
					findings: JSON.stringify([finding])
				},
				transaction: tx
			}
		);
		alertId = row.id;
		await audit.record(tx, actor, {
			action: 'alert.opened',
			entity: 'alert',
			entityId: alertId,
			after: { supplier: lot.supplier_code, lot: lot.internal_lot, severity: level.severity, finding }
		});
		notify = true;
	}
	if (notify) {
		const recipients = await procurementRecipients(tx);
		await queueMail(tx, {
			kind: 'alert',
			recipients,
			subject: `Supplier alert (${level.severity}): ${lot.supplier_code}, lot ${lot.internal_lot} container ${containerLabel(scan.container)} ${verdictText(scan)}`,
			body: [
				`Lot ${lot.internal_lot} of ${lot.material_code} from ${lot.supplier_code} · ${lot.supplier_name}: container ${containerLabel(scan.container)} was screened ${verdictText(scan)}.`,
				scan.reason ? `Reason: ${scan.reason}` : '',
				`Severity: ${level.severity}. Acknowledge and close the alert in Lotgate under Alerts (alert #${alertId}).`
			]
				.filter(Boolean)
				.join('\n'),
			lotId: scan.lotId,
			alertId
		});
	}
	return alertId;
}

async function procurementRecipients(tx: Transaction): Promise<string[]> {
	const rows = await select(z.object({ email: col.text }), "SELECT email FROM users WHERE active AND 'procurement' = ANY(roles) ORDER BY email", { transaction: tx });
	return rows.map((r) => r.email);
}

// ---------- reading ----------

export interface AlertView {
	id: number;
	/** 'verdict': a non-genuine scan; 'drift': the lot's statistic broke a control-chart rule (./drift.ts). */
	kind: 'verdict' | 'drift';
	state: AlertState;
	severity: Severity;
	severityRank: number;
	verdict: string;
	profile: string | null;
	supplier: { id: number; code: string; name: string };
	material: { id: number; code: string };
	lot: { id: number; internalLot: string; supplierLot: string };
	scanId: number | null;
	findings: { scanId: number; container: number; verdict: string; profile: string | null; reason: string | null; severity: Severity }[];
	/** Invalidations proposed for the scans behind the findings: the alert stays, and shows them (issue #11). */
	invalidations: { scanId: number; container: number; state: 'proposed' | 'approved' | 'refused'; cause: string; description: string; proposedBy: string; decidedBy: string | null; decidedAt: string | null }[];
	openedAt: string;
	acknowledged: { by: string | null; at: string; note: string } | null;
	closed: { by: string | null; at: string; note: string } | null;
	/** Where things stand now, read when the alert is shown (rescans, invalidations and decisions after it opened). */
	current: AlertCurrent;
}

/** The state now of one finding: its scan, and the container's result over every scan of it (docs/methods.md §16). */
export interface FindingNow {
	scanId: number;
	container: number;
	/** counts: a valid result that still counts; invalidated: QA approved its invalidation; invalidation-proposed: awaiting QA; not-counted: never a material result (unusable). */
	scan: 'counts' | 'invalidated' | 'invalidation-proposed' | 'not-counted';
	/** Scans of the same container uploaded after this finding's scan, oldest first. */
	later: { scanId: number; verdict: string; profile: string | null }[];
	/** The container's result now; null when the container is no longer sampled and has no scan. */
	result: ContainerResultWord | null;
	profile: string | null;
	decided: boolean;
}

export interface AlertCurrent {
	findings: FindingNow[];
	lot: { status: LotStatus; statusText: string; identity: Identity; identityText: string | null };
	/** The lot's disposition in force (the final one unless superseded later), and a release waiting for its second signature. */
	disposition: { id: number; decision: string; decisionText: string; signedBy: string[]; at: string } | null;
	pending: { id: number; decision: string; signedBy: string; at: string } | null;
}

const DECISION_TEXT: Record<string, string> = { release: 'released', quarantine: 'quarantined', reject: 'rejected' };
const EMPTY_CURRENT: AlertCurrent = { findings: [], lot: { status: 'awaiting-scans', statusText: STATUS_LABELS['awaiting-scans'], identity: null, identityText: null }, disposition: null, pending: null };

/** Fills `current` of each alert from its lot's scans, invalidations and dispositions as they are now (a few queries per page). */
async function attachCurrent(views: AlertView[], tx?: Transaction): Promise<AlertView[]> {
	const lotIds = [...new Set(views.map((v) => v.lot.id))];
	if (!lotIds.length) return views;
	const q = <T>(schema: RowSchema<T>, sql: string) => select(schema, sql, { replacements: { lotIds }, transaction: tx });
	const [lotRows, scanRows, invalidationLists, dispRows] = await Promise.all([
		q(z.object({ id: col.id, status: LotStatusCol, sampled: z.array(col.id), replicates: col.id }), "SELECT id, status, sampled, coalesce((plan->>'replicates')::integer, 1) AS replicates FROM lots WHERE id IN (:lotIds)"),
		q(z.object({ id: col.id, lot_id: col.id, container: col.id, verdict: col.text, profile: col.text.nullable() }), 'SELECT id, lot_id, container, verdict, profile FROM scans WHERE lot_id IN (:lotIds) ORDER BY id'),
		Promise.all(lotIds.map((id) => containerResults.forLot(id, tx))),
		q(
			z.object({ id: col.id, lot_id: col.id, decision: col.text, state: col.text, effective_at: col.date.nullable(), created_at: col.date, first: col.text, second: col.text.nullable() }),
			`SELECT d.id, d.lot_id, d.decision, d.state, d.effective_at, d.created_at, s1.signer_name AS first, s2.signer_name AS second
			   FROM dispositions d JOIN signatures s1 ON s1.id = d.signature_id LEFT JOIN signatures s2 ON s2.id = d.second_signature_id
			  WHERE d.lot_id IN (:lotIds) AND d.state IN ('effective', 'awaiting-second-signature')`
		)
	]);
	interface LotNow {
		summary: Omit<AlertCurrent, 'findings'>;
		scans: { id: number; container: number; verdict: string; profile: string | null }[];
		latestInvalidation: Map<number, containerResults.InvalidationView>;
		results: Map<number, containerResults.ContainerResult>;
	}
	const byLot = new Map<number, LotNow>();
	for (const lot of lotRows) {
		const lotId = lot.id;
		const scans = scanRows.filter((r) => r.lot_id === lotId).map((r) => ({ id: r.id, container: r.container, verdict: r.verdict, profile: r.profile }));
		const invalidations = invalidationLists[lotIds.indexOf(lotId)] ?? [];
		const sampled = lot.sampled;
		const results = containerResults.resultsOf(scans, invalidations, [...new Set([...sampled, ...scans.map((x) => x.container)])], lot.replicates || 1);
		const identity = lotIdentity(sampled.map((c) => results.get(c)!));
		const effective = dispRows.find((d) => d.lot_id === lotId && d.state === 'effective');
		const pending = dispRows.find((d) => d.lot_id === lotId && d.state === 'awaiting-second-signature');
		byLot.set(lotId, {
			summary: {
				lot: { status: lot.status, statusText: STATUS_LABELS[lot.status] ?? lot.status, identity, identityText: identity ? IDENTITY_LABELS[identity] : null },
				disposition: effective
					? {
							id: effective.id,
							decision: effective.decision,
							decisionText: DECISION_TEXT[effective.decision] ?? effective.decision,
							signedBy: [effective.first, effective.second].filter((x): x is string => !!x),
							at: (effective.effective_at ?? effective.created_at).toISOString()
						}
					: null,
				pending: pending ? { id: pending.id, decision: pending.decision, signedBy: pending.first, at: pending.created_at.toISOString() } : null
			},
			scans,
			latestInvalidation: containerResults.latestByScan(invalidations),
			results
		});
	}
	return views.map((v) => {
		const now = byLot.get(v.lot.id);
		if (!now) return v;
		// A drift alert's finding is the lot's statistic, not a scan.
		if (v.kind === 'drift') return { ...v, current: { findings: [], ...now.summary } };
		const findings: FindingNow[] = v.findings.map((f) => {
			const inv = now.latestInvalidation.get(f.scanId);
			const r = now.results.get(f.container);
			return {
				scanId: f.scanId,
				container: f.container,
				scan: !(MATERIAL_VERDICTS as readonly string[]).includes(f.verdict) ? 'not-counted' : inv?.state === 'approved' ? 'invalidated' : inv?.state === 'proposed' ? 'invalidation-proposed' : 'counts',
				later: now.scans.filter((x) => x.container === f.container && x.id > f.scanId).map((x) => ({ scanId: x.id, verdict: x.verdict, profile: x.profile })),
				result: r?.result ?? null,
				profile: r?.profile ?? null,
				decided: r?.decided ?? false
			};
		});
		return { ...v, current: { findings, ...now.summary } };
	});
}

const SELECT = `SELECT a.*, s.code AS supplier_code, s.name AS supplier_name, m.code AS material_code, l.internal_lot, l.supplier_lot,
        ua.name AS acknowledged_by_name, uc.name AS closed_by_name, count(*) OVER () AS total,
        (SELECT coalesce(jsonb_agg(jsonb_build_object('scanId', iv.scan_id, 'container', sc.container, 'state', iv.state, 'cause', iv.cause,
                  'description', iv.description, 'proposedBy', pu.name, 'decidedBy', du.name, 'decidedAt', iv.decided_at) ORDER BY iv.id), '[]'::jsonb)
           FROM scan_invalidations iv JOIN scans sc ON sc.id = iv.scan_id JOIN users pu ON pu.id = iv.proposed_by LEFT JOIN users du ON du.id = iv.decided_by
          WHERE iv.lot_id = a.lot_id AND iv.scan_id IN (SELECT (f->>'scanId')::integer FROM jsonb_array_elements(a.findings) f)) AS invalidations
   FROM alerts a JOIN suppliers s ON s.id = a.supplier_id JOIN materials m ON m.id = a.material_id JOIN lots l ON l.id = a.lot_id
   LEFT JOIN users ua ON ua.id = a.acknowledged_by LEFT JOIN users uc ON uc.id = a.closed_by`;

const SeverityCol = z.enum(['high', 'medium', 'low']);
const LotStatusCol = z.enum(['awaiting-scans', 'screened', 'released', 'quarantined', 'rejected']);
const AlertRow = z.object({
	id: col.id,
	kind: z.enum(['verdict', 'drift']),
	state: z.enum(['open', 'acknowledged', 'closed']),
	severity: SeverityCol,
	severity_rank: col.id,
	verdict: col.text,
	profile: col.text.nullable(),
	supplier_id: col.id,
	supplier_code: col.text,
	supplier_name: col.text,
	material_id: col.id,
	material_code: col.text,
	lot_id: col.id,
	internal_lot: col.text,
	supplier_lot: col.text,
	scan_id: col.id.nullable(),
	// a verdict alert's findings are ScanFinding-like; a drift alert's carry the chart rule (./drift.ts): read as stored
	findings: z.array(z.any()),
	invalidations: z.array(
		z.object({
			scanId: col.id,
			container: col.id,
			state: z.enum(['proposed', 'approved', 'refused']),
			cause: col.text,
			description: col.text,
			proposedBy: col.text,
			decidedBy: col.text.nullable(),
			decidedAt: col.text.nullable()
		})
	),
	opened_at: col.date,
	acknowledged_at: col.date.nullable(),
	acknowledged_by_name: col.text.nullable(),
	acknowledge_note: col.text.nullable(),
	closed_at: col.date.nullable(),
	closed_by_name: col.text.nullable(),
	close_note: col.text.nullable(),
	total: col.count
});
type AlertRow = z.infer<typeof AlertRow>;

function toView(r: AlertRow): AlertView {
	return {
		id: r.id,
		kind: r.kind,
		state: r.state,
		severity: r.severity,
		severityRank: r.severity_rank,
		verdict: r.verdict,
		profile: r.profile,
		supplier: { id: r.supplier_id, code: r.supplier_code, name: r.supplier_name },
		material: { id: r.material_id, code: r.material_code },
		lot: { id: r.lot_id, internalLot: r.internal_lot, supplierLot: r.supplier_lot },
		scanId: r.scan_id,
		findings: r.findings,
		invalidations: r.invalidations.map((v) => ({ ...v, decidedAt: v.decidedAt ? new Date(v.decidedAt).toISOString() : null })),
		openedAt: r.opened_at.toISOString(),
		acknowledged: r.acknowledged_at ? { by: r.acknowledged_by_name, at: r.acknowledged_at.toISOString(), note: r.acknowledge_note ?? '' } : null,
		closed: r.closed_at ? { by: r.closed_by_name, at: r.closed_at.toISOString(), note: r.close_note ?? '' } : null,
		current: EMPTY_CURRENT
	};
}

export interface AlertQuery {
	state?: string;
	supplier?: string | number;
	lot?: number;
	sort?: string;
	page?: number;
	pageSize?: number;
}

const SORTS: Record<string, string> = { opened: 'a.opened_at', severity: 'a.severity_rank', supplier: 's.code', state: 'a.state', lot: 'l.internal_lot' };

export async function list(query: AlertQuery = {}) {
	const where: string[] = [];
	const replacements: Record<string, unknown> = {};
	if (query.state) {
		// "live" is the working list: open and acknowledged.
		const states = query.state === 'live' ? ['open', 'acknowledged'] : String(query.state).split(',').filter((s) => (ALERT_STATES as string[]).includes(s));
		if (!states.length) throw invalid(`State is one of ${ALERT_STATES.join(', ')} or live`, 'state');
		where.push('a.state IN (:states)');
		replacements.states = states;
	}
	if (query.supplier != null && query.supplier !== '') {
		const byId = /^\d+$/.test(String(query.supplier));
		where.push(byId ? 's.id = :supplier' : 's.code = upper(:supplier)');
		replacements.supplier = byId ? Number(query.supplier) : String(query.supplier);
	}
	if (query.lot) {
		where.push('a.lot_id = :lot');
		replacements.lot = query.lot;
	}
	const [column, direction] = (query.sort ?? 'severity:desc').split(':');
	const order = `${SORTS[column] ?? 'a.severity_rank'} ${direction === 'asc' ? 'ASC' : 'DESC'}, a.opened_at DESC, a.id DESC`;
	const pageSize = Math.min(Math.max(Number(query.pageSize) || 25, 1), 200);
	const page = Math.max(Number(query.page) || 1, 1);
	const rows = await select(AlertRow, `${SELECT} ${where.length ? `WHERE ${where.join(' AND ')}` : ''} ORDER BY ${order} LIMIT :limit OFFSET :offset`, {
		replacements: { ...replacements, limit: pageSize, offset: (page - 1) * pageSize }
	});
	return {
		rows: await attachCurrent(rows.map(toView)),
		total: rows.length ? rows[0].total : 0,
		page,
		pageSize,
		sort: `${column in SORTS ? column : 'severity'}${direction === 'asc' ? ':asc' : ':desc'}`
	};
}

export async function get(id: number, tx?: Transaction): Promise<AlertView> {
	if (!Number.isInteger(id) || id < 1) throw notFound(`Alert ${id}`);
	const rows = await select(AlertRow, `${SELECT} WHERE a.id = :id`, { replacements: { id }, transaction: tx });
	if (!rows[0]) throw notFound(`Alert ${id}`);
	return (await attachCurrent([toView(rows[0])], tx))[0];
}

// ---------- handling ----------

async function step(actor: Actor, id: number, note: string, from: AlertState, to: Exclude<AlertState, 'open'>) {
	requireProcurement(actor);
	const { note: text } = noteSchema.parse({ note });
	return transaction(async (tx) => {
		const rows = await select(z.object({ state: z.enum(['open', 'acknowledged', 'closed']) }), 'SELECT state FROM alerts WHERE id = :id FOR UPDATE', { replacements: { id }, transaction: tx });
		if (!rows[0]) throw notFound(`Alert ${id}`);
		if (rows[0].state !== from) {
			throw conflict(to === 'acknowledged' ? `Alert ${id} is ${rows[0].state}: only an open alert can be acknowledged` : `Alert ${id} is ${rows[0].state}: acknowledge it before closing it`);
		}
		const columns = to === 'acknowledged' ? 'acknowledged_by = :by, acknowledged_at = now(), acknowledge_note = :note' : 'closed_by = :by, closed_at = now(), close_note = :note';
		await sequelize().query(`UPDATE alerts SET state = :to, ${columns} WHERE id = :id`, { replacements: { id, to, by: actor.id, note: text }, transaction: tx });
		await audit.record(tx, actor, { action: `alert.${to}`, entity: 'alert', entityId: id, before: { state: from }, after: { state: to, note: text }, reason: text });
		return get(id, tx);
	});
}

export const acknowledge = (actor: Actor, id: number, note: string) => step(actor, id, note, 'open', 'acknowledged');
export const close = (actor: Actor, id: number, note: string) => step(actor, id, note, 'acknowledged', 'closed');

/** Live alerts, worst first (procurement's home queue). */
export async function live(limit = 20) {
	return (await list({ state: 'live', sort: 'severity:desc', pageSize: limit })).rows;
}

/** Procurement home queue: open and acknowledged alerts, worst first. */
export async function queueItems() {
	return (await live(20)).map((a) => ({ href: `/alerts/${a.id}`, label: `${a.supplier.code} · ${a.lot.internalLot}: ${verdictText(a)}`, detail: `${a.severity} severity · ${a.state}` }));
}
