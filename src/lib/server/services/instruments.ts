import { can } from '../../permissions';
import { col, fn, where as sqlWhere } from 'sequelize';
import { z } from 'zod';
import { nameText } from '../../validation/text';
import { models, transaction, type Transaction } from '../db';
import type { Instrument, InstrumentToken } from '../db/models';
import { newToken } from '../tokens';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { conflict, forbidden, invalid, notFound, ServiceError } from './errors';

const dateText = z
	.string()
	.regex(/^\d{4}-\d{2}-\d{2}$/, 'Use a date, YYYY-MM-DD')
	.refine((s) => !Number.isNaN(Date.parse(`${s}T00:00:00Z`)) && new Date(`${s}T00:00:00Z`).toISOString().startsWith(s), 'This is not a calendar date');

export const instrumentSchema = z.object({
	name: z.string().trim().regex(/^[A-Za-z0-9][A-Za-z0-9 _.-]{1,39}$/, 'Use 2–40 letters, digits, spaces, dots or dashes'),
	technique: z.enum(['NIR', 'Raman', 'mid-IR']),
	serial: nameText(z.string().trim().min(1, 'Enter the serial number').max(80)),
	axisUnit: z.enum(['nm', 'cm-1', 'um']),
	qualificationDue: dateText,
	/** The day the first performance checks are due (./instrument-checks.ts); by default 30 days after registration. */
	checksDueFrom: dateText.optional()
});
export type InstrumentInput = z.input<typeof instrumentSchema>;

/** What an admin may change later; the name stays, since files and libraries refer to instruments by name. */
export const instrumentUpdateSchema = z.object({
	technique: z.enum(['NIR', 'Raman', 'mid-IR']).optional(),
	serial: nameText(z.string().trim().min(1, 'Enter the serial number').max(80)).optional(),
	axisUnit: z.enum(['nm', 'cm-1', 'um']).optional(),
	qualificationDue: dateText.optional(),
	active: z.boolean().optional()
});
export type InstrumentUpdate = z.input<typeof instrumentUpdateSchema>;

export const tokenLabelSchema = nameText(z.string().trim().min(2, 'Give the token a label, e.g. where it is installed').max(80));

export const toPublic = (i: Instrument) => ({
	id: i.id,
	name: i.name,
	technique: i.technique,
	serial: i.serial,
	axisUnit: i.axisUnit,
	qualificationDue: i.qualificationDue,
	active: i.active
});
export type PublicInstrument = ReturnType<typeof toPublic>;

const tokenPublic = (t: InstrumentToken) => ({
	id: t.id,
	instrumentId: t.instrumentId,
	label: t.label,
	prefix: t.prefix,
	createdBy: t.createdBy,
	createdAt: t.createdAt instanceof Date ? t.createdAt.toISOString() : String(t.createdAt),
	revokedAt: t.revokedAt ? (t.revokedAt instanceof Date ? t.revokedAt.toISOString() : String(t.revokedAt)) : null
});
export type PublicToken = ReturnType<typeof tokenPublic>;

// Names compare case-insensitively, without LIKE wildcards (names may hold an underscore).
const byName = (name: string) => sqlWhere(fn('lower', col('name')), name.toLowerCase());

function requireAdmin(actor: Actor, what: string) {
	if (!hasRole(actor, can.administer)) throw forbidden(`Only an admin ${what}`);
}

/** Today as YYYY-MM-DD in the server's time zone: a due date is valid through that whole day. */
export function today(now = new Date()) {
	const p = (n: number) => String(n).padStart(2, '0');
	return `${now.getFullYear()}-${p(now.getMonth() + 1)}-${p(now.getDate())}`;
}

export async function create(actor: Actor, input: InstrumentInput, reason?: string) {
	requireAdmin(actor, 'registers instruments');
	const data = instrumentSchema.parse(input);
	return transaction(async (tx) => {
		const { Instrument } = models();
		if (await Instrument.findOne({ where: byName(data.name), transaction: tx })) throw conflict(`An instrument named ${data.name} exists`, 'name');
		const instrument = await Instrument.create(data, { transaction: tx });
		await audit.record(tx, actor, { action: 'instrument.created', entity: 'instrument', entityId: instrument.id, after: toPublic(instrument), reason });
		return toPublic(instrument);
	});
}

export async function list() {
	return (await models().Instrument.findAll({ order: [['name', 'ASC']] })).map(toPublic);
}

