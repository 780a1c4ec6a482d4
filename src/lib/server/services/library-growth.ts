// A library that grows under change control (issue 14 §4). Nothing enters a library automatically: a chemometrician
// sees each released lot's genuine scans as candidates (with the lot's supplier, its drift state, and what the
// candidates would change in the genuine class's distance distribution), selects lots, and builds a new draft from
// the approved version with those scans added as genuine training spectra. The draft is compared with the approved
// version on the same validation set (the version diff) and approved by QA as usual. Until then the added spectra
// train only in that draft and its rebuilds (model-versions/build.ts, planMemberships).
import { QueryTypes } from 'sequelize';
import { z } from 'zod';
import { can } from '../../permissions';
import { proseText } from '../../validation/text';
import { screen } from '../../analysis';
import { summariseDistances } from '../../analysis/transfer';
import { sequelize, transaction } from '../db';
import { hasRole, type Actor } from './actor';
import { prepareStored } from './artefact-store';
import * as audit from './audit';
import * as drift from './drift';
import { conflict, forbidden, invalid, ServiceError } from './errors';
import * as materials from './materials';
import { insertVersion, start } from './model-versions/build';
import { memberships, row } from './model-versions/read';
import { recordRevalidation } from './model-reviews';

interface CandidateScan {
	scan_id: number;
	lot_id: number;
	internal_lot: string;
	supplier_lot: string;
	supplier_id: number;
	supplier: string;
	received_at: string;
	spectrum_id: number;
	instrument_id: number | null;
	instrument: string | null;
	axis: (number | null)[];
	intensities: (number | null)[];
	unit: 'nm' | 'cm-1' | 'um';
}

async function approvedOf(materialId: number) {
	const [v] = await sequelize().query<{ id: number }>("SELECT id FROM model_versions WHERE material_id = :m AND state = 'approved'", { replacements: { m: materialId }, type: QueryTypes.SELECT });
	if (!v) throw new ServiceError(409, 'no-approved-model', 'The material has no approved version to grow from');
	return row(v.id);
}

/** Genuine, counted scans of released lots of the material whose spectrum is not yet in its library. */
async function candidateScans(materialId: number, lotIds?: number[]): Promise<CandidateScan[]> {
	return sequelize().query<CandidateScan>(
		`SELECT sc.id AS scan_id, l.id AS lot_id, l.internal_lot, l.supplier_lot, l.supplier_id, s.code AS supplier, to_char(l.received_at, 'YYYY-MM-DD') AS received_at,
		        sc.spectrum_id, sc.instrument_id, i.name AS instrument, sp.axis, sp.intensities, sp.unit
		   FROM scans sc JOIN lots l ON l.id = sc.lot_id JOIN suppliers s ON s.id = l.supplier_id JOIN spectra sp ON sp.id = sc.spectrum_id
		   LEFT JOIN instruments i ON i.id = sc.instrument_id
		  WHERE l.material_id = :materialId AND l.status = 'released' AND sc.verdict = 'genuine' AND sc.container = ANY(l.sampled)
		    ${lotIds ? 'AND l.id IN (:lotIds)' : ''}
		    AND NOT EXISTS (SELECT 1 FROM scan_invalidations iv WHERE iv.scan_id = sc.id AND iv.state = 'approved')
		    AND NOT EXISTS (SELECT 1 FROM library_entries e WHERE e.spectrum_id = sc.spectrum_id OR e.source_scan_id = sc.id)
		  ORDER BY l.received_at, l.id, sc.container, sc.id`,
		{ replacements: { materialId, lotIds: lotIds ?? [] }, type: QueryTypes.SELECT }
	);
}

const nan = (x: number | null) => (x == null ? Number.NaN : x);

/** The candidates of a material, per lot, with the approved version's genuine-class distances and the drift state. */
export async function candidates(materialRef: number | string) {
	const material = await materials.get(materialRef);
	const v = await approvedOf(material.id);
	const prepared = prepareStored(`${material.code} v${v.version}`, v.artefact, v.artefact_sha256);
	const genuine = prepared.artefact.genuine;
	if (!genuine) throw new ServiceError(409, 'no-genuine', `${material.code} v${v.version} has no genuine class model`);
	const cCrit = prepared.artefact.models[genuine].cCrit;
	const scans = await candidateScans(material.id);
	const byLot = new Map<number, { lotId: number; internalLot: string; supplierLot: string; supplier: string; receivedAt: string; instruments: Set<string>; ratios: number[]; scans: number }>();
	for (const s of scans) {
		const r = screen(prepared, { id: String(s.scan_id), axis: s.axis.map(nan), values: s.intensities.map(nan), unit: s.unit });
		const st = r.classes[genuine];
		const lot = byLot.get(s.lot_id) ?? { lotId: s.lot_id, internalLot: s.internal_lot, supplierLot: s.supplier_lot, supplier: s.supplier, receivedAt: s.received_at, instruments: new Set<string>(), ratios: [], scans: 0 };
		lot.scans++;
		if (s.instrument) lot.instruments.add(s.instrument);
		if (st && Number.isFinite(st.c)) lot.ratios.push(st.c / cCrit);
		byLot.set(lot.lotId, lot);
	}
	const lots = [];
	for (const l of byLot.values()) {
		const signal = await drift.forLot(l.lotId);
		lots.push({ ...l, instruments: [...l.instruments], distances: summariseDistances(l.ratios), drift: signal ? { rule: signal.rule, message: signal.message } : null, preselect: !signal });
	}
	// the genuine class's training distribution in the approved version (fitted c of its included training spectra)
	const training = Object.values(v.figures?.projections ?? {})
		.filter((p) => p.role === 'training' && p.label === genuine && p.models[genuine])
		.map((p) => p.models[genuine].c / cCrit)
		.filter(Number.isFinite);
	return {
		material: { id: material.id, code: material.code },
		version: { id: v.id, version: v.version, label: `${material.code} v${v.version}` },
		genuine,
		training: summariseDistances(training),
		trainingRatios: training,
		lots
	};
}

