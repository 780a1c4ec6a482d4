// Spectral quality gates for a lot scan: the thresholds of the material (overrides) and the instrument (ordinate
// ceiling), the material's library reference for the no-sample gate, and the pure gates in
// $lib/analysis/quality-gates. Called by the scan workflow before any model is applied (docs/methods.md §22).
import { LRUCache } from 'lru-cache';
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { runGates, type GateOutcome, type GateThresholds, type Technique } from '../../analysis/quality-gates';

export type { GateOutcome };
import { can } from '../../permissions';
import { sequelize, transaction } from '../db';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { forbidden, notFound } from './errors';

// The library reference changes only when the library does: cached per material, keyed by its training entry count
// and newest entry id, so adding or removing a training entry invalidates it (the key is re-read on every call).
// Bounded to the 256 most recently used materials.
const libraryCache = new LRUCache<number, { key: string; range: number | null }>({ max: 256 });

async function libraryRange(materialId: number, tx?: Transaction): Promise<number | null> {
	const [k] = await sequelize().query<{ n: string; last: number | null }>(
		"SELECT count(*) AS n, max(id) AS last FROM library_entries WHERE material_id = :materialId AND role = 'training'",
		{ replacements: { materialId }, type: QueryTypes.SELECT, transaction: tx }
	);
	const key = `${k?.n ?? 0}:${k?.last ?? 0}`;
	const hit = libraryCache.get(materialId);
	if (hit && hit.key === key) return hit.range;
	// The median (max − min) of the training spectra as stored (the same quantity libraryRangeOf computes).
	const [row] = await sequelize().query<{ median: number | null }>(
		`SELECT percentile_cont(0.5) WITHIN GROUP (ORDER BY r) AS median FROM (
		   SELECT (SELECT max(v) - min(v) FROM unnest(sp.intensities) v) AS r
		     FROM library_entries le JOIN spectra sp ON sp.id = le.spectrum_id
		    WHERE le.material_id = :materialId AND le.role = 'training') x WHERE r > 0`,
		{ replacements: { materialId }, type: QueryTypes.SELECT, transaction: tx }
	);
	const range = row?.median == null ? null : Number(row.median);
	libraryCache.set(materialId, { key, range });
	return range;
}

export interface GateContext {
	materialId: number;
	technique: Technique;
	instrumentId: number | null;
	values: number[];
	yUnits: string | null;
}

/** The gates' outcome for one measured spectrum (values as stored, before any axis step or preprocessing). */
export async function check(ctx: GateContext, tx?: Transaction): Promise<GateOutcome> {
	const [m] = await sequelize().query<{ quality_gates: Partial<GateThresholds> | null }>('SELECT quality_gates FROM materials WHERE id = :id', {
		replacements: { id: ctx.materialId },
		type: QueryTypes.SELECT,
		transaction: tx
	});
	const thresholds: Partial<GateThresholds> = { ...(m?.quality_gates ?? {}) };
	if (ctx.instrumentId != null) {
		const [i] = await sequelize().query<{ ordinate_ceiling: number | null }>('SELECT ordinate_ceiling FROM instruments WHERE id = :id', {
			replacements: { id: ctx.instrumentId },
			type: QueryTypes.SELECT,
			transaction: tx
		});
		if (i?.ordinate_ceiling != null) thresholds.ordinateCeiling = Number(i.ordinate_ceiling);
	}
	return runGates({ values: ctx.values, technique: ctx.technique, yUnits: ctx.yUnits, libraryRange: await libraryRange(ctx.materialId, tx), thresholds });
}

const thresholdsSchema = z
	.object({
		flatRange: z.number().positive().optional(),
		saturationRun: z.number().int().min(2).max(1000).optional(),
		noSampleRatio: z.number().positive().lt(1).optional(),
		absorbanceMax: z.number().positive().optional()
	})
	.strict();

/** A chemometrician or admin sets a material's gate thresholds (an empty object restores the defaults), with a reason. */
export async function setMaterialThresholds(actor: Actor, materialId: number, input: z.input<typeof thresholdsSchema>, reason: string) {
	if (!hasRole(actor, can.manageMaterials)) throw forbidden('Only a chemometrician or an admin sets quality gate thresholds');
	const data = thresholdsSchema.parse(input);
	const why = z.string().trim().min(3, 'Write why the thresholds change').parse(reason);
	return transaction(async (tx) => {
		const [before] = await sequelize().query<{ quality_gates: unknown }>('SELECT quality_gates FROM materials WHERE id = :id FOR UPDATE', { replacements: { id: materialId }, type: QueryTypes.SELECT, transaction: tx });
		if (!before) throw notFound(`Material ${materialId}`);
		await sequelize().query('UPDATE materials SET quality_gates = :q WHERE id = :id', { replacements: { id: materialId, q: JSON.stringify(data) }, transaction: tx });
		await audit.record(tx, actor, { action: 'material.quality-gates-changed', entity: 'material', entityId: materialId, before: { qualityGates: before.quality_gates }, after: { qualityGates: data }, reason: why });
		return data;
	});
}

/** An admin declares an instrument's ordinate ceiling (null: the technique default), with a reason. */
export async function setOrdinateCeiling(actor: Actor, instrumentId: number, ceiling: number | null, reason: string) {
	if (!hasRole(actor, can.administer)) throw forbidden('Only an admin declares an instrument ordinate ceiling');
	const value = z.number().positive().nullable().parse(ceiling);
	const why = z.string().trim().min(3, 'Write why the ceiling changes').parse(reason);
	return transaction(async (tx) => {
		const [before] = await sequelize().query<{ ordinate_ceiling: number | null }>('SELECT ordinate_ceiling FROM instruments WHERE id = :id FOR UPDATE', {
			replacements: { id: instrumentId },
			type: QueryTypes.SELECT,
			transaction: tx
		});
		if (!before) throw notFound(`Instrument ${instrumentId}`);
		await sequelize().query('UPDATE instruments SET ordinate_ceiling = :v WHERE id = :id', { replacements: { id: instrumentId, v: value }, transaction: tx });
		await audit.record(tx, actor, { action: 'instrument.ordinate-ceiling-changed', entity: 'instrument', entityId: instrumentId, before: { ordinateCeiling: before.ordinate_ceiling }, after: { ordinateCeiling: value }, reason: why });
		return value;
	});
}
