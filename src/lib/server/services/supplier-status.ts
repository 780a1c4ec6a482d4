// Supplier status changes (qualified, on watch, blocked) in two steps: procurement requests with a reason, and a QA
import { can } from '../../permissions';
// manager co-signs with an electronic signature before the status changes. Both steps are audited.
import { QueryTypes } from 'sequelize';
import { z } from 'zod';
import { proseText } from '../../validation/text';
import { sequelize, transaction } from '../db';
import { col, selectOne } from '../db/rows';
import type { SupplierStatus } from '../db/models';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { conflict, forbidden, notFound, ServiceError } from './errors';
import * as signatures from './signatures';
import * as suppliers from './suppliers';

export const requestSchema = z.object({
	status: z.enum(['qualified', 'on-watch', 'blocked'], { errorMap: () => ({ message: 'Choose qualified, on watch or blocked' }) }),
	reason: proseText(z.string().trim().min(5, 'Give the reason for the change (at least 5 characters)').max(2000))
});
export const declineSchema = z.object({ note: proseText(z.string().trim().min(3, 'Say why the request is declined').max(2000)) });

export interface StatusRequestView {
	id: number;
	supplierId: number;
	fromStatus: SupplierStatus;
	toStatus: SupplierStatus;
	reason: string;
	state: 'pending' | 'approved' | 'declined' | 'withdrawn';
	requestedBy: string;
	requestedById: number;
	requestedAt: string;
	signature: signatures.Manifestation | null;
	decidedBy: string | null;
	decidedAt: string | null;
	decisionNote: string | null;
}

const Status = z.enum(['qualified', 'on-watch', 'blocked']);
const RequestRow = z.object({
	id: col.id,
	supplier_id: col.id,
	from_status: Status,
	to_status: Status,
	reason: col.text,
	state: z.enum(['pending', 'approved', 'declined', 'withdrawn']),
	requested_by: col.id,
	requested_by_name: col.text,
	requested_at: col.date,
	signature_id: col.id.nullable(),
	decided_by_name: col.text.nullable(),
	decided_at: col.date.nullable(),
	decision_note: col.text.nullable()
});

async function view(id: number): Promise<StatusRequestView> {
	const r = await selectOne(
		RequestRow,
		`SELECT r.*, u.name AS requested_by_name, d.name AS decided_by_name FROM supplier_status_requests r
		   JOIN users u ON u.id = r.requested_by LEFT JOIN users d ON d.id = r.decided_by WHERE r.id = :id`,
		{ replacements: { id } }
	);
	if (!r) throw notFound(`Status request ${id}`);
	return {
		id: r.id,
		supplierId: r.supplier_id,
		fromStatus: r.from_status,
		toStatus: r.to_status,
		reason: r.reason,
		state: r.state,
		requestedBy: r.requested_by_name,
		requestedById: r.requested_by,
		requestedAt: r.requested_at.toISOString(),
		signature: r.signature_id ? await signatures.get(r.signature_id) : null,
		decidedBy: r.decided_by_name,
		decidedAt: r.decided_at ? r.decided_at.toISOString() : null,
		decisionNote: r.decision_note
	};
}

export async function forSupplier(supplierId: number, limit = 20): Promise<StatusRequestView[]> {
	const rows = await sequelize().query<{ id: number }>('SELECT id FROM supplier_status_requests WHERE supplier_id = :supplierId ORDER BY id DESC LIMIT :limit', {
		replacements: { supplierId, limit },
		type: QueryTypes.SELECT
	});
	return Promise.all(rows.map((r) => view(r.id)));
}

/** Procurement asks for a status change; nothing changes until QA co-signs. */
export async function request(actor: Actor, supplierRef: string | number, input: z.input<typeof requestSchema>) {
	if (actor.id == null || !hasRole(actor, can.requestSupplierStatus)) throw forbidden('Only procurement requests a supplier status change');
	const data = requestSchema.parse(input);
	const supplier = await suppliers.get(supplierRef);
	const id = await transaction(async (tx) => {
		const [current] = await sequelize().query<{ status: SupplierStatus }>('SELECT status FROM suppliers WHERE id = :id FOR UPDATE', {
			replacements: { id: supplier.id },
			type: QueryTypes.SELECT,
			transaction: tx
		});
		if (current.status === data.status) throw new ServiceError(400, 'invalid', `${supplier.code} is already ${data.status}`, 'status');
		const open = await sequelize().query('SELECT id FROM supplier_status_requests WHERE supplier_id = :id AND state = :state', {
			replacements: { id: supplier.id, state: 'pending' },
			type: QueryTypes.SELECT,
			transaction: tx
		});
		if (open.length) throw conflict(`${supplier.code} already has a status change waiting for QA co-signature`, 'status');
		const [row] = await sequelize().query<{ id: number }>(
			`INSERT INTO supplier_status_requests (supplier_id, from_status, to_status, reason, requested_by) VALUES (:supplierId, :from, :to, :reason, :by) RETURNING id`,
			{ replacements: { supplierId: supplier.id, from: current.status, to: data.status, reason: data.reason, by: actor.id }, type: QueryTypes.SELECT, transaction: tx }
		);
		await audit.record(tx, actor, {
			action: 'supplier.status-change-requested',
			entity: 'supplier',
			entityId: supplier.id,
			before: { status: current.status },
			after: { request: row.id, status: data.status },
			reason: data.reason
		});
		return row.id;
	});
	return view(id);
}

