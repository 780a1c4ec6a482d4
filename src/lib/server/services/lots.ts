// Lots: receiving a delivery (internal lot number, sampling plan, supplier flag), listing, and the lot record with
import { can } from '../../permissions';
// its containers, scans and screening outcome. Scans and the lot status live in scans.ts.
import { randomInt } from 'node:crypto';
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { nameText, proseText } from '../../validation/text';
import { makePlan, PLAN_KINDS, PLAN_LABELS, reducedPlanRefusal, type PlanKind, type SamplingPlan } from '../../analysis/sampling';
import { describePath, type Identification, type LevelEvidence, type Verdict } from '../../analysis';
import { identificationText } from './identification';
import { sequelize, transaction } from '../db';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import * as containerResults from './container-results';
import { conflict, forbidden, invalid, notFound } from './errors';
import { displayFileName } from '../../validation/text';

export type LotStatus = 'awaiting-scans' | 'screened' | 'released' | 'quarantined' | 'rejected';
export const LOT_STATUSES: LotStatus[] = ['awaiting-scans', 'screened', 'released', 'quarantined', 'rejected'];
export const STATUS_LABELS: Record<LotStatus, string> = {
	'awaiting-scans': 'awaiting scans',
	screened: 'screened, awaiting disposition',
	released: 'released',
	quarantined: 'quarantined',
	rejected: 'rejected'
};
export type Identity = 'meets' | 'fails' | 'not-screened' | null;
export const IDENTITY_LABELS: Record<Exclude<Identity, null>, string> = {
	meets: 'meets identity',
	fails: 'fails identity, quarantine recommended',
	'not-screened': 'not screened: no approved model'
};
/** Verdicts that count as a valid screening of a container (unusable and not-screened ask for another scan). */
export const VALID_VERDICTS = ['genuine', 'suspect', 'unknown', 'not-this-material'] as const;
export type ScanVerdict = (typeof VALID_VERDICTS)[number] | 'unusable' | 'not-screened';

const ref = z.union([z.number().int().positive(), nameText(z.string().trim().min(1, 'Choose one').max(60))]);
const isoDate = z
	.string()
	.trim()
	.regex(/^\d{4}-\d{2}-\d{2}$/, 'Use a date, YYYY-MM-DD')
	.refine((s) => !Number.isNaN(Date.parse(`${s}T00:00:00Z`)), 'Not a calendar date');

const planInput = z.preprocess(
	(v) => (v == null || v === '' ? { kind: 'every' } : typeof v === 'string' ? { kind: v } : v),
	z.object({
		kind: z.enum(PLAN_KINDS as [PlanKind, ...PlanKind[]], { errorMap: () => ({ message: 'Plan is every, n, p or r' }) }).default('every'),
		justification: proseText(z.string().trim().max(2000)).optional(),
		seed: z.coerce.number().int().min(0).max(4294967295).optional()
	})
);

export const lotSchema = z.object({
	material: ref,
	supplier: ref,
	supplierLot: nameText(z.string().trim().min(1, "Enter the supplier's lot number").max(80, 'At most 80 characters')),
	containers: z.coerce.number({ invalid_type_error: 'Enter the number of containers' }).int('A whole number of containers').min(1, 'At least 1 container').max(10000, 'At most 10000 containers'),
	receivedAt: isoDate,
	plan: planInput.optional(),
	/** Same as plan.justification, for forms that keep it beside the plan picker. */
	justification: proseText(z.string().trim().max(2000)).optional()
});
export type LotInput = z.input<typeof lotSchema>;

export interface StoredPlan extends Omit<SamplingPlan, 'sampled'> {
	label: string;
	justification: string | null;
	/** Material policy and supplier status at receipt: the facts the plan rests on. */
	policy: string;
	/** Replicate scans per container required at receipt (material's sampling policy; absent on lots received before it existed: 1). */
	replicates?: number;
	supplierStatus: string;
}

interface LotRow {
	id: number;
	internal_lot: string;
	material_id: number;
	supplier_id: number;
	supplier_lot: string;
	containers: number;
	received_at: string;
	plan: StoredPlan;
	sampled: number[];
	status: LotStatus;
	identity: Identity;
	supplier_flag: string | null;
	created_by: number | null;
	created_at: Date;
}

