// A material's reference library: labelled spectra (class, supplier, supplier lot, instrument, role) for model building.
import { can } from '../../permissions';
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { nameText } from '../../validation/text';
import { labelClass } from '../../analysis/tree-spec';
import { sequelize, transaction } from '../db';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { forbidden, invalid, notFound } from './errors';
import * as materials from './materials';
import * as intake from './spectra';
import { noteLibraryChange } from './model-reviews';
import { displayFileName } from '../../validation/text';

// `transfer`: genuine spectra measured on an instrument a version was not built on (issue 14 §3); they never train
// and never enter the validation set: only a transfer check screens them (./transfers.ts).
export const ROLES = ['training', 'test', 'challenge', 'transfer'] as const;
export type LibraryRole = (typeof ROLES)[number];

/** How an upload is labelled: per-row columns of a CSV matrix, or one label for every spectrum (JCAMP, x,y CSV). */
export const labellingSchema = z.object({
	classColumn: nameText(z.string().trim().max(60)).default('class'),
	roleColumn: nameText(z.string().trim().max(60)).default('role'),
	supplierColumn: nameText(z.string().trim().max(60)).default('supplier'),
	lotColumn: nameText(z.string().trim().max(60)).default('supplier_lot'),
	instrumentColumn: nameText(z.string().trim().max(60)).default('instrument'),
	/** Label for spectra without a class column (e.g. JCAMP files): a class name, or an alien's label for challenge spectra. */
	class: nameText(z.string().trim().toLowerCase().max(60)).optional(),
	role: z.enum(ROLES, { errorMap: () => ({ message: 'Role is training, test, challenge or transfer' }) }).optional(),
	supplier: nameText(z.string().trim().toUpperCase().max(40)).optional(),
	supplierLot: nameText(z.string().trim().max(80)).optional(),
	/** Instrument id or name, for spectra that do not name one. */
	instrument: z.union([z.number().int(), nameText(z.string().trim().max(80))]).optional()
});
export type Labelling = z.input<typeof labellingSchema>;

export interface UploadFile {
	name: string;
	bytes: Uint8Array;
}

export interface AddedEntry {
	id: number;
	spectrumId: number;
	label: string;
	role: LibraryRole;
	fileName: string;
}

function requireMethodOwner(actor: Actor) {
	if (!hasRole(actor, can.curateLibrary)) throw forbidden('Only a chemometrician or an admin curates a reference library');
}

const pick = (meta: Record<string, string>, column: string) => {
	if (!column) return undefined;
	const key = Object.keys(meta).find((k) => k.trim().toLowerCase() === column.toLowerCase());
	const v = key ? meta[key]?.trim() : undefined;
	return v ? v : undefined;
};

/**
 * Adds labelled spectra to a material's library, all files in ONE transaction: a single bad row or file refuses the
 * whole upload with an error naming the file and row, and leaves nothing behind.
 */
