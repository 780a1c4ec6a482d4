// Model transfer to another instrument (issue 14 §3). A version is built on the instruments its included training
// spectra name (its home instruments). Before it screens scans from any other instrument, a transfer check runs:
// the material's genuine spectra measured on that instrument (library entries of role `transfer`) are screened by
// the version, judged by src/lib/analysis/transfer.ts, and stored; QA approves the transfer with an e-signature
// (never the person who ran the check). Until then such scans are stored and get `unusable` with the reason.
// The scan workflow (./scans.ts) calls `scanBlock` with one line.
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { can } from '../../permissions';
import { proseText } from '../../validation/text';
import { screen } from '../../analysis';
import { evaluateTransfer, transferCriteria, type TransferEvaluation, type TransferItem } from '../../analysis/transfer';
import { sequelize, transaction } from '../db';
import { hasRole, type Actor } from './actor';
import { prepareStored } from './artefact-store';
import * as audit from './audit';
import { conflict, forbidden, invalid, notFound, ServiceError } from './errors';
import * as library from './library';
import * as signatures from './signatures';
import { recordRevalidation } from './model-reviews';

export const TRANSFER_MEANING = 'transfer approved for screening';
export const TRANSFER_REFUSAL_MEANING = 'transfer refused';
export const NOT_TRANSFERRED = 'model not transferred to this instrument';
export const NOT_STATED = 'instrument not stated';

interface VersionFacts {
	id: number;
	material_id: number;
	version: number;
	state: string;
	code: string;
	technique: string;
	artefact: unknown;
	artefact_sha256: string | null;
	acceptance: { criteriaValues?: { genuineTestMin?: number; genuineTestLotsMin?: number; sensitivityMin?: number } } | null;
	figures: { projections?: Record<string, { role: string; label: string; models: Record<string, { c: number }> }> } | null;
}

async function versionFacts(versionId: number, tx?: Transaction): Promise<VersionFacts> {
	const [v] = await sequelize().query<VersionFacts>(
		`SELECT v.id, v.material_id, v.version, v.state, m.code, m.technique, v.artefact, v.artefact_sha256, v.acceptance, v.figures
		   FROM model_versions v JOIN materials m ON m.id = v.material_id WHERE v.id = :versionId`,
		{ replacements: { versionId }, type: QueryTypes.SELECT, transaction: tx }
	);
	if (!v) throw notFound(`Model version ${versionId}`);
	return v;
}

export interface HomeInstruments {
	instruments: { id: number; name: string; spectra: number }[];
	/** Included training spectra that name no instrument (they train as before; the summary counts them). */
	unstated: number;
}

// The home instruments of a version never change (its membership is fixed at build): cached by id.
const homeCache = new Map<number, HomeInstruments>();

/** The instruments a version was built on: those its included training spectra name. */
export async function homeInstruments(versionId: number, tx?: Transaction): Promise<HomeInstruments> {
	const hit = homeCache.get(versionId);
	if (hit) return hit;
	const rows = await sequelize().query<{ id: number | null; name: string | null; n: number }>(
		`SELECT e.instrument_id AS id, i.name, count(*) AS n FROM model_memberships mm
		   JOIN library_entries e ON e.id = mm.library_entry_id LEFT JOIN instruments i ON i.id = e.instrument_id
		  WHERE mm.model_version_id = :versionId AND mm.included GROUP BY e.instrument_id, i.name ORDER BY i.name NULLS LAST`,
		{ replacements: { versionId }, type: QueryTypes.SELECT, transaction: tx }
	);
	const home: HomeInstruments = {
		instruments: rows.filter((r) => r.id != null).map((r) => ({ id: r.id!, name: r.name!, spectra: r.n })),
		unstated: rows.find((r) => r.id == null)?.n ?? 0
	};
	if (rows.length) homeCache.set(versionId, home);
	return home;
}

/**
 * Why this version may not screen a scan from this instrument, or null. A scan naming no instrument is screened as
 * before (flagged "instrument not stated" where it is shown) unless its material requires the instrument. A version
 * none of whose training spectra names an instrument has no known home instrument, so no transfer can be required
 * of it (the version page says so).
 */