export function isClosed(lot: { status: string }): boolean {
	// Quarantine is an interim decision: screening may continue while the lot is held.
	return lot.status === 'released' || lot.status === 'rejected';
}

function requireReceiver(actor: Actor) {
	if (!hasRole(actor, can.receiveLots)) throw forbidden('Only a technician or an admin receives lots');
}

async function resolveMaterial(r: string | number, tx?: Transaction) {
	const byId = typeof r === 'number' || /^\d+$/.test(r);
	const rows = await sequelize().query<{ id: number; code: string; name: string; technique: string; sampling_policy: string; sampling_justification: string | null; replicates: number }>(
		`SELECT id, code, name, technique, sampling_policy, sampling_justification, replicates FROM materials WHERE ${byId ? 'id = :r' : 'code = upper(:r)'}`,
		{ replacements: { r: byId ? Number(r) : String(r) }, type: QueryTypes.SELECT, transaction: tx }
	);
	if (!rows[0]) throw invalid(`Material "${r}" is not registered`, 'material');
	return rows[0];
}

async function resolveSupplier(r: string | number, tx?: Transaction) {
	const byId = typeof r === 'number' || /^\d+$/.test(r);
	const rows = await sequelize().query<{ id: number; code: string; name: string; status: string }>(
		`SELECT id, code, name, status FROM suppliers WHERE ${byId ? 'id = :r' : 'code = upper(:r)'}`,
		{ replacements: { r: byId ? Number(r) : String(r) }, type: QueryTypes.SELECT, transaction: tx }
	);
	if (!rows[0]) throw invalid(`Supplier "${r}" is not registered`, 'supplier');
	return rows[0];
}

export function supplierFlagText(flag: string | null, supplierCode: string) {
	if (flag === 'blocked') return `Supplier ${supplierCode} is blocked: hold the delivery in quarantine and inform procurement and QA.`;
	if (flag === 'on-watch') return `Supplier ${supplierCode} is on watch: screen with care; QA reviews this lot closely.`;
	return null;
}

export { reducedPlanRefusal };

/** Receives a lot: the internal lot number, the plan with its seed, and the supplier flag, in one transaction. */
export async function create(actor: Actor, input: LotInput, reason?: string) {
	requireReceiver(actor);
	const data = lotSchema.parse(input);
	const planIn = data.plan ?? { kind: 'every' as PlanKind };
	const justification = planIn.justification ?? data.justification ?? null;
	const today = new Date().toISOString().slice(0, 10);
	if (data.receivedAt > today) throw invalid('The date received cannot be in the future', 'receivedAt');
	return transaction(async (tx) => {
		const material = await resolveMaterial(data.material, tx);
		const supplier = await resolveSupplier(data.supplier, tx);
		if (planIn.kind !== 'every') {
			const refusal = reducedPlanRefusal({ code: material.code, samplingPolicy: material.sampling_policy }, supplier, justification);
			if (refusal) throw invalid(refusal.message, refusal.field);
		}
		const existing = await sequelize().query<{ internal_lot: string }>(
			'SELECT internal_lot FROM lots WHERE supplier_id = :s AND material_id = :m AND supplier_lot = :l',
			{ replacements: { s: supplier.id, m: material.id, l: data.supplierLot }, type: QueryTypes.SELECT, transaction: tx }
		);
		if (existing[0]) throw conflict(`Supplier lot ${data.supplierLot} of ${material.code} from ${supplier.code} was already received as ${existing[0].internal_lot}`, 'supplierLot');
		const seed = planIn.seed ?? randomInt(0, 2 ** 32);
		const { sampled, ...plan } = makePlan({ containers: data.containers, kind: planIn.kind, seed });
		const stored: StoredPlan = {
			...plan,
			label: PLAN_LABELS[plan.kind],
			justification: planIn.kind === 'every' ? (justification || null) : justification,
			policy: material.sampling_policy,
			replicates: Number(material.replicates ?? 1),
			supplierStatus: supplier.status
		};
		const flag = supplier.status === 'blocked' || supplier.status === 'on-watch' ? supplier.status : null;
		const [{ seq }] = await sequelize().query<{ seq: string }>("SELECT nextval('internal_lot_seq') AS seq", { type: QueryTypes.SELECT, transaction: tx });
		const internalLot = `QL-${data.receivedAt.slice(0, 4)}-${String(seq).padStart(5, '0')}`;
		const [row] = await sequelize().query<{ id: number }>(
			`INSERT INTO lots (internal_lot, material_id, supplier_id, supplier_lot, containers, received_at, plan, sampled, supplier_flag, created_by)
			 VALUES (:internalLot, :materialId, :supplierId, :supplierLot, :containers, :receivedAt, :plan, ARRAY[:sampled]::integer[], :flag, :createdBy) RETURNING id`,
			{
				replacements: {
					internalLot,
					materialId: material.id,
					supplierId: supplier.id,
					supplierLot: data.supplierLot,
					containers: data.containers,
					receivedAt: data.receivedAt,
					plan: JSON.stringify(stored),
					sampled,
					flag,
					createdBy: actor.id
				},
				type: QueryTypes.SELECT,
				transaction: tx
			}
		);
		const id = Number(row.id);
		await audit.record(tx, actor, {
			action: 'lot.received',
			entity: 'lot',
			entityId: id,
			after: { internalLot, material: material.code, supplier: supplier.code, supplierLot: data.supplierLot, containers: data.containers, receivedAt: data.receivedAt, plan: { ...stored, sampled }, supplierFlag: flag },
			reason: reason ?? justification ?? undefined
		});
		return get(id, tx);
	});
}

