import { can } from '../../permissions';
import { z } from 'zod';
import { nameText, proseText } from '../../validation/text';
import { QueryTypes } from 'sequelize';
import { models, sequelize, transaction } from '../db';
import type { Material, MaterialClass } from '../db/models';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { conflict, forbidden, invalid, notFound } from './errors';

export const materialSchema = z.object({
	code: z
		.string()
		.trim()
		.toUpperCase()
		.regex(/^[A-Z0-9][A-Z0-9-]{1,23}$/, 'Use 2–24 capital letters, digits or dashes'),
	name: nameText(z.string().trim().min(2, 'Enter the material name').max(200)),
	technique: z.enum(['NIR', 'Raman', 'mid-IR'], { errorMap: () => ({ message: 'Choose NIR, Raman or mid-IR' }) }),
	samplingPolicy: z.enum(['every-container', 'reduced-allowed']).default('every-container'),
	samplingJustification: proseText(z.string().trim().max(2000)).optional(),
	/** Replicate scans per container, k = 1..5 (never averaged: docs/methods.md §20). */
	replicates: z.coerce.number({ invalid_type_error: 'Replicates must be a number' }).int('Replicates must be a whole number').min(1, 'At least 1 replicate').max(5, 'At most 5 replicates').default(1),
	recipients: z.array(z.string().trim().email('Each recipient must be an e-mail address')).max(50).default([])
});
export type MaterialInput = z.input<typeof materialSchema>;

export const classSchema = z.object({
	name: z
		.string()
		.trim()
		.toLowerCase()
		.regex(/^[a-z0-9][a-z0-9-]{0,39}$/, 'Use lower-case letters, digits and dashes, e.g. diluted-starch'),
	kind: z.enum(['genuine', 'suspect'], { errorMap: () => ({ message: 'Kind is genuine or suspect' }) }),
	description: proseText(z.string().trim().max(500)).default('')
});
export type ClassInput = z.input<typeof classSchema>;

export function toPublic(m: Material) {
	return {
		id: m.id,
		code: m.code,
		name: m.name,
		technique: m.technique,
		samplingPolicy: m.samplingPolicy,
		samplingJustification: m.samplingJustification,
		replicates: m.replicates ?? 1,
		recipients: m.recipients,
		createdAt: m.createdAt.toISOString()
	};
}
export const classToPublic = (c: MaterialClass) => ({ id: c.id, materialId: c.materialId, name: c.name, kind: c.kind, description: c.description });

function requireMethodOwner(actor: Actor) {
	if (!hasRole(actor, can.manageMaterials)) throw forbidden('Only a chemometrician or an admin manages materials');
}

export async function create(actor: Actor, input: MaterialInput, reason?: string) {
	requireMethodOwner(actor);
	const data = materialSchema.parse(input);
	if (data.samplingPolicy === 'reduced-allowed' && !data.samplingJustification) {
		throw invalid('A reduced sampling policy needs a recorded justification', 'samplingJustification');
	}
	return transaction(async (tx) => {
		const { Material } = models();
		if (await Material.findOne({ where: { code: data.code }, transaction: tx })) throw conflict(`Material code ${data.code} is already used`, 'code');
		const material = await Material.create(data, { transaction: tx });
		await audit.record(tx, actor, { action: 'material.created', entity: 'material', entityId: material.id, after: toPublic(material), reason });
		return toPublic(material);
	});
}

export async function addClass(actor: Actor, materialId: number, input: ClassInput, reason?: string) {
	requireMethodOwner(actor);
	const data = classSchema.parse(input);
	return transaction(async (tx) => {
		const { Material, MaterialClass } = models();
		const material = await Material.findByPk(materialId, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!material) throw notFound(`Material ${materialId}`);
		if (await MaterialClass.findOne({ where: { materialId, name: data.name }, transaction: tx })) {
			throw conflict(`Material ${material.code} already has a class named ${data.name}`, 'name');
		}
		if (data.kind === 'genuine' && (await MaterialClass.findOne({ where: { materialId, kind: 'genuine' }, transaction: tx }))) {
			throw conflict(`Material ${material.code} already has its genuine class; add the others as suspect profiles`, 'kind');
		}
		const created = await MaterialClass.create({ ...data, materialId }, { transaction: tx });
		await audit.record(tx, actor, { action: 'material.class-added', entity: 'material', entityId: materialId, after: classToPublic(created), reason });
		return classToPublic(created);
	});
}

export async function get(idOrCode: number | string) {
	const { Material } = models();
	const material =
		typeof idOrCode === 'number' || /^\d+$/.test(idOrCode)
			? await Material.findByPk(Number(idOrCode))
			: await Material.findOne({ where: { code: String(idOrCode).toUpperCase() } });
	if (!material) throw notFound(`Material ${idOrCode}`);
	return material;
}

export async function list() {
	const rows = await models().Material.findAll({ order: [['code', 'ASC']] });
	return rows.map(toPublic);
}

/** The materials list with, per material, its library size, approved version number and open builds and drafts. */
export async function listWithCounts() {
	const rows = await list();
	const stats = await sequelize().query<{ material_id: number; library: string; approved: number | null; drafts: string }>(
		`SELECT m.id AS material_id,
		        (SELECT count(*) FROM library_entries e WHERE e.material_id = m.id) AS library,
		        (SELECT version FROM model_versions v WHERE v.material_id = m.id AND v.state = 'approved') AS approved,
		        (SELECT count(*) FROM model_versions v WHERE v.material_id = m.id AND v.state IN ('draft','building')) AS drafts
		   FROM materials m`,
		{ type: QueryTypes.SELECT }
	);
	const byId = new Map(stats.map((s) => [s.material_id, s]));
	return rows.map((m) => ({ ...m, library: Number(byId.get(m.id)?.library ?? 0), approved: byId.get(m.id)?.approved ?? null, drafts: Number(byId.get(m.id)?.drafts ?? 0) }));
}

export async function classes(materialId: number) {
	const rows = await models().MaterialClass.findAll({ where: { materialId }, order: [['kind', 'ASC'], ['name', 'ASC']] });
	return rows.map(classToPublic);
}

export const replicatesSchema = z.object({
	replicates: materialSchema.shape.replicates,
	reason: proseText(z.string().trim().min(3, 'Write why the replicate count changes').max(2000))
});

/**
 * Sets the material's replicate scans per container (k = 1..5). Lots already received keep the k recorded in their
 * plan at receipt; new lots take the new k.
 */
export async function setReplicates(actor: Actor, idOrCode: number | string, input: z.input<typeof replicatesSchema>) {
	requireMethodOwner(actor);
	const data = replicatesSchema.parse(input);
	const found = await get(idOrCode);
	return transaction(async (tx) => {
		const material = await models().Material.findByPk(found.id, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!material) throw notFound(`Material ${idOrCode}`);
		const before = material.replicates ?? 1;
		if (before === data.replicates) return toPublic(material);
		await material.update({ replicates: data.replicates }, { transaction: tx });
		await audit.record(tx, actor, { action: 'material.replicates-changed', entity: 'material', entityId: material.id, before: { replicates: before }, after: { replicates: data.replicates }, reason: data.reason });
		return toPublic(material);
	});
}