export async function scanBlock(tx: Transaction, input: { versionId: number; materialId: number; instrumentId: number | null }): Promise<string | null> {
	if (input.instrumentId == null) {
		const [m] = await sequelize().query<{ code: string; require_instrument: boolean }>('SELECT code, require_instrument FROM materials WHERE id = :id', {
			replacements: { id: input.materialId },
			type: QueryTypes.SELECT,
			transaction: tx
		});
		return m?.require_instrument ? `${NOT_STATED}: ${m.code} requires the instrument for every scan` : null;
	}
	const home = await homeInstruments(input.versionId, tx);
	if (!home.instruments.length || home.instruments.some((i) => i.id === input.instrumentId)) return null;
	const approved = await sequelize().query<{ id: number }>("SELECT id FROM model_transfers WHERE model_version_id = :v AND instrument_id = :i AND state = 'approved'", {
		replacements: { v: input.versionId, i: input.instrumentId },
		type: QueryTypes.SELECT,
		transaction: tx
	});
	if (approved.length) return null;
	const facts = await versionFacts(input.versionId, tx);
	const [inst] = await sequelize().query<{ name: string }>('SELECT name FROM instruments WHERE id = :id', { replacements: { id: input.instrumentId }, type: QueryTypes.SELECT, transaction: tx });
	return `${NOT_TRANSFERRED}: ${facts.code} v${facts.version} was built on ${home.instruments.map((i) => i.name).join(', ')} and has no approved transfer to ${inst?.name ?? `instrument ${input.instrumentId}`}`;
}

// ---------- the check ----------

export const checkSchema = z.object({
	instrument: z.union([z.number().int().positive(), z.string().trim().min(1, 'Choose the instrument')]),
	note: proseText(z.string().trim().min(3, 'Write what this transfer check is for').max(2000))
});

async function instrumentByRef(ref: number | string, tx?: Transaction) {
	const text = String(ref).trim();
	const [i] = await sequelize().query<{ id: number; name: string; technique: string }>(
		/^\d+$/.test(text) ? 'SELECT id, name, technique FROM instruments WHERE id = :ref' : 'SELECT id, name, technique FROM instruments WHERE upper(name) = upper(:ref)',
		{ replacements: { ref: text }, type: QueryTypes.SELECT, transaction: tx }
	);
	if (!i) throw invalid(`Instrument "${text}" is not registered`, 'instrument');
	return i;
}

/** c/c_crit of the genuine class on the version's own held-out genuine test spectra, else on its training spectra. */
function oldRatios(v: VersionFacts, genuine: string, cCrit: number) {
	const p = Object.values(v.figures?.projections ?? {}).filter((x) => x.label === genuine && x.models[genuine]);
	const tests = p.filter((x) => x.role === 'test');
	const use = tests.length ? tests : p.filter((x) => x.role === 'training');
	return { source: tests.length ? ('held-out genuine test spectra' as const) : ('training spectra (fitted)' as const), ratios: use.map((x) => x.models[genuine].c / cCrit).filter(Number.isFinite) };
}