// ---------- reading ----------

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

export async function lotRow(id: number, tx?: Transaction, lock = false): Promise<LotRow> {
	if (!Number.isInteger(id) || id < 1) throw notFound(`Lot ${id}`);
	const rows = await sequelize().query<LotRow>(
		`SELECT id, internal_lot, material_id, supplier_id, supplier_lot, containers, to_char(received_at, 'YYYY-MM-DD') AS received_at, plan, sampled,
		        status, identity, supplier_flag, created_by, created_at FROM lots WHERE id = :id${lock ? ' FOR UPDATE' : ''}`,
		{ replacements: { id }, type: QueryTypes.SELECT, transaction: tx }
	);
	if (!rows[0]) throw notFound(`Lot ${id}`);
	return rows[0];
}

/** A lot by its id or its internal lot number. */
export async function resolve(idOrInternal: string | number): Promise<number> {
	const text = String(idOrInternal).trim();
	if (/^\d+$/.test(text)) return Number(text);
	const rows = await sequelize().query<{ id: number }>('SELECT id FROM lots WHERE internal_lot = upper(:t)', { replacements: { t: text }, type: QueryTypes.SELECT });
	if (!rows[0]) throw notFound(`Lot ${text}`);
	return Number(rows[0].id);
}

export interface ModelStatsView {
	t2: number | null;
	t2Limit: number | null;
	spe: number | null;
	speLimit: number | null;
	h: number | null;
	v: number | null;
	c: number | null;
	cCrit: number | null;
	cOutlier: number | null;
	accepted: boolean;
	scores: number[];
}

export interface LevelView {
	node: string[];
	method: string;
	chosen: string | null;
	accepted: string[];
	ambiguous: boolean;
	reason: string | null;
	/** c/c_crit per child (one-class) or the classifier's score per child. */
	children: { name: string; ratio: number | null; score: number | null; accepted: boolean }[];
}

function levelView(l: LevelEvidence): LevelView {
	return {
		node: l.node,
		method: l.method,
		chosen: l.chosen,
		accepted: l.accepted,
		ambiguous: l.ambiguous,
		reason: l.reason,
		children: l.children.map((c) => {
			const st = l.stats?.[c];
			const ratio = st && typeof st.c === 'number' && typeof st.cCrit === 'number' ? st.c / st.cCrit : null;
			return { name: c, ratio, score: l.classifier?.scores?.[c] ?? null, accepted: l.accepted.includes(c) || l.chosen === c };
		})
	};
}