export const proposalSchema = z.object({
	lotIds: z.array(z.coerce.number().int().positive()).min(1, 'Select at least one lot'),
	reason: proseText(z.string().trim().min(3, 'Write why these lots join the genuine class').max(2000))
});

/**
 * Builds a new draft from the approved version with the selected lots' genuine scans added as genuine training
 * spectra: one transaction (entries, draft, revalidation trigger, audit), then the build job.
 */
export async function propose(actor: Actor, materialRef: number | string, input: z.input<typeof proposalSchema>, options: { inline?: boolean } = {}) {
	if (!hasRole(actor, can.buildModels)) throw forbidden('Only a chemometrician or an admin grows a reference library');
	if (actor.id == null) throw forbidden('A library change is made by a named person');
	const data = proposalSchema.parse(input);
	const material = await materials.get(materialRef);
	const parent = await approvedOf(material.id);
	const wanted = [...new Set(data.lotIds)];
	const scans = await candidateScans(material.id, wanted);
	const found = new Set(scans.map((s) => s.lot_id));
	const missing = wanted.filter((id) => !found.has(id));
	if (missing.length) throw invalid(`Lot${missing.length > 1 ? 's' : ''} ${missing.join(', ')} ha${missing.length > 1 ? 've' : 's'} no candidate scans: only released lots of ${material.code} with genuine scans not yet in the library can be added`, 'lotIds');
	const classes = await materials.classes(material.id);
	const genuineClass = classes.find((c) => c.kind === 'genuine');
	if (!genuineClass) throw conflict(`${material.code} has no genuine class`);
	const signals = new Map<number, string>();
	for (const id of wanted) {
		const s = await drift.forLot(id);
		if (s) signals.set(id, `rule ${s.rule}: ${s.message}`);
	}
	const lotNames = [...new Map(scans.map((s) => [s.lot_id, s.internal_lot])).values()];
	const note = `library growth: ${scans.length} genuine scans of ${lotNames.join(', ')} added to ${genuineClass.name}`;
	const created = await transaction(async (tx) => {
		const current = await sequelize().query<{ state: string }>('SELECT state FROM model_versions WHERE id = :id FOR UPDATE', { replacements: { id: parent.id }, type: QueryTypes.SELECT, transaction: tx });
		if (current[0]?.state !== 'approved') throw conflict(`${material.code} v${parent.version} is no longer the approved version`);
		const added: number[] = [];
		for (const s of scans) {
			const [e] = await sequelize().query<{ id: number }>(
				`INSERT INTO library_entries (material_id, spectrum_id, class_id, label, role, supplier_id, supplier_lot, instrument_id, created_by, source_scan_id)
				 VALUES (:m, :sp, :c, :label, 'training', :sup, :lot, :inst, :by, :scan) RETURNING id`,
				{
					replacements: { m: material.id, sp: s.spectrum_id, c: genuineClass.id, label: genuineClass.name, sup: s.supplier_id, lot: s.supplier_lot, inst: s.instrument_id, by: actor.id, scan: s.scan_id },
					type: QueryTypes.SELECT,
					transaction: tx
				}
			);
			added.push(e.id);
		}
		const carried = (await memberships(parent.id, tx)).map((m) => ({ entryId: m.entryId, included: m.included, category: m.category, reason: m.reason, inclusionReason: m.inclusionReason }));
		const planned = [...carried, ...added.map((entryId) => ({ entryId, included: true, inclusionReason: data.reason }))];
		const v = await insertVersion(tx, actor, material.id, { ...parent.params, note: undefined }, planned, parent.id, note);
		await sequelize().query('UPDATE library_entries SET proposed_in = :v WHERE id IN (:ids)', { replacements: { v: v.id, ids: added }, transaction: tx });
		await recordRevalidation(tx, parent.id, 'library-change', `${note} (draft v${v.version})`);
		await audit.record(tx, actor, {
			action: 'library.growth-proposed',
			entity: 'material',
			entityId: material.id,
			after: { draftVersion: v.version, draftId: v.id, parentVersion: parent.version, lots: lotNames, scans: scans.map((s) => s.scan_id), entries: added, driftFlagged: Object.fromEntries(signals) },
			reason: data.reason
		});
		return v;
	});
	await start(created.id, options.inline);
	return { id: created.id, version: created.version, added: scans.length, lots: lotNames, driftFlagged: [...signals.keys()] };
}