/** Runs a transfer check of a version to an instrument and stores it: `proposed` when it meets the criteria, else `failed`. */
export async function check(actor: Actor, versionId: number, input: z.input<typeof checkSchema>) {
	if (!hasRole(actor, can.buildModels)) throw forbidden('Only a chemometrician or an admin runs a transfer check');
	if (actor.id == null) throw forbidden('A transfer check is run by a named person');
	const data = checkSchema.parse(input);
	const v = await versionFacts(versionId);
	if (v.state !== 'approved' && v.state !== 'draft') throw conflict(`${v.code} v${v.version} is ${v.state}: only a draft or the approved version is transferred`);
	const inst = await instrumentByRef(data.instrument);
	if (inst.technique !== v.technique) throw invalid(`${inst.name} measures ${inst.technique}, but ${v.code} is identified by ${v.technique}`, 'instrument');
	const home = await homeInstruments(v.id);
	if (home.instruments.some((i) => i.id === inst.id)) throw conflict(`${v.code} v${v.version} was built on ${inst.name}: it needs no transfer there`, 'instrument');
	if (!home.instruments.length) throw conflict(`No training spectrum of ${v.code} v${v.version} names its instrument, so its home instrument is unknown and a transfer cannot be judged`, 'instrument');
	const prepared = prepareStored(`${v.code} v${v.version}`, v.artefact, v.artefact_sha256);
	const genuine = prepared.artefact.genuine;
	if (!genuine) throw new ServiceError(409, 'no-genuine', `${v.code} v${v.version} has no genuine class model`);
	const cCrit = prepared.artefact.models[genuine].cCrit;
	const entries = (await library.entriesOf(v.material_id, ['transfer'])).filter((e) => e.instrument === inst.name && e.kind === 'genuine');
	const spectra = await library.withSpectra(entries.map((e) => e.id));
	const items: TransferItem[] = [];
	const perSpectrum: { entryId: number; lot: string | null; verdict: string; ratio: number | null }[] = [];
	for (const e of spectra) {
		if (!e.supplierLot) throw invalid(`Transfer spectrum ${e.id} (${e.fileName}) names no supplier lot: a transfer check counts lots`, 'instrument');
		const r = screen(prepared, { id: String(e.id), axis: e.axis, values: e.values, unit: e.unit });
		const st = r.classes[genuine];
		const ratio = st && Number.isFinite(st.c) && cCrit > 0 ? st.c / cCrit : null;
		items.push({ lot: e.supplierLot, verdict: r.verdict, ratio });
		perSpectrum.push({ entryId: e.id, lot: e.supplierLot, verdict: r.verdict, ratio });
	}
	const old = oldRatios(v, genuine, cCrit);
	const evaluation = evaluateTransfer(items, old.ratios, transferCriteria(v.acceptance?.criteriaValues));
	const stored = { ...evaluation, oldSource: old.source, spectra: evaluation.spectra, perSpectrum, version: `${v.code} v${v.version}`, instrument: inst.name };
	return transaction(async (tx) => {
		await sequelize().query('SELECT pg_advisory_xact_lock(7402014, :v)', { replacements: { v: v.id }, transaction: tx });
		const open = await sequelize().query<{ id: number; state: string }>("SELECT id, state FROM model_transfers WHERE model_version_id = :v AND instrument_id = :i AND state IN ('proposed','approved')", {
			replacements: { v: v.id, i: inst.id },
			type: QueryTypes.SELECT,
			transaction: tx
		});
		if (open[0]?.state === 'approved') throw conflict(`${v.code} v${v.version} is already transferred to ${inst.name}`);
		if (open[0]) throw conflict(`A transfer check of ${v.code} v${v.version} to ${inst.name} already waits for QA (check ${open[0].id})`);
		const state = evaluation.met ? 'proposed' : 'failed';
		const [row] = await sequelize().query<{ id: number }>(
			`INSERT INTO model_transfers (model_version_id, instrument_id, state, evaluation, entry_ids, note, checked_by)
			 VALUES (:v, :i, :state, :evaluation, :ids::integer[], :note, :by) RETURNING id`,
			{
				replacements: { v: v.id, i: inst.id, state, evaluation: JSON.stringify(stored), ids: `{${perSpectrum.map((p) => p.entryId).join(',')}}`, note: data.note, by: actor.id },
				type: QueryTypes.SELECT,
				transaction: tx
			}
		);
		await audit.record(tx, actor, {
			action: 'model.transfer-checked',
			entity: 'model_version',
			entityId: v.id,
			after: { transferId: row.id, instrument: inst.name, state, spectra: evaluation.spectra, lots: evaluation.lots, genuine: evaluation.genuine, unmet: evaluation.unmet, ks: evaluation.comparison.ks },
			reason: data.note
		});
		return { id: row.id, state, evaluation: stored };
	});
}

// ---------- QA decision ----------

export const decisionSchema = signatures.signatureFieldsSchema;