export interface ScanView {
	id: number;
	container: number;
	verdict: ScanVerdict;
	profile: string | null;
	ambiguous: boolean;
	reason: string | null;
	/** A valid scan whose result counts for its container: every valid scan does, until an approved invalidation. */
	counts: boolean;
	/** null, or the approved invalidation of this scan. */
	invalidated: containerResults.Invalidated | null;
	/** The latest invalidation proposal of this scan in any state (proposed, approved, refused), for the lot page. */
	invalidation: containerResults.InvalidationView | null;
	statistics: { family: ModelStatsView | null; classes: Record<string, ModelStatsView> } | null;
	/** Model tree: the names chosen from level 1 down, and the result named along it (e.g. "suspect › diluted › starch"). */
	path: string[];
	pathLabel: string;
	/** Evidence per level walked (one-class: c/c_crit per child; discriminant: the classifier's scores). */
	levels: LevelView[];
	/** For a not-this-material scan: the other materials it resembles (evidence only). */
	identification: (Identification & { text: string | null }) | null;
	modelVersion: { id: number; label: string } | null;
	spectrumId: number;
	fileName: string;
	title: string | null;
	sha256: string;
	format: string;
	instrument: string | null;
	createdBy: string | null;
	createdAt: string;
	rescreenOf: number | null;
}

export interface ContainerView {
	number: number;
	sampled: boolean;
	/** The latest scan that counts for this container, if any. */
	countedScanId: number | null;
	/** The container's result under the result policy (src/lib/analysis/container-result.ts); null if not sampled and never scanned. */
	result: containerResults.ContainerResultWord | null;
	/** Same as result (kept for older callers). */
	verdict: ScanVerdict | 'awaiting-scan' | null;
	profile: string | null;
	/** The result is final: genuine with every replicate done, or failing. */
	decided: boolean;
	replicates: { done: number; required: number };
	/** Some valid scan of it was ever non-genuine (even if invalidated since). */
	everFailed: boolean;
	scanCount: number;
	/** Every scan of the container, in upload order. */
	scans: ScanView[];
}

const finite = (x: unknown) => (typeof x === 'number' && Number.isFinite(x) ? x : null);
function statsView(s: Record<string, unknown> | null | undefined): ModelStatsView | null {
	if (!s) return null;
	return {
		t2: finite(s.t2),
		t2Limit: finite(s.t2Limit),
		spe: finite(s.spe),
		speLimit: finite(s.speLimit),
		h: finite(s.h),
		v: finite(s.v),
		c: finite(s.c),
		cCrit: finite(s.cCrit),
		cOutlier: finite(s.cOutlier),
		accepted: s.accepted === true,
		scores: Array.isArray(s.scores) ? (s.scores as number[]) : []
	};
}

/** The outcome shown in the lot header: identity, what it means, and which containers fail and why. */
export function outcomeOf(status: LotStatus, identity: Identity, sampledContainers: Pick<ContainerView, 'number' | 'result' | 'profile' | 'decided' | 'replicates' | 'scans'>[], replicates = 1) {
	const failures = sampledContainers
		.filter((c) => c.decided && c.result !== 'genuine')
		.map((c) => {
			const decisive = [...c.scans].reverse().find((s) => s.counts && s.verdict === c.result);
			return { container: c.number, verdict: c.result as ScanVerdict, profile: c.profile, ambiguous: decisive?.ambiguous ?? false, reason: decisive?.reason ?? null };
		});
	const waiting = sampledContainers.filter((c) => !c.decided).map((c) => c.number);
	const sampledCount = sampledContainers.length;
	const investigation = failures.some((f) => f.verdict === 'unknown' || f.verdict === 'not-this-material');
	let summary: string;
	if (identity === 'meets') summary = `Meets identity: every sampled container is genuine${replicates > 1 ? ` in all ${replicates} replicates` : ''}.`;
	else if (identity === 'fails')
		summary = `Fails identity, quarantine recommended: ${failures.map((f) => `container ${f.container} ${f.verdict}${f.profile ? ` (${f.profile})` : ''}`).join('; ')}.`;
	else if (identity === 'not-screened') summary = 'Not screened: the material has no approved model version, so the lot cannot go forward.';
	else
		summary = `Awaiting scans: ${waiting.length} of ${sampledCount} sampled container${sampledCount === 1 ? '' : 's'} still need${waiting.length === 1 ? 's' : ''} ${replicates > 1 ? `${replicates} genuine replicate scans or a failing one` : 'a valid scan'}.`;
	return {
		status,
		identity,
		summary,
		failures,
		waiting,
		investigation,
		// USP NIR chapter: a result outside the model calls for further testing, not an automatic rejection.
		investigationNote: investigation ? 'Unknown and not-this-material results call for investigation (further testing) before any decision; they are not an automatic rejection.' : null
	};
}

