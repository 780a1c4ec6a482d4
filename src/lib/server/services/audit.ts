import canonicalize from 'canonicalize';
import { createHash, createHmac } from 'node:crypto';
import { Op, QueryTypes, type Transaction, type WhereOptions } from 'sequelize';
import { auditKey } from '../audit-key';
import { models, runBeforeCommit, sequelize } from '../db';
import type { Actor } from './actor';
import type { AuditAction } from './audit-actions';

export { AUDIT_ACTIONS, type AuditAction } from './audit-actions';
import { cleanText } from './errors';

export const GENESIS_HASH = '0'.repeat(64);
// Any constant works; it serialises appenders so the chain has one order.
const CHAIN_LOCK = 7_401_001;

export interface AuditInput {
	/** One of AUDIT_ACTIONS (audit-actions.ts). */
	action: AuditAction;
	entity: string;
	entityId?: string | number | null;
	before?: unknown;
	after?: unknown;
	reason?: string | null;
}

export interface HashedFields {
	at: string;
	actorId: number | null;
	actorLabel: string;
	action: string;
	entity: string;
	entityId: string | null;
	before: unknown;
	after: unknown;
	reason: string | null;
	requestId: string | null;
}

/**
 * hash = HMAC-SHA-256(key, previous hash + RFC 8785 canonical JSON of the row's recorded fields), keyed by
 * LOTGATE_AUDIT_KEY, which the database never sees: an edit cannot be hidden by recomputing the chain.
 * Rows written before the key was introduced (id ≤ audit_chain.legacy_until) keep their plain SHA-256 (`key` null).
 */
export function chainHash(prevHash: string, fields: HashedFields, key: Buffer | null): string {
	const text = prevHash + canonicalize(fields);
	return (key ? createHmac('sha256', key) : createHash('sha256')).update(text).digest('hex');
}

/**
 * Exactly what PostgreSQL will hand back: a JSON round trip (Dates become strings, undefined drops) and every string
 * made well-formed (the driver sends an unpaired surrogate as U+FFFD). The boundary refuses such text; this keeps the
 * hash equal to the stored row even if some path forgot to.
 */
function storable(value: unknown): unknown {
	if (value === undefined) return null;
	return JSON.parse(JSON.stringify(value), (_k, v) => (typeof v === 'string' ? wellFormed(v) : v));
}
const wellFormed = (s: string) => s.replace(/[\uD800-\uDBFF](?![\uDC00-\uDFFF])|(?<![\uD800-\uDBFF])[\uDC00-\uDFFF]/g, '\uFFFD');

const queued = new WeakMap<Transaction, { actor: Actor; input: AuditInput }[]>();

/**
 * Records one audit event in the caller's transaction: the change and its record commit together.
 * In a transaction from `transaction()` the events are appended at its end, so the chain's lock is held only
 * for the append and the commit, not for the work before it (concurrent uploads would otherwise queue on it).
 */
export async function record(tx: Transaction, actor: Actor, input: AuditInput): Promise<void> {
	// The last net for text that reached a service without a schema: refusing here rolls the whole change back.
	if (input.reason != null) input = { ...input, reason: cleanText(String(input.reason), 'reason', 'multiline') };
	const event = { actor, input: { ...input, before: storable(input.before), after: storable(input.after) } };
	const pending = queued.get(tx);
	if (pending) {
		pending.push(event);
		return;
	}
	const events = [event];
	if (runBeforeCommit(tx, () => append(tx, events))) {
		queued.set(tx, events);
		return;
	}
	await append(tx, events);
}

const COLUMNS = 'id, at, actor_id, actor_label, action, entity, entity_id, before, after, reason, request_id, prev_hash, hash';

/** The hashed fields of a row as PostgreSQL returns it: the one definition used to write and to verify. */
function fieldsOf(row: Record<string, unknown>): HashedFields {
	return {
		at: (row.at as Date).toISOString(),
		actorId: row.actor_id == null ? null : Number(row.actor_id),
		actorLabel: row.actor_label as string,
		action: row.action as string,
		entity: row.entity as string,
		entityId: (row.entity_id as string | null) ?? null,
		before: row.before ?? null,
		after: row.after ?? null,
		reason: (row.reason as string | null) ?? null,
		requestId: (row.request_id as string | null) ?? null
	};
}