/** QA approves (or refuses) a proposed transfer with an e-signature; never the person who ran the check. */
export async function decide(actor: Actor, transferId: number, approveIt: boolean, input: z.input<typeof decisionSchema>, versionId?: number) {
	if (!hasRole(actor, can.approveModels)) throw forbidden('Only a QA user approves a model transfer');
	const meaning = approveIt ? TRANSFER_MEANING : TRANSFER_REFUSAL_MEANING;
	const data = decisionSchema.parse({ ...input, meaning: input.meaning || meaning });
	if (data.meaning !== meaning) throw invalid(`The meaning of this signature is "${meaning}"`, 'meaning');
	return transaction(async (tx) => {
		const [t] = await sequelize().query<{ id: number; model_version_id: number; instrument_id: number; state: string; evaluation: TransferView['evaluation']; checked_by: number; checked_at: Date; entry_ids: number[] }>(
			'SELECT * FROM model_transfers WHERE id = :id FOR UPDATE',
			{ replacements: { id: transferId }, type: QueryTypes.SELECT, transaction: tx }
		);
		if (!t || (versionId != null && t.model_version_id !== versionId)) throw notFound(`Transfer check ${transferId}${versionId != null ? ' of this version' : ''}`);
		if (t.checked_by === actor.id) throw forbidden('You ran this transfer check: another QA user must decide it (nobody approves their own work)');
		if (t.state !== 'proposed') throw conflict(`Transfer check ${transferId} is ${t.state}: only a proposed check that meets the criteria can be decided`);
		const v = await versionFacts(t.model_version_id, tx);
		if (approveIt && v.state !== 'approved' && v.state !== 'draft') throw conflict(`${v.code} v${v.version} is ${v.state}: it screens nothing, so it is not transferred`);
		const manifestation = await signatures.sign(tx, actor, {
			password: data.password,
			meaning,
			reason: data.reason,
			recordType: 'model_transfer',
			recordId: t.id,
			recordHash: signatures.recordHash({
				recordType: 'model_transfer',
				id: t.id,
				versionId: v.id,
				version: `${v.code} v${v.version}`,
				artefactSha256: v.artefact_sha256,
				instrumentId: t.instrument_id,
				entryIds: t.entry_ids,
				evaluation: t.evaluation,
				checkedBy: t.checked_by,
				checkedAt: new Date(t.checked_at).toISOString()
			})
		});
		const state = approveIt ? 'approved' : 'refused';
		await sequelize().query('UPDATE model_transfers SET state = :state, decided_by = :by, decided_at = :at, signature_id = :sig WHERE id = :id', {
			replacements: { state, by: actor.id, at: new Date(manifestation.signedAt), sig: manifestation.id, id: t.id },
			transaction: tx
		});
		if (approveIt) await recordRevalidation(tx, v.id, 'new-instrument', `transfer to instrument ${t.evaluation.instrument} approved (transfer check ${t.id})`);
		await audit.record(tx, actor, {
			action: approveIt ? 'model.transfer-approved' : 'model.transfer-refused',
			entity: 'model_version',
			entityId: v.id,
			before: { transferId: t.id, state: 'proposed' },
			after: { transferId: t.id, state, signatureId: manifestation.id, recordHash: manifestation.recordHash },
			reason: data.reason
		});
		return { id: t.id, state, manifestation };
	});
}

// ---------- reading ----------

export interface TransferView {
	id: number;
	instrument: string;
	instrumentId: number;
	state: 'failed' | 'proposed' | 'approved' | 'refused';
	note: string;
	checkedBy: string;
	checkedById: number;
	checkedAt: string;
	decidedBy: string | null;
	decidedAt: string | null;
	signature: signatures.Manifestation | null;
	evaluation: TransferEvaluation & { oldSource: string; instrument: string; version: string; perSpectrum: { entryId: number; lot: string | null; verdict: string; ratio: number | null }[] };
}