/** A QA manager co-signs (password, meaning, reason); the status changes in the same transaction. */
export async function approve(actor: Actor, requestId: number, input: z.input<typeof signatures.signatureFieldsSchema>) {
	if (actor.id == null || !hasRole(actor, can.cosignSupplierStatus)) throw forbidden('Only a QA manager co-signs a supplier status change');
	const fields = signatures.signatureFieldsSchema.parse(input);
	await transaction(async (tx) => {
		const rows = await sequelize().query<{ id: number; supplier_id: number; from_status: SupplierStatus; to_status: SupplierStatus; reason: string; state: string; requested_by: number }>(
			'SELECT * FROM supplier_status_requests WHERE id = :id FOR UPDATE',
			{ replacements: { id: requestId }, type: QueryTypes.SELECT, transaction: tx }
		);
		const r = rows[0];
		if (!r) throw notFound(`Status request ${requestId}`);
		if (r.state !== 'pending') throw conflict(`This request is already ${r.state}`);
		if (r.requested_by === actor.id) throw new ServiceError(403, 'same-signer', 'The co-signature must come from someone other than the requester.', 'password');
		const [current] = await sequelize().query<{ status: SupplierStatus; code: string }>('SELECT status, code FROM suppliers WHERE id = :id FOR UPDATE', {
			replacements: { id: r.supplier_id },
			type: QueryTypes.SELECT,
			transaction: tx
		});
		if (current.status !== r.from_status) throw conflict(`${current.code} is now ${current.status}, no longer ${r.from_status}: procurement must request again`);
		const signed = { kind: 'supplier-status-change', request: r.id, supplier: current.code, from: r.from_status, to: r.to_status, reason: r.reason };
		// Signature first: a wrong password must fail before this transaction writes an audit event.
		const manifestation = await signatures.sign(tx, actor, { ...fields, recordType: 'supplier_status_request', recordId: r.id, recordHash: signatures.recordHash(signed) });
		await sequelize().query("UPDATE supplier_status_requests SET state = 'approved', signature_id = :sig, decided_by = :by, decided_at = now(), decision_note = :note WHERE id = :id", {
			replacements: { id: r.id, sig: manifestation.id, by: actor.id, note: fields.reason },
			transaction: tx
		});
		await sequelize().query('UPDATE suppliers SET status = :status WHERE id = :id', { replacements: { id: r.supplier_id, status: r.to_status }, transaction: tx });
		await audit.record(tx, actor, {
			action: 'supplier.status-changed',
			entity: 'supplier',
			entityId: r.supplier_id,
			before: { status: r.from_status },
			after: { status: r.to_status, request: r.id, requestedBy: r.requested_by, coSignature: manifestation.id },
			reason: `${r.reason} · QA: ${fields.reason}`
		});
	});
	return view(requestId);
}

export async function decline(actor: Actor, requestId: number, note: string) {
	if (actor.id == null || !hasRole(actor, can.cosignSupplierStatus)) throw forbidden('Only a QA manager declines a supplier status change');
	const data = declineSchema.parse({ note });
	await transaction(async (tx) => {
		const rows = await sequelize().query<{ state: string; supplier_id: number }>('SELECT state, supplier_id FROM supplier_status_requests WHERE id = :id FOR UPDATE', {
			replacements: { id: requestId },
			type: QueryTypes.SELECT,
			transaction: tx
		});
		if (!rows[0]) throw notFound(`Status request ${requestId}`);
		if (rows[0].state !== 'pending') throw conflict(`This request is already ${rows[0].state}`);
		await sequelize().query("UPDATE supplier_status_requests SET state = 'declined', decided_by = :by, decided_at = now(), decision_note = :note WHERE id = :id", {
			replacements: { id: requestId, by: actor.id, note: data.note },
			transaction: tx
		});
		await audit.record(tx, actor, { action: 'supplier.status-change-declined', entity: 'supplier', entityId: rows[0].supplier_id, after: { request: requestId }, reason: data.note });
	});
	return view(requestId);
}

/** QA home queue: supplier status changes waiting for a co-signature (not the requester's own). */
export async function queueItems(actor: Actor) {
	const rows = await sequelize().query<{ id: number; code: string; from_status: string; to_status: string; requested_by: number }>(
		`SELECT r.id, s.code, r.from_status, r.to_status, r.requested_by FROM supplier_status_requests r JOIN suppliers s ON s.id = r.supplier_id
		  WHERE r.state = 'pending' ORDER BY r.id LIMIT 20`,
		{ type: QueryTypes.SELECT }
	);
	return rows.filter((r) => r.requested_by !== actor.id).map((r) => ({ href: `/suppliers/${r.code}`, label: `${r.code}: ${r.from_status} → ${r.to_status}`, detail: 'supplier status change waiting for QA co-signature' }));
}