export async function addFiles(actor: Actor, materialRef: number | string, files: UploadFile[], labellingInput: Labelling = {}) {
	requireMethodOwner(actor);
	if (!files.length) throw invalid('Choose at least one spectrum file', 'file');
	const labelling = labellingSchema.parse(labellingInput);
	const material = await materials.get(materialRef);
	const classes = await materials.classes(material.id);
	const classByName = new Map(classes.map((c) => [c.name, c]));
	const [suppliers, instruments] = await Promise.all([
		sequelize().query<{ id: number; code: string }>('SELECT id, code FROM suppliers', { type: QueryTypes.SELECT }),
		sequelize().query<{ id: number; name: string; technique: string; axis_unit: string; qualification_due: string; active: boolean }>(
			'SELECT id, name, technique, axis_unit, qualification_due::text AS qualification_due, active FROM instruments',
			{ type: QueryTypes.SELECT }
		)
	]);
	const supplierByCode = new Map(suppliers.map((s) => [s.code.toUpperCase(), s.id]));
	const instrumentByName = new Map(instruments.map((i) => [i.name.toUpperCase(), i]));
	const instrumentById = new Map(instruments.map((i) => [i.id, i]));
	const resolveInstrument = (ref: string | number | undefined, where: string) => {
		if (ref == null || ref === '') return null;
		const found = typeof ref === 'number' || /^\d+$/.test(String(ref)) ? instrumentById.get(Number(ref)) : instrumentByName.get(String(ref).toUpperCase());
		if (!found) throw invalid(`${where}: instrument "${ref}" is not registered`, 'instrument');
		// Qualification before use (USP NIR/Raman chapters): an overdue instrument is not a valid source.
		if (String(found.qualification_due) < new Date().toISOString().slice(0, 10)) throw invalid(`${where}: instrument ${found.name} is past its qualification due date (${found.qualification_due})`, 'instrument');
		return found.id;
	};
	const defaultInstrument = resolveInstrument(labelling.instrument, 'Upload');

	return transaction(async (tx) => {
		const added: AddedEntry[] = [];
		for (const file of files) {
			// The intake stores raw bytes and parsed values inside this transaction; the upload's instrument gives the axis unit when the file does not.
			const stored = await intake.ingestFile(actor, { bytes: file.bytes, fileName: file.name, instrumentId: defaultInstrument, context: 'library', contextId: material.id }, tx);
			for (const s of stored) {
				const where = stored.length > 1 ? `${file.name}, row ${s.rowIndex + 2}` : file.name;
				const meta = s.meta ?? {};
				// An explicit role for the upload wins over a role column; without either, spectra train.
				const roleText = (labelling.role ?? pick(meta, labelling.roleColumn) ?? 'training').toLowerCase();
				if (!(ROLES as readonly string[]).includes(roleText)) throw invalid(`${where}: role "${roleText}" is not training, test, challenge or transfer`, 'role');
				const role = roleText as LibraryRole;
				const label = (pick(meta, labelling.classColumn) ?? labelling.class ?? '').toLowerCase();
				if (!label) {
					throw invalid(`${where}: no class label — add a "${labelling.classColumn}" column or choose the class for these files`, 'class');
				}
				// A label may be a path below its class ("diluted/starch", "suspect/diluted/starch"): the model tree places it.
				const parsed = labelClass(label);
				if ('problem' in parsed && role !== 'challenge') throw invalid(`${where}: ${parsed.problem}`, 'class');
				const cls = 'problem' in parsed ? undefined : classByName.get(parsed.className);
				// Challenge spectra may carry an alien's label (e.g. talc-cut): no class model should accept them.
				if (!cls && role !== 'challenge') {
					throw invalid(
						`${where}: class "${'problem' in parsed ? label : parsed.className}"${'problem' in parsed || parsed.path.length === 1 ? '' : ` (of label "${label}")`} is not a class of ${material.code} (classes: ${classes.map((c) => c.name).join(', ') || 'none yet'})`,
						'class'
					);
				}
				const supplierCode = pick(meta, labelling.supplierColumn) ?? labelling.supplier;
				const supplierId = supplierCode ? supplierByCode.get(supplierCode.toUpperCase()) : null;
				if (supplierCode && !supplierId) throw invalid(`${where}: supplier "${supplierCode}" is not registered`, 'supplier');
				const instrumentId = resolveInstrument(pick(meta, labelling.instrumentColumn), where) ?? s.instrumentId ?? defaultInstrument;
				const supplierLot = pick(meta, labelling.lotColumn) ?? labelling.supplierLot ?? null;
				const [row] = await sequelize().query<{ id: number }>(
					`INSERT INTO library_entries (material_id, spectrum_id, class_id, label, role, supplier_id, supplier_lot, instrument_id, created_by)
					 VALUES (:materialId, :spectrumId, :classId, :label, :role, :supplierId, :supplierLot, :instrumentId, :createdBy) RETURNING id`,
					{
						replacements: {
							materialId: material.id,
							spectrumId: s.id,
							classId: cls?.id ?? null,
							label,
							role,
							supplierId: supplierId ?? null,
							supplierLot,
							instrumentId: instrumentId ?? null,
							createdBy: actor.id
						},
						type: QueryTypes.SELECT,
						transaction: tx
					}
				);
				added.push({ id: row.id, spectrumId: s.id, label, role, fileName: file.name });
			}
		}
		const summary = countBy(added, (a) => `${a.role}:${a.label}`);
		// The declared axis (issue 12 §3): the first upload of a material without one declares it; every spectrum is
		// checked against it, and one that does not cover it is named here and left out of builds with that reason.
		const grids = added.length
			? await sequelize().query<{ id: number; unit: 'nm' | 'cm-1' | 'um'; axis: number[] }>('SELECT id, unit, axis FROM spectra WHERE id IN (:ids)', {
					replacements: { ids: added.map((a) => a.spectrumId) },
					type: QueryTypes.SELECT,
					transaction: tx
				})
			: [];
		const gridOf = new Map(grids.map((g) => [g.id, g]));
		let axis = (await materials.get(material.id)).axis;
		if (!axis && added.length) {
			const g = gridOf.get(added[0].spectrumId)!;
			axis = await materials.declareAxisFromFirstUpload(tx, actor, material.id, { x: g.axis.map(Number), unit: g.unit, fileName: added[0].fileName });
		}
		const outsideAxis = axis
			? added.flatMap((a) => {
					const g = gridOf.get(a.spectrumId)!;
					const c = materials.coversAxis(axis!, g.axis.map(Number), g.unit);
					return c.covers ? [] : [{ entryId: a.id, fileName: a.fileName, reason: `does not cover the declared axis ${materials.axisText(axis!)}: ${c.missing}` }];
				})
			: [];
		await audit.record(tx, actor, {
			action: 'library.spectra-added',
			entity: 'material',
			entityId: material.id,
			after: { files: files.map((f) => f.name), added: added.length, byRoleAndLabel: summary, ...(outsideAxis.length ? { outsideAxis } : {}) },
			reason: `library upload of ${added.length} spectra`
		});
		// issue 12 §1: a change of the library is a revalidation trigger on the approved version. Transfer spectra
		// (another instrument's check set, §18) neither train nor validate a version: their own approval records "new instrument".
		const changing = added.filter((a) => a.role !== 'transfer');
		if (changing.length) await noteLibraryChange(tx, actor, material.id, `${changing.length} spectra added to the library (${files.map((f) => f.name).join(', ')})`);
		return { materialId: material.id, added: added.length, entries: added, byRoleAndLabel: summary, axis, outsideAxis };
	});
}