/** Takes the chain lock, then writes the events in order, each hashed onto the one before. */
async function append(tx: Transaction, events: { actor: Actor; input: AuditInput }[]) {
	const db = sequelize();
	const key = auditKey();
	await db.query('SELECT pg_advisory_xact_lock(:key)', { replacements: { key: CHAIN_LOCK }, transaction: tx });
	const [last] = await db.query<{ hash: string }>('SELECT hash FROM audit_events ORDER BY id DESC LIMIT 1', { type: QueryTypes.SELECT, transaction: tx });
	let prevHash = last?.hash ?? GENESIS_HASH;
	// Every event of the transaction in one INSERT: the chain's lock is held for fewer round trips (issue 16 §2).
	const rows = events.map(({ actor, input }) => {
		const fields: HashedFields = {
			at: new Date().toISOString(),
			actorId: actor.id,
			actorLabel: wellFormed(actor.label),
			action: input.action,
			entity: input.entity,
			entityId: input.entityId == null ? null : wellFormed(String(input.entityId)),
			before: input.before ?? null,
			after: input.after ?? null,
			reason: input.reason == null ? null : wellFormed(input.reason),
			requestId: actor.requestId ?? null
		};
		const row = { fields, action: input.action, prevHash, hash: chainHash(prevHash, fields, key) };
		prevHash = row.hash;
		return row;
	});
	const replacements: Record<string, unknown> = {};
	const tuples = rows.map(({ fields, prevHash: prev, hash }, i) => {
		Object.assign(replacements, {
			[`at${i}`]: fields.at,
			[`actorId${i}`]: fields.actorId,
			[`actorLabel${i}`]: fields.actorLabel,
			[`action${i}`]: fields.action,
			[`entity${i}`]: fields.entity,
			[`entityId${i}`]: fields.entityId,
			[`before${i}`]: fields.before == null ? null : JSON.stringify(fields.before),
			[`after${i}`]: fields.after == null ? null : JSON.stringify(fields.after),
			[`reason${i}`]: fields.reason,
			[`requestId${i}`]: fields.requestId,
			[`prevHash${i}`]: prev,
			[`hash${i}`]: hash
		});
		return `(:at${i}, :actorId${i}, :actorLabel${i}, :action${i}, :entity${i}, :entityId${i}, CAST(:before${i} AS jsonb), CAST(:after${i} AS jsonb), :reason${i}, :requestId${i}, :prevHash${i}, :hash${i})`;
	});
	const stored = await db.query<Record<string, unknown>>(
		`INSERT INTO audit_events (at, actor_id, actor_label, action, entity, entity_id, before, after, reason, request_id, prev_hash, hash)
		 VALUES ${tuples.join(', ')} RETURNING ${COLUMNS}`,
		{ replacements, type: QueryTypes.SELECT, transaction: tx }
	);
	// The chain runs in id order: the rows must have taken their ids in the order they were hashed.
	const byId = [...stored].sort((x, y) => Number(x.id) - Number(y.id));
	if (byId.length !== rows.length || byId.some((r, i) => r.hash !== rows[i].hash)) {
		throw new Error('audit events were not stored in the order they were chained; nothing was committed');
	}
	// The hash must cover what was stored, not what was meant: checked on each row as read back, or nothing commits.
	byId.forEach((r, i) => {
		if (chainHash(rows[i].prevHash, fieldsOf(r), key) !== rows[i].hash) {
			throw new Error(`audit event "${rows[i].action}" would be stored differently from how it was hashed; nothing was committed`);
		}
	});
}

export interface BrokenRow {
	id: number;
	reason: string;
}

export interface ChainReport {
	ok: boolean;
	/** Rows read. */
	checked: number;
	/** Every row that fails, in id order (the list is capped at `listLimit`; `brokenCount` counts them all). */
	broken: BrokenRow[];
	brokenCount: number;
	/** The first broken row (kept for callers that name only one). */
	firstBroken?: BrokenRow;
	head: { seq: number; hash: string } | null;
	legacyUntil: number;
	/** The comparison with the latest checkpoint, when one was given. */
	checkpoint?: { seq: number; head: string; at: string; ok: boolean; reason?: string };
}

export interface ChainAnchor {
	seq: number;
	head: string;
	at: string;
	legacyUntil: number;
}

/** Where the legacy (unkeyed) prefix of the chain ends; rows after it are HMAC-chained. */
export async function legacyUntil(): Promise<number> {
	const rows = await sequelize().query<{ legacy_until: string }>('SELECT legacy_until FROM audit_chain WHERE id = 1', { type: QueryTypes.SELECT });
	return rows[0] ? Number(rows[0].legacy_until) : 0;
}

/** The newest row: what a checkpoint records and what a certificate prints. */
export async function head(tx?: Transaction): Promise<{ seq: number; hash: string } | null> {
	const [row] = await sequelize().query<{ id: string; hash: string }>('SELECT id, hash FROM audit_events ORDER BY id DESC LIMIT 1', { type: QueryTypes.SELECT, transaction: tx });
	return row ? { seq: Number(row.id), hash: row.hash } : null;
}

/**
 * Recomputes the whole chain in id order and reports every row that does not match, carrying on past each break
 * (the next row is checked against the stored hash before it). With a checkpoint, also requires that the row it names
 * is still there with the same hash: a deleted tail or an emptied table fails even though what is left links up.
 */