/** The lot with its plan, containers and every scan (statistics without per-variable contributions). */
export async function get(idOrInternal: number | string, tx?: Transaction) {
	const id = typeof idOrInternal === 'number' ? idOrInternal : await resolve(idOrInternal);
	const lot = await lotRow(id, tx);
	const [meta] = await sequelize().query<Record<string, unknown>>(
		`SELECT m.code AS material_code, m.name AS material_name, m.technique, m.sampling_policy,
		        s.code AS supplier_code, s.name AS supplier_name, s.status AS supplier_status, u.name AS created_by_name
		   FROM materials m, suppliers s LEFT JOIN users u ON u.id = :createdBy WHERE m.id = :m AND s.id = :s`,
		{ replacements: { m: lot.material_id, s: lot.supplier_id, createdBy: lot.created_by ?? 0 }, type: QueryTypes.SELECT, transaction: tx }
	);
	const scanRows = await sequelize().query<Record<string, unknown>>(
		`SELECT sc.id, sc.container, sc.verdict, sc.profile, sc.ambiguous, sc.reason, sc.created_at, sc.rescreen_of, sc.spectrum_id,
		        sc.result->'family' AS family, sc.result->'classes' AS classes,
		        sc.result->'path' AS path, sc.result->'levels' AS levels, sc.result->'identification' AS identification,
		        sc.model_version_id, mv.version AS model_version, sp.file_name, sp.title, sp.sha256, sp.format,
		        i.name AS instrument, u.name AS created_by
		   FROM scans sc JOIN spectra sp ON sp.id = sc.spectrum_id
		   LEFT JOIN model_versions mv ON mv.id = sc.model_version_id
		   LEFT JOIN instruments i ON i.id = sc.instrument_id
		   LEFT JOIN users u ON u.id = sc.created_by
		  WHERE sc.lot_id = :id ORDER BY sc.container, sc.id`,
		{ replacements: { id }, type: QueryTypes.SELECT, transaction: tx }
	);
	const invalidations = await containerResults.forLot(id, tx);
	const invalidationOf = containerResults.latestByScan(invalidations);
	const approved = new Set(invalidations.filter((v) => v.state === 'approved').map((v) => v.scanId));
	const replicates = await containerResults.replicatesOf(id, tx);
	const countedIds = new Set<number>();
	const latestValid = new Map<number, number>();
	for (const r of scanRows) {
		if (!(VALID_VERDICTS as readonly string[]).includes(r.verdict as string) || approved.has(Number(r.id))) continue;
		latestValid.set(Number(r.container), Number(r.id));
		countedIds.add(Number(r.id));
	}
	const materialCode = meta.material_code as string;
	const scans: ScanView[] = scanRows.map((r) => {
		const classes = (r.classes ?? null) as Record<string, Record<string, unknown>> | null;
		const family = (r.family ?? null) as Record<string, unknown> | null;
		return {
			id: Number(r.id),
			container: Number(r.container),
			verdict: r.verdict as ScanVerdict,
			profile: (r.profile as string | null) ?? null,
			ambiguous: r.ambiguous === true,
			reason: (r.reason as string | null) ?? null,
			counts: countedIds.has(Number(r.id)),
			invalidated: containerResults.invalidatedOf(invalidationOf.get(Number(r.id))),
			invalidation: invalidationOf.get(Number(r.id)) ?? null,
			statistics: family || classes ? { family: statsView(family), classes: Object.fromEntries(Object.entries(classes ?? {}).map(([k, s]) => [k, statsView(s)!])) } : null,
			path: (r.path as string[] | null) ?? [],
			pathLabel: describePath(r.verdict as Verdict, (r.path as string[] | null) ?? [], (r.levels as LevelEvidence[] | null) ?? []),
			levels: ((r.levels as LevelEvidence[] | null) ?? []).map(levelView),
			identification: r.identification ? { ...(r.identification as Identification), text: identificationText(r.identification as Identification, materialCode) } : null,
			modelVersion: r.model_version_id ? { id: Number(r.model_version_id), label: `${materialCode} v${r.model_version}` } : null,
			spectrumId: Number(r.spectrum_id),
			fileName: displayFileName(r.file_name as string),
			title: (r.title as string | null) ?? null,
			sha256: r.sha256 as string,
			format: r.format as string,
			instrument: (r.instrument as string | null) ?? null,
			createdBy: (r.created_by as string | null) ?? null,
			createdAt: new Date(r.created_at as Date).toISOString(),
			rescreenOf: r.rescreen_of ? Number(r.rescreen_of) : null
		};
	});
	const sampledSet = new Set(lot.sampled);
	const byContainer = new Map<number, ScanView[]>();
	for (const s of scans) byContainer.set(s.container, [...(byContainer.get(s.container) ?? []), s]);
	const numbers = Array.from({ length: lot.containers }, (_, i) => i + 1);
	const results = containerResults.resultsOf(scans, invalidations, numbers, replicates);
	const containers: ContainerView[] = numbers.map((number) => {
		const own = byContainer.get(number) ?? [];
		const r = results.get(number)!;
		const shown = own.length || sampledSet.has(number) ? r.result : null;
		return {
			number,
			sampled: sampledSet.has(number),
			countedScanId: latestValid.get(number) ?? null,
			result: shown,
			verdict: shown,
			profile: r.profile,
			decided: r.decided,
			replicates: { done: r.replicatesDone, required: r.replicatesRequired },
			everFailed: r.everFailed,
			scanCount: own.length,
			scans: own
		};
	});
	return {
		id: lot.id,
		internalLot: lot.internal_lot,
		material: { id: lot.material_id, code: materialCode, name: meta.material_name as string, technique: meta.technique as string, samplingPolicy: meta.sampling_policy as string },
		supplier: { id: lot.supplier_id, code: meta.supplier_code as string, name: meta.supplier_name as string, status: meta.supplier_status as string },
		supplierLot: lot.supplier_lot,
		containerCount: lot.containers,
		receivedAt: lot.received_at,
		plan: { ...lot.plan, sampled: lot.sampled },
		sampled: lot.sampled,
		status: lot.status,
		statusLabel: STATUS_LABELS[lot.status],
		identity: lot.identity,
		identityLabel: lot.identity ? IDENTITY_LABELS[lot.identity] : null,
		supplierFlag: lot.supplier_flag,
		supplierFlagText: supplierFlagText(lot.supplier_flag, meta.supplier_code as string),
		closed: isClosed(lot),
		outcome: outcomeOf(lot.status, lot.identity, containers.filter((c) => c.sampled), replicates),
		replicates,
		invalidations,
		/** A release needs two QA signatures: some sampled container ever had a valid non-genuine scan. */
		failingHistory: containers.some((c) => c.sampled && c.everFailed),
		createdBy: (meta.created_by_name as string | null) ?? null,
		createdAt: new Date(lot.created_at).toISOString(),
		containers,
		scans
	};
}
export type LotView = Awaited<ReturnType<typeof get>>;

/** Home queues: lots waiting for scans (technicians) and screened lots waiting for a disposition (QA). */
export async function awaiting(status: 'awaiting-scans' | 'screened', limit = 20) {
	return (await list({ status, sort: 'receivedAt:asc', pageSize: limit })).rows;
}