function countBy<T>(items: T[], key: (t: T) => string) {
	const out: Record<string, number> = {};
	for (const i of items) out[key(i)] = (out[key(i)] ?? 0) + 1;
	return out;
}

export interface LibraryQuery {
	page?: number;
	pageSize?: number;
	/** column[:desc] */
	sort?: string;
	label?: string;
	role?: string;
	supplier?: string;
	instrument?: string;
	q?: string;
}

const SORTS: Record<string, string> = {
	id: 'e.id',
	label: 'e.label',
	role: 'e.role',
	supplier: 's.code',
	lot: 'e.supplier_lot',
	instrument: 'i.name',
	file: 'sp.file_name',
	added: 'e.created_at'
};

export interface LibraryRow {
	id: number;
	spectrumId: number;
	label: string;
	kind: 'genuine' | 'suspect' | null;
	role: LibraryRole;
	supplier: string | null;
	supplierLot: string | null;
	instrument: string | null;
	fileName: string;
	title: string | null;
	sampleId: string | null;
	acquiredAt: string | null;
	createdAt: string;
}

const ROW_SELECT = `
	SELECT e.id, e.spectrum_id, e.label, c.kind, e.role, s.code AS supplier, e.supplier_lot, i.name AS instrument,
	       sp.file_name, sp.title, sp.meta->>'id' AS sample_id, sp.acquired_at, e.created_at
	  FROM library_entries e
	  JOIN spectra sp ON sp.id = e.spectrum_id
	  LEFT JOIN material_classes c ON c.id = e.class_id
	  LEFT JOIN suppliers s ON s.id = e.supplier_id
	  LEFT JOIN instruments i ON i.id = e.instrument_id`;