export async function verifyChain(options: { checkpoint?: ChainAnchor | null; listLimit?: number; key?: Buffer } = {}): Promise<ChainReport> {
	const { checkpoint = null, listLimit = 10_000 } = options;
	const key = options.key ?? auditKey();
	const legacy = await legacyUntil();
	const batch = 2000;
	const broken: BrokenRow[] = [];
	let brokenCount = 0;
	const fail = (id: number, reason: string) => {
		brokenCount++;
		if (broken.length < listLimit) broken.push({ id, reason });
	};
	let prevHash = GENESIS_HASH;
	let checked = 0;
	let afterId = 0;
	let head: ChainReport['head'] = null;
	let atCheckpoint: string | null = null;
	for (;;) {
		const rows = await sequelize().query<Record<string, unknown>>(`SELECT ${COLUMNS} FROM audit_events WHERE id > :afterId ORDER BY id LIMIT :batch`, {
			replacements: { afterId, batch },
			type: QueryTypes.SELECT
		});
		if (!rows.length) break;
		for (const row of rows) {
			const id = Number(row.id);
			const stored = row.hash as string;
			if (row.prev_hash !== prevHash) {
				fail(id, checked === 0 && prevHash === GENESIS_HASH ? 'it is the first row left but does not start the chain (rows before it were deleted)' : 'its previous-hash does not match the row before it (a row was deleted, inserted or reordered)');
			} else if (chainHash(prevHash, fieldsOf(row), id <= legacy ? null : key) !== stored) {
				fail(id, 'its content does not match its stored hash (changed after it was written, or the chain was recomputed without the audit key)');
			}
			if (checkpoint && id === checkpoint.seq) atCheckpoint = stored;
			prevHash = stored;
			afterId = id;
			head = { seq: id, hash: stored };
			checked++;
		}
	}
	const report: ChainReport = { ok: brokenCount === 0, checked, broken, brokenCount, firstBroken: broken[0], head, legacyUntil: legacy };
	if (checkpoint) {
		let reason: string | undefined;
		if (checkpoint.legacyUntil !== legacy) reason = `the unkeyed prefix now ends at #${legacy}, but the checkpoint recorded #${checkpoint.legacyUntil}`;
		else if (checkpoint.seq === 0) reason = undefined; // checkpoint of an empty trail: nothing to require yet
		else if (!head) reason = `the audit table is empty, but the checkpoint of ${checkpoint.at} recorded ${checkpoint.seq} as its last event (truncated)`;
		else if (head.seq < checkpoint.seq) reason = `the last event is #${head.seq}, but the checkpoint of ${checkpoint.at} recorded #${checkpoint.seq} (events at the end were deleted)`;
		else if (atCheckpoint == null) reason = `event #${checkpoint.seq}, the head at the checkpoint of ${checkpoint.at}, is missing`;
		else if (atCheckpoint !== checkpoint.head) reason = `event #${checkpoint.seq} no longer has the hash the checkpoint of ${checkpoint.at} recorded (the chain was rewritten)`;
		report.checkpoint = { seq: checkpoint.seq, head: checkpoint.head, at: checkpoint.at, ok: !reason, ...(reason ? { reason } : {}) };
		if (reason) report.ok = false;
	}
	return report;
}

export interface AuditQuery {
	actor?: string;
	entity?: string;
	action?: string;
	from?: Date;
	to?: Date;
	page?: number;
	pageSize?: number;
}

export async function list(query: AuditQuery) {
	const { AuditEvent } = models();
	const where: WhereOptions = {};
	const and: WhereOptions[] = [];
	if (query.actor) and.push({ actorLabel: { [Op.iLike]: `%${query.actor}%` } });
	if (query.entity) and.push({ entity: query.entity });
	if (query.action) and.push({ action: { [Op.iLike]: `%${query.action}%` } });
	if (query.from) and.push({ at: { [Op.gte]: query.from } });
	if (query.to) and.push({ at: { [Op.lt]: query.to } });
	if (and.length) Object.assign(where, { [Op.and]: and });
	const pageSize = Math.min(Math.max(query.pageSize ?? 50, 1), 5000);
	const page = Math.max(query.page ?? 1, 1);
	const { rows, count } = await AuditEvent.findAndCountAll({
		where,
		order: [['id', 'DESC']],
		limit: pageSize,
		offset: (page - 1) * pageSize
	});
	return { rows: rows.map((r) => r.get({ plain: true }) as AuditEvent), total: count, page, pageSize };
}

export async function entities(): Promise<string[]> {
	const rows = await sequelize().query<{ entity: string }>('SELECT DISTINCT entity FROM audit_events ORDER BY entity', {
		type: QueryTypes.SELECT
	});
	return rows.map((r) => r.entity);
}

type AuditEvent = import('../db/models').AuditEvent;
