import { can } from '../../permissions';
import { z } from 'zod';
import { nameText, proseText } from '../../validation/text';
import { QueryTypes } from 'sequelize';
import { models, sequelize, transaction } from '../db';
import type { DeclaredAxis, Material, MaterialClass } from '../db/models';
import type { Transaction } from 'sequelize';
import { convertAxis } from '../../analysis/axis';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { conflict, forbidden, invalid, notFound } from './errors';

/** A declared axis: unit, range (from < to, in that unit) and an optional uniform step. */
export const axisSchema = z
	.object({
		unit: z.enum(['nm', 'cm-1', 'um'], { errorMap: () => ({ message: 'Axis unit is nm, cm-1 or um' }) }),
		from: z.coerce.number({ invalid_type_error: 'Axis start must be a number' }).finite().positive('Axis start must be above 0'),
		to: z.coerce.number({ invalid_type_error: 'Axis end must be a number' }).finite().positive('Axis end must be above 0'),
		step: z.coerce.number({ invalid_type_error: 'Axis step must be a number' }).finite().positive('Axis step must be above 0').nullable().optional()
	})
	.superRefine((a, ctx) => {
		if (!(a.to > a.from)) ctx.addIssue({ code: 'custom', path: ['to'], message: 'The axis end must be above its start' });
		else if (a.step != null) {
			const n = (a.to - a.from) / a.step;
			if (n < 1) ctx.addIssue({ code: 'custom', path: ['step'], message: 'The step must be smaller than the range' });
			else if (n > 100_000) ctx.addIssue({ code: 'custom', path: ['step'], message: 'The step gives more than 100,000 points' });
			else if (Math.abs(n - Math.round(n)) > 1e-6 * Math.max(1, n)) ctx.addIssue({ code: 'custom', path: ['step'], message: 'The range must be a whole number of steps' });
		}
	});
export type AxisInput = z.input<typeof axisSchema>;

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
	recipients: z.array(z.string().trim().email('Each recipient must be an e-mail address')).max(50).default([]),
	/** Optional: without it the axis is taken from the material's first library upload. */
	axis: axisSchema.optional()
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
		axis: m.axis ?? null,
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
		const { axis, ...rest } = data;
		const declared: DeclaredAxis | null = axis ? { unit: axis.unit, from: axis.from, to: axis.to, step: axis.step ?? null, source: 'declared', setAt: new Date().toISOString(), reason: null } : null;
		const material = await Material.create({ ...rest, axis: declared }, { transaction: tx });
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

/**
 * Changes a material's declared axis: chemometrician (or admin) only, with a reason, audited. Versions already built
 * keep the axis in their artefact; the next build uses the new one.
 */
export async function setAxis(actor: Actor, materialId: number, input: AxisInput, reason: string) {
	requireMethodOwner(actor);
	const axis = axisSchema.parse(input);
	const why = (reason ?? '').trim();
	if (why.length < 10) throw invalid('Changing the declared axis needs a reason (at least 10 characters)', 'reason');
	return transaction(async (tx) => {
		const { Material } = models();
		const material = await Material.findByPk(materialId, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!material) throw notFound(`Material ${materialId}`);
		const before = material.axis ?? null;
		const after: DeclaredAxis = { unit: axis.unit, from: axis.from, to: axis.to, step: axis.step ?? null, source: 'declared', setAt: new Date().toISOString(), reason: why };
		material.axis = after;
		material.changed('axis', true);
		await material.save({ transaction: tx });
		await audit.record(tx, actor, { action: 'material.axis-changed', entity: 'material', entityId: materialId, before: { axis: before }, after: { axis: after }, reason: why });
		return toPublic(material);
	});
}

/** The axis of one stored spectrum as a declaration: its unit and range, and its step when its grid is uniform. */
export function axisOfSpectrum(x: ArrayLike<number>, unit: DeclaredAxis['unit']): Pick<DeclaredAxis, 'unit' | 'from' | 'to' | 'step'> {
	const xs = Array.from(x).filter(Number.isFinite).sort((a, b) => a - b);
	const from = xs[0];
	const to = xs[xs.length - 1];
	const mean = xs.length > 1 ? (to - from) / (xs.length - 1) : 0;
	let uniform = xs.length > 1 && mean > 0;
	for (let i = 1; uniform && i < xs.length; i++) if (Math.abs(xs[i] - xs[i - 1] - mean) > 1e-6 * mean) uniform = false;
	return { unit, from, to, step: uniform ? Number(mean.toPrecision(12)) : null };
}

/**
 * Inside a library upload's transaction: a material without a declared axis takes the axis of the first spectrum of
 * its first upload, which then stays fixed until a chemometrician changes it with a reason (issue 12 §3). Audited.
 */
export async function declareAxisFromFirstUpload(tx: Transaction, actor: Actor, materialId: number, first: { x: ArrayLike<number>; unit: DeclaredAxis['unit']; fileName: string }) {
	const { Material } = models();
	const material = await Material.findByPk(materialId, { transaction: tx, lock: tx.LOCK.UPDATE });
	if (!material || material.axis) return material?.axis ?? null;
	const axis: DeclaredAxis = { ...axisOfSpectrum(first.x, first.unit), source: 'first-upload', setAt: new Date().toISOString(), reason: `taken from the first library spectrum (${first.fileName})` };
	material.axis = axis;
	material.changed('axis', true);
	await material.save({ transaction: tx });
	await audit.record(tx, actor, { action: 'material.axis-declared', entity: 'material', entityId: materialId, after: { axis }, reason: axis.reason ?? undefined });
	return axis;
}

/**
 * Whether a spectrum covers a declared axis: its range converted to the axis unit reaches both ends, within 1 % of the
 * step (or 10⁻⁹ of the span without a step), as the engine's coverage rule (docs/methods.md §2). Returns the shortfall.
 */
export function coversAxis(axis: Pick<DeclaredAxis, 'unit' | 'from' | 'to' | 'step'>, x: ArrayLike<number>, unit: DeclaredAxis['unit']): { covers: boolean; lo: number; hi: number; missing: string | null } {
	const c = convertAxis(x, unit, axis.unit);
	let lo = Infinity;
	let hi = -Infinity;
	for (const v of c) {
		if (!Number.isFinite(v)) continue;
		if (v < lo) lo = v;
		if (v > hi) hi = v;
	}
	const tol = axis.step ? 0.01 * axis.step : 1e-9 * (axis.to - axis.from);
	const f = (v: number) => String(Number(v.toPrecision(6)));
	const gaps: string[] = [];
	if (lo > axis.from + tol) gaps.push(`${f(axis.from)}–${f(Math.min(lo, axis.to))}`);
	if (hi < axis.to - tol) gaps.push(`${f(Math.max(hi, axis.from))}–${f(axis.to)}`);
	return { covers: gaps.length === 0, lo, hi, missing: gaps.length ? `missing ${gaps.join(' and ')} ${axis.unit}` : null };
}

export const axisText = (a: Pick<DeclaredAxis, 'unit' | 'from' | 'to' | 'step'>) => `${a.from}–${a.to} ${a.unit}${a.step ? ` every ${a.step}` : ''}`;