/** The version's home instruments, its transfer checks (newest first), and the instruments it is approved for. */
export async function forVersion(versionId: number) {
	const v = await versionFacts(versionId);
	const home = await homeInstruments(versionId);
	const rows = await sequelize().query<{
		id: number;
		instrument: string;
		instrument_id: number;
		state: TransferView['state'];
		note: string;
		checker: string;
		checked_by: number;
		checked_at: Date;
		decider: string | null;
		decided_at: Date | null;
		signature_id: number | null;
		evaluation: TransferView['evaluation'];
	}>(
		`SELECT t.id, i.name AS instrument, t.instrument_id, t.state, t.note, c.name AS checker, t.checked_by, t.checked_at, d.name AS decider, t.decided_at, t.signature_id, t.evaluation
		   FROM model_transfers t JOIN instruments i ON i.id = t.instrument_id JOIN users c ON c.id = t.checked_by LEFT JOIN users d ON d.id = t.decided_by
		  WHERE t.model_version_id = :versionId ORDER BY t.id DESC`,
		{ replacements: { versionId }, type: QueryTypes.SELECT }
	);
	const transfers: TransferView[] = [];
	for (const r of rows) {
		transfers.push({
			id: r.id,
			instrument: r.instrument,
			instrumentId: r.instrument_id,
			state: r.state,
			note: r.note,
			checkedBy: r.checker,
			checkedById: r.checked_by,
			checkedAt: new Date(r.checked_at).toISOString(),
			decidedBy: r.decider,
			decidedAt: r.decided_at ? new Date(r.decided_at).toISOString() : null,
			signature: r.signature_id ? await signatures.get(r.signature_id) : null,
			evaluation: r.evaluation
		});
	}
	const candidates = await sequelize().query<{ id: number; name: string; n: number }>(
		`SELECT i.id, i.name, count(e.id) AS n FROM instruments i
		   LEFT JOIN library_entries e ON e.instrument_id = i.id AND e.material_id = :materialId AND e.role = 'transfer'
		  WHERE i.technique = :technique AND i.active GROUP BY i.id, i.name ORDER BY i.name`,
		{ replacements: { materialId: v.material_id, technique: v.technique }, type: QueryTypes.SELECT }
	);
	const homeIds = new Set(home.instruments.map((i) => i.id));
	return {
		label: `${v.code} v${v.version}`,
		state: v.state,
		home,
		/** Every instrument the version may screen: home instruments and approved transfers. */
		approvedFor: [...home.instruments.map((i) => ({ name: i.name, how: 'built on' as const })), ...transfers.filter((t) => t.state === 'approved').map((t) => ({ name: t.instrument, how: 'transfer' as const, transferId: t.id }))],
		transfers,
		/** Other instruments of the technique, with how many transfer spectra of the material each has. */
		others: candidates.filter((c) => !homeIds.has(c.id)).map((c) => ({ id: c.id, name: c.name, transferSpectra: c.n }))
	};
}

// ---------- the material setting ----------

export const requireInstrumentSchema = z.object({
	required: z.preprocess((v) => v === true || v === 'true' || v === 'on', z.boolean()),
	reason: proseText(z.string().trim().min(3, 'Write why the setting changes').max(2000))
});

/** Whether every scan of the material must name its instrument (otherwise such scans are screened and flagged). */
export async function setRequireInstrument(actor: Actor, materialId: number, input: z.input<typeof requireInstrumentSchema>) {
	if (!hasRole(actor, can.manageMaterials)) throw forbidden('Only a chemometrician or an admin changes a material setting');
	const data = requireInstrumentSchema.parse(input);
	return transaction(async (tx) => {
		const [m] = await sequelize().query<{ id: number; require_instrument: boolean }>('SELECT id, require_instrument FROM materials WHERE id = :id FOR UPDATE', {
			replacements: { id: materialId },
			type: QueryTypes.SELECT,
			transaction: tx
		});
		if (!m) throw notFound(`Material ${materialId}`);
		if (m.require_instrument === data.required) return { required: data.required, changed: false };
		await sequelize().query('UPDATE materials SET require_instrument = :r WHERE id = :id', { replacements: { r: data.required, id: materialId }, transaction: tx });
		await audit.record(tx, actor, { action: 'material.require-instrument-changed', entity: 'material', entityId: materialId, before: { requireInstrument: m.require_instrument }, after: { requireInstrument: data.required }, reason: data.reason });
		return { required: data.required, changed: true };
	});
}

export async function requiresInstrument(materialId: number): Promise<boolean> {
	const [m] = await sequelize().query<{ r: boolean }>('SELECT require_instrument AS r FROM materials WHERE id = :id', { replacements: { id: materialId }, type: QueryTypes.SELECT });
	return !!m?.r;
}