/** By id, or by name (case-insensitive), as forms and instrument software send either. */
export async function get(ref: number | string, tx?: Transaction) {
	const { Instrument } = models();
	const text = String(ref).trim();
	const row = /^\d+$/.test(text)
		? await Instrument.findByPk(Number(text), { transaction: tx })
		: await Instrument.findOne({ where: byName(text), transaction: tx });
	if (!row) throw notFound(`Instrument ${text}`);
	return toPublic(row);
}

export async function update(actor: Actor, id: number, input: InstrumentUpdate, reason?: string) {
	requireAdmin(actor, 'changes instruments');
	const data = instrumentUpdateSchema.parse(input);
	if (!Object.keys(data).length) throw invalid('Nothing to change: send technique, serial, axisUnit, qualificationDue or active');
	return transaction(async (tx) => {
		const row = await models().Instrument.findByPk(id, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!row) throw notFound(`Instrument ${id}`);
		const before = toPublic(row);
		await row.update(data, { transaction: tx });
		const after = toPublic(row);
		await audit.record(tx, actor, { action: 'instrument.updated', entity: 'instrument', entityId: id, before, after, reason });
		return after;
	});
}

/**
 * Refuses an instrument as a source of spectra when it is deactivated or past its qualification due date
 * (the NIR and Raman chapters of the USP expect a qualified instrument before use). Returns it otherwise.
 */
export async function assertQualified(instrumentId: number, tx?: Transaction, now = new Date()) {
	const row = await models().Instrument.findByPk(instrumentId, { transaction: tx });
	if (!row) throw invalid(`Instrument ${instrumentId} is not registered`, 'instrument');
	if (!row.active) throw new ServiceError(422, 'instrument-inactive', `Instrument ${row.name} is deactivated and cannot be a source of spectra`, 'instrument');
	const due = String(row.qualificationDue).slice(0, 10);
	if (due < today(now)) {
		throw new ServiceError(
			422,
			'instrument-not-qualified',
			`Instrument ${row.name} was due for qualification on ${due}: spectra from it are refused until it is requalified and an admin records the new due date`,
			'instrument'
		);
	}
	return toPublic(row);
}

/** Creates an API token for an instrument; the token text is returned this once and only its hash is kept. */
export async function createToken(actor: Actor, instrumentId: number, label: string) {
	requireAdmin(actor, 'creates instrument tokens');
	const { label: cleanLabel } = z.object({ label: tokenLabelSchema }).parse({ label });
	if (actor.id == null) throw forbidden('A token is created by a signed-in admin');
	return transaction(async (tx) => {
		const { Instrument, InstrumentToken } = models();
		const instrument = await Instrument.findByPk(instrumentId, { transaction: tx });
		if (!instrument) throw notFound(`Instrument ${instrumentId}`);
		const { token, prefix, hash } = newToken();
		const row = await InstrumentToken.create({ instrumentId, label: cleanLabel, prefix, tokenHash: hash, createdBy: actor.id }, { transaction: tx });
		const shown = tokenPublic(row);
		await audit.record(tx, actor, { action: 'instrument.token-created', entity: 'instrument', entityId: instrumentId, after: { tokenId: row.id, label: cleanLabel, prefix } });
		return { ...shown, token, instrument: instrument.name };
	});
}

export async function revokeToken(actor: Actor, tokenId: number, reason?: string) {
	requireAdmin(actor, 'revokes instrument tokens');
	return transaction(async (tx) => {
		const row = await models().InstrumentToken.findByPk(tokenId, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!row) throw notFound(`Token ${tokenId}`);
		if (row.revokedAt) throw conflict(`Token ${row.label} (${row.prefix}…) was already revoked`);
		await row.update({ revokedAt: new Date() }, { transaction: tx });
		await audit.record(tx, actor, {
			action: 'instrument.token-revoked',
			entity: 'instrument',
			entityId: row.instrumentId,
			before: { tokenId: row.id, label: row.label, prefix: row.prefix, revokedAt: null },
			after: { tokenId: row.id, revokedAt: row.revokedAt },
			reason
		});
		return tokenPublic(row);
	});
}

export async function listTokens(actor: Actor, instrumentId?: number) {
	requireAdmin(actor, 'sees instrument tokens');
	const rows = await models().InstrumentToken.findAll({
		where: instrumentId != null ? { instrumentId } : {},
		order: [['createdAt', 'DESC']]
	});
	return rows.map(tokenPublic);
}
