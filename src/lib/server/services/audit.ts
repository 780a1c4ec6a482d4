import canonicalize from 'canonicalize';
import { createHash } from 'node:crypto';
import { Op, QueryTypes, type Transaction, type WhereOptions } from 'sequelize';
import { models, runBeforeCommit, sequelize } from '../db';
import type { Actor } from './actor';
import { cleanText } from './errors';

export const GENESIS_HASH = '0'.repeat(64);
// Any constant works; it serialises appenders so the chain has one order.
const CHAIN_LOCK = 7_401_001;

export interface AuditInput {
	action: string;
	entity: string;
	entityId?: string | number | null;
	before?: unknown;
	after?: unknown;
	reason?: string | null;
}

interface HashedFields {
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

/** hash = sha256(previous hash + canonical JSON (RFC 8785) of the row's recorded fields). */
export function chainHash(prevHash: string, fields: HashedFields): string {
	return createHash('sha256')
		.update(prevHash + canonicalize(fields))
		.digest('hex');
}

/** JSON round trip so what is hashed equals what jsonb gives back (Dates become strings, undefined drops). */
function plain(value: unknown): unknown {
	return value === undefined ? null : JSON.parse(JSON.stringify(value));
}

const queued = new WeakMap<Transaction, { actor: Actor; input: AuditInput }[]>();

/**
 * Records one audit event in the caller's transaction: the change and its record commit together.
 * In a transaction from `transaction()` the events are appended at its end, so the chain's lock is held only
 * for the append and the commit, not for the work before it (concurrent uploads would otherwise queue on it).
 */
export async function record(tx: Transaction, actor: Actor, input: AuditInput): Promise<void> {
	// The last net for text that reached a service without a schema: refusing here rolls the whole change back.
	if (input.reason != null) input = { ...input, reason: cleanText(String(input.reason), 'reason', 'multiline') };
	const pending = queued.get(tx);
	if (pending) {
		pending.push({ actor, input: { ...input, before: plain(input.before), after: plain(input.after) } });
		return;
	}
	const events = [{ actor, input: { ...input, before: plain(input.before), after: plain(input.after) } }];
	if (runBeforeCommit(tx, () => append(tx, events))) {
		queued.set(tx, events);
		return;
	}
	await append(tx, events);
}

/** Takes the chain lock, then writes the events in order, each hashed onto the one before. */
async function append(tx: Transaction, events: { actor: Actor; input: AuditInput }[]) {
	const { AuditEvent } = models();
	await sequelize().query('SELECT pg_advisory_xact_lock(:key)', { replacements: { key: CHAIN_LOCK }, transaction: tx });
	const last = await AuditEvent.findOne({ order: [['id', 'DESC']], attributes: ['hash'], transaction: tx });
	let prevHash = last?.hash ?? GENESIS_HASH;
	for (const { actor, input } of events) {
		const fields: HashedFields = {
			at: new Date().toISOString(),
			actorId: actor.id,
			actorLabel: actor.label,
			action: input.action,
			entity: input.entity,
			entityId: input.entityId == null ? null : String(input.entityId),
			before: input.before ?? null,
			after: input.after ?? null,
			reason: input.reason ?? null,
			requestId: actor.requestId ?? null
		};
		const hash = chainHash(prevHash, fields);
		await AuditEvent.create({ ...fields, at: new Date(fields.at), prevHash, hash }, { transaction: tx });
		prevHash = hash;
	}
}

export interface ChainReport {
	ok: boolean;
	checked: number;
	firstBroken?: { id: number; reason: string };
}

/** Recomputes the whole chain in id order and names the first row that does not match. */
export async function verifyChain(): Promise<ChainReport> {
	const batch = 2000;
	let prevHash = GENESIS_HASH;
	let checked = 0;
	let afterId = 0;
	for (;;) {
		const rows = await sequelize().query<Record<string, unknown>>(
			`SELECT id, at, actor_id, actor_label, action, entity, entity_id, before, after, reason, request_id, prev_hash, hash
			   FROM audit_events WHERE id > :afterId ORDER BY id LIMIT :batch`,
			{ replacements: { afterId, batch }, type: QueryTypes.SELECT }
		);
		if (!rows.length) return { ok: true, checked };
		for (const row of rows) {
			const id = Number(row.id);
			if (row.prev_hash !== prevHash) {
				return { ok: false, checked, firstBroken: { id, reason: 'its previous-hash does not match the row before it' } };
			}
			const expected = chainHash(prevHash, {
				at: (row.at as Date).toISOString(),
				actorId: (row.actor_id as number | null) ?? null,
				actorLabel: row.actor_label as string,
				action: row.action as string,
				entity: row.entity as string,
				entityId: (row.entity_id as string | null) ?? null,
				before: row.before ?? null,
				after: row.after ?? null,
				reason: (row.reason as string | null) ?? null,
				requestId: (row.request_id as string | null) ?? null
			});
			if (expected !== row.hash) {
				return { ok: false, checked, firstBroken: { id, reason: 'its content does not match its stored hash (changed after it was written)' } };
			}
			prevHash = row.hash as string;
			afterId = id;
			checked++;
		}
	}
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