type RawRow = {
	id: number;
	spectrum_id: number;
	label: string;
	kind: 'genuine' | 'suspect' | null;
	role: LibraryRole;
	supplier: string | null;
	supplier_lot: string | null;
	instrument: string | null;
	file_name: string;
	title: string | null;
	sample_id: string | null;
	acquired_at: Date | null;
	created_at: Date;
};

const toRow = (r: RawRow): LibraryRow => ({
	id: r.id,
	spectrumId: r.spectrum_id,
	label: r.label,
	kind: r.kind,
	role: r.role,
	supplier: r.supplier,
	supplierLot: r.supplier_lot,
	instrument: r.instrument,
	fileName: displayFileName(r.file_name),
	title: r.title,
	sampleId: r.sample_id,
	acquiredAt: r.acquired_at ? new Date(r.acquired_at).toISOString() : null,
	createdAt: new Date(r.created_at).toISOString()
});

/** One page of a material's library, filtered and sorted in SQL. */
export async function list(materialId: number, query: LibraryQuery = {}) {
	const pageSize = Math.min(Math.max(query.pageSize ?? 25, 1), 500);
	const page = Math.max(query.page ?? 1, 1);
	const [column, direction] = (query.sort ?? 'id').split(':');
	const order = `${SORTS[column] ?? 'e.id'} ${direction === 'desc' ? 'DESC' : 'ASC'} NULLS LAST, e.id ASC`;
	const where = ['e.material_id = :materialId'];
	const replacements: Record<string, unknown> = { materialId, limit: pageSize, offset: (page - 1) * pageSize };
	if (query.label) (where.push('e.label = :label'), (replacements.label = query.label));
	if (query.role) (where.push('e.role = :role'), (replacements.role = query.role));
	if (query.supplier) (where.push('s.code = :supplier'), (replacements.supplier = query.supplier.toUpperCase()));
	if (query.instrument) (where.push('i.name = :instrument'), (replacements.instrument = query.instrument));
	if (query.q) {
		where.push("(sp.file_name ILIKE :q OR coalesce(sp.title,'') ILIKE :q OR coalesce(e.supplier_lot,'') ILIKE :q OR coalesce(sp.meta->>'id','') ILIKE :q)");
		replacements.q = `%${query.q}%`;
	}
	const filter = where.join(' AND ');
	const [rows, count] = await Promise.all([
		sequelize().query<RawRow>(`${ROW_SELECT} WHERE ${filter} ORDER BY ${order} LIMIT :limit OFFSET :offset`, { replacements, type: QueryTypes.SELECT }),
		sequelize().query<{ n: number }>(
			`SELECT count(*) AS n FROM library_entries e JOIN spectra sp ON sp.id = e.spectrum_id
			   LEFT JOIN suppliers s ON s.id = e.supplier_id LEFT JOIN instruments i ON i.id = e.instrument_id WHERE ${filter}`,
			{ replacements, type: QueryTypes.SELECT }
		)
	]);
	return { rows: rows.map(toRow), total: count[0].n, page, pageSize };
}

/** Counts per role and label, for the material page and the build form's size check. */
export async function summary(materialId: number) {
	const rows = await sequelize().query<{ role: LibraryRole; label: string; n: number }>(
		'SELECT role, label, count(*) AS n FROM library_entries WHERE material_id = :materialId GROUP BY role, label ORDER BY role, label',
		{ replacements: { materialId }, type: QueryTypes.SELECT }
	);
	return rows.map((r) => ({ role: r.role, label: r.label, count: r.n }));
}

