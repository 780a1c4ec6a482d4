import { can } from '../../permissions';
import { Op } from 'sequelize';
import { z } from 'zod';
import { nameText } from '../../validation/text';
import { models, transaction } from '../db';
import type { Supplier, SupplierStatus } from '../db/models';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { conflict, forbidden, invalid, notFound } from './errors';

export const SUPPLIER_STATUSES: SupplierStatus[] = ['qualified', 'on-watch', 'blocked'];

export const supplierSchema = z.object({
	code: z
		.string()
		.trim()
		.toUpperCase()
		.regex(/^[A-Z0-9][A-Z0-9-]{1,19}$/, 'Use 2–20 capital letters, digits or dashes'),
	name: nameText(z.string().trim().min(2, 'Enter the supplier name').max(160)),
	contacts: z.array(z.string().trim().email('Each contact must be an e-mail address')).max(20).default([]),
	status: z.enum(['qualified', 'on-watch', 'blocked']).default('qualified')
});
export type SupplierInput = z.input<typeof supplierSchema>;

export function toPublic(s: Supplier) {
	return { id: s.id, code: s.code, name: s.name, contacts: s.contacts, status: s.status, createdAt: s.createdAt.toISOString() };
}
export type PublicSupplier = ReturnType<typeof toPublic>;

function requireManager(actor: Actor) {
	if (!hasRole(actor, can.manageSuppliers)) throw forbidden('Only procurement or an admin manages suppliers');
}

export async function create(actor: Actor, input: SupplierInput, reason?: string) {
	requireManager(actor);
	const data = supplierSchema.parse(input);
	return transaction(async (tx) => {
		const { Supplier } = models();
		if (await Supplier.findOne({ where: { code: data.code }, transaction: tx })) {
			throw conflict(`Supplier code ${data.code} is already used`, 'code');
		}
		const supplier = await Supplier.create(data, { transaction: tx });
		await audit.record(tx, actor, { action: 'supplier.created', entity: 'supplier', entityId: supplier.id, after: toPublic(supplier), reason });
		return toPublic(supplier);
	});
}

export async function list(options: { q?: string; status?: string; page?: number; pageSize?: number; sort?: string } = {}) {
	const { Supplier } = models();
	const where: Record<string | symbol, unknown> = {};
	if (options.q) where[Op.or] = [{ code: { [Op.iLike]: `%${options.q}%` } }, { name: { [Op.iLike]: `%${options.q}%` } }];
	if (options.status && (SUPPLIER_STATUSES as string[]).includes(options.status)) where.status = options.status;
	const pageSize = Math.min(Math.max(options.pageSize ?? 50, 1), 500);
	const page = Math.max(options.page ?? 1, 1);
	const [column, direction] = (options.sort ?? 'code').split(':');
	const order: [string, string][] = [[['code', 'name', 'status', 'createdAt'].includes(column) ? column : 'code', direction === 'desc' ? 'DESC' : 'ASC']];
	const { rows, count } = await Supplier.findAndCountAll({ where, order, limit: pageSize, offset: (page - 1) * pageSize });
	return { rows: rows.map(toPublic), total: count, page, pageSize };
}

export async function get(idOrCode: number | string) {
	const { Supplier } = models();
	const supplier =
		typeof idOrCode === 'number' || /^\d+$/.test(idOrCode)
			? await Supplier.findByPk(Number(idOrCode))
			: await Supplier.findOne({ where: { code: idOrCode.toUpperCase() } });
	if (!supplier) throw notFound(`Supplier ${idOrCode}`);
	return supplier;
}

export async function update(actor: Actor, id: number, input: Partial<Pick<SupplierInput, 'name' | 'contacts'>>, reason?: string) {
	requireManager(actor);
	const data = supplierSchema.pick({ name: true, contacts: true }).partial().parse(input);
	return transaction(async (tx) => {
		const supplier = await models().Supplier.findByPk(id, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!supplier) throw notFound(`Supplier ${id}`);
		const before = toPublic(supplier);
		await supplier.update(data, { transaction: tx });
		await audit.record(tx, actor, { action: 'supplier.updated', entity: 'supplier', entityId: id, before, after: toPublic(supplier), reason });
		return toPublic(supplier);
	});
}

export async function setStatus(actor: Actor, id: number, status: SupplierStatus, reason: string) {
	requireManager(actor);
	const parsed = supplierSchema.shape.status.parse(status);
	if (!reason?.trim()) throw invalid('A status change needs a reason', 'reason');
	return transaction(async (tx) => {
		const supplier = await models().Supplier.findByPk(id, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!supplier) throw notFound(`Supplier ${id}`);
		const before = { status: supplier.status };
		await supplier.update({ status: parsed }, { transaction: tx });
		await audit.record(tx, actor, { action: 'supplier.status-changed', entity: 'supplier', entityId: id, before, after: { status: parsed }, reason });
		return toPublic(supplier);
	});
}
