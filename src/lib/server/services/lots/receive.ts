// Lots: receiving a delivery (internal lot number, sampling plan with its seed, supplier flag) in one transaction.
import { can } from '../../../permissions';
import { randomInt } from 'node:crypto';
import { QueryTypes, type Transaction } from 'sequelize';
import { makePlan, PLAN_LABELS, reducedPlanRefusal, type PlanKind } from '../../../analysis/sampling';
import { sequelize, transaction } from '../../db';
import { hasRole, type Actor } from '../actor';
import * as audit from '../audit';
import { conflict, forbidden, invalid } from '../errors';
import { get } from './read';
import { lotSchema, type LotInput, type StoredPlan } from './schema';

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
		const id = row.id;
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