export async function facets(materialId: number) {
	const [suppliers, instruments] = await Promise.all([
		sequelize().query<{ code: string }>(
			'SELECT DISTINCT s.code FROM library_entries e JOIN suppliers s ON s.id = e.supplier_id WHERE e.material_id = :materialId ORDER BY 1',
			{ replacements: { materialId }, type: QueryTypes.SELECT }
		),
		sequelize().query<{ name: string }>(
			'SELECT DISTINCT i.name FROM library_entries e JOIN instruments i ON i.id = e.instrument_id WHERE e.material_id = :materialId ORDER BY 1',
			{ replacements: { materialId }, type: QueryTypes.SELECT }
		)
	]);
	return { suppliers: suppliers.map((s) => s.code), instruments: instruments.map((i) => i.name) };
}

export interface EntrySpectrum extends LibraryRow {
	unit: 'nm' | 'cm-1' | 'um';
	axis: number[];
	values: number[];
}

/**
 * Entries with their axis and values, for plots and for the build job. Values travel as text (node-pg's float8[] parser
 * is several times slower), and an axis shared by many spectra is sent once per distinct axis, not once per spectrum.
 */
export async function withSpectra(entryIds: number[], tx?: Transaction): Promise<EntrySpectrum[]> {
	if (!entryIds.length) return [];
	const rows = await sequelize().query<RawRow & { unit: EntrySpectrum['unit']; rep: number; axis_text: string | null; values_text: string }>(
		`WITH picked AS (
		   SELECT e.id, sp.axis, sp.points,
		          first_value(e.id) OVER w AS rep,
		          sp.axis = first_value(sp.axis) OVER w AS same
		     FROM library_entries e JOIN spectra sp ON sp.id = e.spectrum_id
		    WHERE e.id IN (:ids)
		   WINDOW w AS (PARTITION BY sp.points, sp.axis[1], sp.axis[sp.points] ORDER BY e.id))
		 ${ROW_SELECT.replace(
				'SELECT e.id,',
				`SELECT sp.unit, CASE WHEN p.same THEN p.rep ELSE e.id END AS rep,
				        CASE WHEN p.rep = e.id OR NOT p.same THEN array_to_string(sp.axis, ',') END AS axis_text,
				        array_to_string(sp.intensities, ',') AS values_text, e.id,`
			)}
		  JOIN picked p ON p.id = e.id
		 ORDER BY e.id`,
		{ replacements: { ids: entryIds }, type: QueryTypes.SELECT, transaction: tx }
	);
	const axes = new Map<number, number[]>();
	for (const r of rows) if (r.axis_text != null) axes.set(r.id, r.axis_text.split(',').map(Number));
	return rows.map((r) => ({ ...toRow(r), unit: r.unit, axis: axes.get(r.rep) ?? axes.get(r.id)!, values: r.values_text.split(',').map(Number) }));
}

export async function entriesOf(materialId: number, roles: LibraryRole[], tx?: Transaction) {
	const rows = await sequelize().query<RawRow>(`${ROW_SELECT} WHERE e.material_id = :materialId AND e.role IN (:roles) ORDER BY e.id`, {
		replacements: { materialId, roles },
		type: QueryTypes.SELECT,
		transaction: tx
	});
	return rows.map(toRow);
}

/** Per-entry metadata for plot recolouring and tooltips, keyed by entry id as a string. */
export function plotMeta(rows: LibraryRow[]) {
	return Object.fromEntries(
		rows.map((r) => [
			String(r.id),
			{ class: r.label, role: r.role, supplier: r.supplier, instrument: r.instrument, lot: r.supplierLot, date: (r.acquiredAt ?? r.createdAt).slice(0, 10), sample: r.sampleId ?? r.fileName }
		])
	);
}

export async function requireEntry(materialId: number, entryId: number) {
	const rows = await sequelize().query<{ id: number }>('SELECT id FROM library_entries WHERE id = :entryId AND material_id = :materialId', {
		replacements: { entryId, materialId },
		type: QueryTypes.SELECT
	});
	if (!rows.length) throw notFound(`Library entry ${entryId}`);
}

