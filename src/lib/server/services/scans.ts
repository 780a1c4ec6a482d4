// Scans of a lot's containers: store the raw file (through the intake), screen it at once with the material's approved
import { can } from '../../permissions';
// model version, keep the verdict with its full statistics, and recompute the lot status — one transaction per scan.
import { LRUCache } from 'lru-cache';
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { prepareArtefact, screen, type PreparedArtefact, type ScreenResult } from '../../analysis';
import { sequelize, transaction } from '../db';
import { hasRole, type Actor } from './actor';
import { prepareStored } from './artefact-store';
import * as alerts from './alerts';
import * as audit from './audit';
import * as drift from './drift';
import * as instrumentGate from './instrument-gate';
import { conflict, forbidden, invalid, notFound, ServiceError, storableFileName } from './errors';
import * as containerResults from './container-results';
import * as lots from './lots';
import * as qualityGates from './quality-gates';
import * as identification from './identification';
import { isClosed, type Identity, type LotStatus, type ScanVerdict } from './lots';
import * as scanOrigin from './scan-origin';
import * as intake from './spectra';
import * as transfers from './transfers';
import { displayFileName } from '../../validation/text';

export { isClosed };

export interface ScanFile {
	bytes: Uint8Array;
	/** SHA-256 of `bytes` when already computed (the streamed upload hashes while reading). */
	sha256?: string;
	fileName: string;
	container: number | string;
	/** For a session upload: which instrument measured it (an instrument token sets it itself). */
	instrumentId?: number | null;
	/** An admin's documented case for bytes already stored elsewhere on the site (see scan-origin.ts). */
	duplicateOverrideReason?: string | null;
	/** The uploader's note confirming a file whose header names another lot or container. */
	headerConfirmation?: string | null;
}

const containerSchema = z.coerce
	.number({ invalid_type_error: 'Container must be a number' })
	.int('Container must be a whole number')
	.min(1, 'Container numbers start at 1');

interface ApprovedModel {
	versionId: number;
	label: string;
	sha256: string;
	prep: PreparedArtefact;
}
// Prepared artefacts by version id: a built artefact never changes (a rebuild is a new version), so nothing
// invalidates an entry; bounded to the 32 most recently used versions because each holds the model's typed arrays.
const preparedCache = new LRUCache<number, ApprovedModel>({ max: 32 });

/** A model version prepared for screening, cached by id (a built artefact never changes). */
export async function preparedVersion(versionId: number): Promise<ApprovedModel | null> {
	const hit = preparedCache.get(versionId);
	if (hit) return hit;
	const rows = await sequelize().query<{ id: number; version: number; artefact_sha256: string | null; code: string; artefact: Parameters<typeof prepareArtefact>[0] | null }>(
		`SELECT v.id, v.version, v.artefact_sha256, v.artefact, m.code FROM model_versions v JOIN materials m ON m.id = v.material_id WHERE v.id = :versionId`,
		{ replacements: { versionId }, type: QueryTypes.SELECT }
	);
	const r = rows[0];
	if (!r?.artefact) return null;
	const label = `${r.code} v${r.version}`;
	// every cache fill re-verifies the artefact (integrity field, derivable limits, recorded SHA-256)
	const model: ApprovedModel = { versionId: Number(r.id), label, sha256: r.artefact_sha256 ?? '', prep: prepareStored(label, r.artefact, r.artefact_sha256) };
	preparedCache.set(model.versionId, model);
	return model;
}

/** The material's approved version, prepared; read outside the scan's transaction so no second connection is held. */
export async function approvedModel(materialId: number): Promise<ApprovedModel | null> {
	const rows = await sequelize().query<{ id: number }>(
		"SELECT id FROM model_versions WHERE material_id = :materialId AND state = 'approved' AND artefact IS NOT NULL",
		{ replacements: { materialId }, type: QueryTypes.SELECT }
	);
	return rows[0] ? preparedVersion(Number(rows[0].id)) : null;
}

function requireScanner(actor: Actor) {
	if (actor.instrumentId == null && !hasRole(actor, can.uploadScans)) throw forbidden('Only a technician, an admin or an instrument token adds scans');
}

function planText(lot: { internal_lot: string; plan: { label?: string; kind: string } }, sampled: number[]) {
	const shown = sampled.length > 24 ? `${sampled.slice(0, 24).join(', ')} … (${sampled.length} in all)` : sampled.join(', ');
	return `the sampling plan of ${lot.internal_lot} (${lot.plan.label ?? lot.plan.kind}: containers ${shown})`;
}

interface InstrumentRow {
	id: number;
	name: string;
	technique: string;
	axis_unit: 'nm' | 'cm-1' | 'um';
}

async function instrumentOf(id: number | null | undefined, tx: Transaction): Promise<InstrumentRow | null> {
	if (id == null) return null;
	const rows = await sequelize().query<InstrumentRow>('SELECT id, name, technique, axis_unit FROM instruments WHERE id = :id', { replacements: { id }, type: QueryTypes.SELECT, transaction: tx });
	if (!rows[0]) throw invalid(`Instrument ${id} is not registered`, 'instrumentId');
	return rows[0];
}

// Non-finite values are gaps: the stored row holds them as NULL and they screen as NaN (the engine names a missing interval).
const gapsAsNaN = (a: ArrayLike<number>) => Array.from(a, (x) => (Number.isFinite(x) ? x : Number.NaN));

/** Adds one scan of one container and screens it; answers the stored scan and the lot's new status. */
export async function add(actor: Actor, lotRef: number | string, file: ScanFile) {
	requireScanner(actor);
	if (!file?.bytes?.length) throw invalid('Choose a spectrum file: the upload is empty', 'file');
	if (!file.fileName?.trim()) throw invalid('The file needs a name', 'file');
	file = { ...file, fileName: storableFileName(file.fileName) };
	const parsedContainer = containerSchema.safeParse(file.container);
	if (!parsedContainer.success) throw invalid(`Container: ${parsedContainer.error.issues[0].message}`, 'container');
	const container = parsedContainer.data;
	const lotId = await lots.resolve(lotRef);
	const [material] = await sequelize().query<{ id: number; code: string; technique: string; version_id: number | null }>(
		`SELECT m.id, m.code, m.technique, v.id AS version_id FROM lots l JOIN materials m ON m.id = l.material_id
		   LEFT JOIN model_versions v ON v.material_id = m.id AND v.state = 'approved' AND v.artefact IS NOT NULL WHERE l.id = :lotId`,
		{ replacements: { lotId }, type: QueryTypes.SELECT }
	);
	if (!material) throw notFound(`Lot ${lotRef}`);
	const model = material.version_id ? await preparedVersion(Number(material.version_id)) : null;
	// other materials' approved models, for naming a wrong material (loaded before the transaction, cached)
	const others = model ? await identification.candidates(material.id, preparedVersion) : [];
	const instrumentId = actor.instrumentId ?? file.instrumentId ?? null;
	// Parse, and screen, before the transaction (issue 16 §2): the CPU work holds no connection and no lock. The
	// transaction below checks, stores and decides in the same order as before; the early screening is used only
	// where that order reaches the model (an error from either is raised there too).
	const fallbackUnit = material.technique === 'Raman' ? 'cm-1' : 'nm';
	const prepared = await intake.prepareScanFile(actor, { bytes: file.bytes, sha256: file.sha256, fileName: file.fileName, instrumentId, context: 'lot', contextId: lotId, allowGaps: true }, fallbackUnit);
	let early: { result: ScreenResult } | { error: unknown } | null = null;
	if (model && prepared.spectrum) {
		const p = prepared.spectrum;
		try {
			early = { result: screen(model.prep, { id: '', axis: gapsAsNaN(p.axis), values: gapsAsNaN(p.values), unit: p.unit }) };
		} catch (error) {
			early = { error };
		}
	}

	const outcome = await transaction(async (tx) => {
		const lot = await lots.lotRow(lotId, tx, true);
		if (isClosed(lot)) throw conflict(`Lot ${lot.internal_lot} is ${lot.status}: a dispositioned lot takes no more scans`);
		if (!lot.sampled.includes(container)) throw invalid(`Container ${container} is not in ${planText(lot, lot.sampled)}`, 'container');
		const instrument = await instrumentOf(instrumentId, tx);
		// Evidence is one measurement of one container: bytes stored elsewhere, or a header naming another lot, stop here.
		const origin = await scanOrigin.check(tx, actor, {
			lotId,
			internalLot: lot.internal_lot,
			supplierLot: lot.supplier_lot,
			container,
			bytes: file.bytes,
			sha256: file.sha256,
			fileName: file.fileName,
			duplicateOverrideReason: file.duplicateOverrideReason,
			headerConfirmation: file.headerConfirmation
		});

		let result: ScreenResult | null = null;
		let verdict: ScanVerdict;
		let reason: string | null = null;
		let gate: qualityGates.GateOutcome | null = null;
		let gateReason: string | null = null;
		// The intake stores the file inside this transaction (a file that does not read is kept as an unusable scan) and
		// hands back what it parsed. Gaps are allowed, as `lotgate screen` allows them, so the engine decides whether the
		// model range is covered and names the missing interval.
		const ingested = await prepared.store(tx);
		const stored: { id: number; sha256: string; title: string | null } = ingested.stored;
		if (!ingested.ok) {
			verdict = 'unusable';
			reason = ingested.format === 'unparsed' ? `the file could not be read: ${ingested.reason}` : ingested.reason;
		} else {
			const p = ingested.spectrum;
			const s = { id: stored.id, title: p.title, technique: p.technique, axis: gapsAsNaN(p.axis), values: gapsAsNaN(p.values), unit: p.unit, yUnit: p.yUnit ?? null };
			if (instrument && instrument.technique !== material.technique) {
				verdict = 'unusable';
				reason = `wrong technique: instrument ${instrument.name} measures ${instrument.technique}, but ${material.code} is identified by ${material.technique}`;
			} else if (s.technique && s.technique !== material.technique) {
				verdict = 'unusable';
				reason = `wrong technique: the file is a ${s.technique} spectrum, but ${material.code} is identified by ${material.technique}`;
			} else if ((gateReason = await instrumentGate.screeningBlock(tx, instrument?.id))) {
				verdict = 'unusable';
				reason = gateReason;
			} else if ((gate = await qualityGates.check({ materialId: material.id, technique: material.technique as 'NIR' | 'Raman' | 'mid-IR', instrumentId: instrument?.id ?? null, values: s.values, yUnits: s.yUnit }, tx)).ok === false) {
				// Quality gates before any model: a lab problem is unusable (rescan), never a material verdict or an alert.
				verdict = 'unusable';
				reason = gate.reason;
			} else if (!model) {
				verdict = 'not-screened';
				reason = `not screened: no approved model for ${material.code}`;
			} else if ((gateReason = await transfers.scanBlock(tx, { versionId: model.versionId, materialId: material.id, instrumentId: instrument?.id ?? null }))) {
				// issue 14 §3: the approved version screens only its home instruments and those with an approved transfer
				verdict = 'unusable';
				reason = gateReason;
			} else {
				if (early && 'error' in early) throw early.error;
				result = early ? { ...early.result, id: String(s.id) } : screen(model.prep, { id: String(s.id), axis: s.axis, values: s.values, unit: s.unit });
				if (result.verdict === 'not-this-material') result = { ...result, identification: await identification.forSpectrum(s, others, material.id, tx) } as ScreenResult;
				verdict = result.verdict;
				reason = result.reason;
			}
		}
		const scan = await insertScan(tx, actor, {
			lotId,
			container,
			spectrumId: stored.id,
			modelVersionId: result ? model!.versionId : null,
			verdict,
			profile: result?.profile ?? null,
			ambiguous: result?.ambiguous ?? false,
			reason,
			result,
			instrumentId: instrument?.id ?? null,
			rescreenOf: null
		});
		// Audit last: the audit chain's lock is held from the first record to commit, so keep that span short.
		const status = await recomputeStatus(tx, lotId, actor, lot);
		await audit.record(tx, actor, {
			action: 'lot.scan-added',
			entity: 'lot',
			entityId: lotId,
			after: {
				scanId: scan.id,
				container,
				fileName: file.fileName,
				sha256: stored.sha256,
				verdict,
				profile: result?.profile ?? null,
				ambiguous: result?.ambiguous ?? false,
				reason,
				modelVersion: result ? model!.label : null,
				...(scan.modelReviewOverdue ? { modelReviewOverdue: true } : {}),
				artefactSha256: result ? model!.sha256 : null,
				instrument: instrument?.name ?? null,
				...(origin.duplicateOverride ? { duplicateOverride: origin.duplicateOverride } : {}),
				...(origin.headerConfirmation ? { headerConfirmation: origin.headerConfirmation } : {})
			}
		});
		// A non-genuine verdict opens (or raises) the supplier alert in this same transaction.
		await alerts.openForScan(tx, actor, { id: scan.id, lotId, container, verdict, profile: result?.profile ?? null, reason });
		await drift.evaluateLot(tx, actor, lotId);
		return { scanId: scan.id, verdict, profile: result?.profile ?? null, ambiguous: result?.ambiguous ?? false, reason, instrumentStated: instrument != null, modelVersion: result ? { id: model!.versionId, label: model!.label } : null, modelReviewOverdue: scan.modelReviewOverdue, spectrumId: stored.id, sha256: stored.sha256, title: stored.title, status };
	});
	return { ...outcome, lotId, container, fileName: file.fileName };
}

interface ScanInsert {
	lotId: number;
	container: number;
	spectrumId: number;
	modelVersionId: number | null;
	verdict: ScanVerdict;
	profile: string | null;
	ambiguous: boolean;
	reason: string | null;
	result: ScreenResult | null;
	instrumentId: number | null;
	rescreenOf: number | null;
}

// Non-finite numbers (e.g. an SPE limit that does not exist) become null: JSON has no NaN.
const jsonText = (value: unknown) => JSON.stringify(value, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? null : ArrayBuffer.isView(v) ? Array.from(v as unknown as ArrayLike<number>) : v));

async function insertScan(tx: Transaction, actor: Actor, s: ScanInsert) {
	const [row] = await sequelize().query<{ id: number; model_review_overdue: boolean }>(
		// issue 12 §1: a verdict from a version past its review-by date (UTC) keeps "model review overdue" for good
		`INSERT INTO scans (lot_id, container, spectrum_id, model_version_id, verdict, profile, ambiguous, reason, result, instrument_id, created_by, rescreen_of, model_review_overdue)
		 VALUES (:lotId, :container, :spectrumId, :modelVersionId, :verdict, :profile, :ambiguous, :reason, :result, :instrumentId, :createdBy, :rescreenOf,
		         coalesce((SELECT review_by < (now() AT TIME ZONE 'UTC')::date FROM model_versions WHERE id = CAST(:modelVersionId AS integer)), false)) RETURNING id, model_review_overdue`,
		{
			replacements: { ...s, result: s.result ? jsonText(s.result) : null, createdBy: actor.id },
			type: QueryTypes.SELECT,
			transaction: tx
		}
	);
	return { id: Number(row.id), modelReviewOverdue: row.model_review_overdue === true };
}

/**
 * Lot status from every scan of each sampled container under the result policy (container-results.ts): awaiting-scans
 * until every container is decided, then screened with identity meets (all genuine) or fails. A dispositioned or
 * quarantined lot keeps its status; its identity still follows the scans. Audits a change. Exported for the
 * disposition and invalidation workflows.
 */
export async function recomputeStatus(
	tx: Transaction,
	lotId: number,
	actor: Actor = { id: null, label: 'system', roles: [] },
	locked?: Awaited<ReturnType<typeof lots.lotRow>>
): Promise<{ status: LotStatus; identity: Identity; changed: boolean }> {
	const lot = locked ?? (await lots.lotRow(lotId, tx, true));
	const outcome = await containerResults.lotOutcome(tx, lotId, lot.sampled);
	const complete = outcome.complete;
	const identity: Identity = outcome.identity;
	let status = lot.status;
	if (status === 'awaiting-scans' || status === 'screened') status = complete ? 'screened' : 'awaiting-scans';
	const changed = status !== lot.status || identity !== lot.identity;
	if (changed) {
		await sequelize().query('UPDATE lots SET status = :status, identity = :identity WHERE id = :lotId', { replacements: { status, identity, lotId }, transaction: tx });
		await audit.record(tx, actor, {
			action: 'lot.status-changed',
			entity: 'lot',
			entityId: lotId,
			before: { status: lot.status, identity: lot.identity },
			after: { status, identity },
			reason: complete ? (identity === 'meets' ? 'every sampled container is genuine' : 'a sampled container is not genuine') : 'screening incomplete'
		});
	}
	return { status, identity, changed };
}

/**
 * Screens again, with the material's approved version, the stored spectra of containers whose latest scan was not
 * screened (no approved model at the time). Each adds a scan pointing at the same stored spectrum; nothing is overwritten.
 */
export async function rescreen(actor: Actor, lotRef: number | string, reason = 'an approved model version is now available') {
	requireScanner(actor);
	const lotId = await lots.resolve(lotRef);
	const preview = await lots.lotRow(lotId);
	const model = await approvedModel(preview.material_id);
	if (!model) throw new ServiceError(409, 'no-approved-model', 'The material still has no approved model version: nothing can be screened');
	// a wrong material found on rescreen is named as on a first screen (the approved models of now)
	const others = await identification.candidates(preview.material_id, preparedVersion);
	return transaction(async (tx) => {
		const lot = await lots.lotRow(lotId, tx, true);
		if (isClosed(lot)) throw conflict(`Lot ${lot.internal_lot} is ${lot.status}: a dispositioned lot takes no more scans`);
		const pending = await sequelize().query<{ id: number; container: number; spectrum_id: number; axis: number[]; intensities: number[]; unit: 'nm' | 'cm-1' | 'um'; instrument_id: number | null }>(
			`SELECT DISTINCT ON (sc.container) sc.id, sc.container, sc.spectrum_id, sc.verdict, sp.axis, sp.intensities, sp.unit, sc.instrument_id
			   FROM scans sc JOIN spectra sp ON sp.id = sc.spectrum_id WHERE sc.lot_id = :lotId ORDER BY sc.container, sc.id DESC`,
			{ replacements: { lotId }, type: QueryTypes.SELECT, transaction: tx }
		);
		const redo = pending.filter((p) => (p as unknown as { verdict: string }).verdict === 'not-screened');
		if (!redo.length) throw conflict('No container of this lot waits for screening');
		const added: { scanId: number; container: number; verdict: ScanVerdict; profile: string | null }[] = [];
		for (const p of redo) {
			const block = (await instrumentGate.screeningBlock(tx, p.instrument_id)) ?? (await transfers.scanBlock(tx, { versionId: model.versionId, materialId: preview.material_id, instrumentId: p.instrument_id }));
			if (block) {
				const scan = await insertScan(tx, actor, { lotId, container: p.container, spectrumId: Number(p.spectrum_id), modelVersionId: null, verdict: 'unusable', profile: null, ambiguous: false, reason: block, result: null, instrumentId: p.instrument_id, rescreenOf: Number(p.id) });
				added.push({ scanId: scan.id, container: p.container, verdict: 'unusable', profile: null });
				continue;
			}
			const spectrum = { id: String(p.spectrum_id), axis: p.axis, values: p.intensities, unit: p.unit };
			let result = screen(model.prep, spectrum);
			if (result.verdict === 'not-this-material') result = { ...result, identification: await identification.forSpectrum(spectrum, others, preview.material_id, tx) } as ScreenResult;
			const scan = await insertScan(tx, actor, {
				lotId,
				container: p.container,
				spectrumId: Number(p.spectrum_id),
				modelVersionId: model.versionId,
				verdict: result.verdict,
				profile: result.profile,
				ambiguous: result.ambiguous,
				reason: result.reason,
				result,
				instrumentId: p.instrument_id,
				rescreenOf: Number(p.id)
			});
			added.push({ scanId: scan.id, container: p.container, verdict: result.verdict, profile: result.profile });
			await alerts.openForScan(tx, actor, { id: scan.id, lotId, container: p.container, verdict: result.verdict, profile: result.profile, reason: result.reason });
		}
		await audit.record(tx, actor, { action: 'lot.rescreened', entity: 'lot', entityId: lotId, after: { modelVersion: model.label, scans: added }, reason });
		const status = await recomputeStatus(tx, lotId, actor);
		await drift.evaluateLot(tx, actor, lotId);
		return { lotId, scans: added, status };
	});
}

/** One scan with what the evidence panel needs beyond the lot view: its spectrum and per-variable contributions. */
export async function detail(lotRef: number | string, scanId: number) {
	const lotId = await lots.resolve(lotRef);
	const rows = await sequelize().query<Record<string, unknown>>(
		`SELECT sc.id, sc.container, sc.verdict, sc.profile, sc.reason, sc.model_version_id, sp.axis, sp.intensities, sp.unit, sp.file_name, sp.title
		   FROM scans sc JOIN spectra sp ON sp.id = sc.spectrum_id WHERE sc.id = :scanId AND sc.lot_id = :lotId`,
		{ replacements: { scanId, lotId }, type: QueryTypes.SELECT }
	);
	const r = rows[0];
	if (!r) throw notFound(`Scan ${scanId} of lot ${lotRef}`);
	// Contributions are recomputed from the stored spectrum with the very artefact that screened it (deterministic).
	const contributions: Record<string, { t2: number[]; spe: number[] }> = {};
	const model = r.model_version_id ? await preparedVersion(Number(r.model_version_id)) : null;
	const axis = (r.axis as (number | null)[]).map((x) => x ?? Number.NaN);
	const values = (r.intensities as (number | null)[]).map((x) => x ?? Number.NaN);
	if (model && axis.length > 1) {
		const again = screen(model.prep, { id: String(r.id), axis, values, unit: r.unit as 'nm' | 'cm-1' | 'um' }, { contributions: true });
		if (again.family?.contributions) contributions.family = plainContributions(again.family.contributions);
		for (const [name, st] of Object.entries(again.classes)) if (st.contributions) contributions[name] = plainContributions(st.contributions);
	}
	return {
		id: Number(r.id),
		container: Number(r.container),
		verdict: r.verdict as ScanVerdict,
		profile: (r.profile as string | null) ?? null,
		reason: (r.reason as string | null) ?? null,
		modelVersionId: r.model_version_id ? Number(r.model_version_id) : null,
		fileName: displayFileName(r.file_name as string),
		title: (r.title as string | null) ?? null,
		spectrum: { axis, values, unit: r.unit as string },
		contributions
	};
}

// JSON has no NaN or Infinity: a contribution that is not finite is sent as 0.
const zeroIfNotFinite = (x: number) => (Number.isFinite(x) ? x : 0);
function plainContributions(c: { t2: ArrayLike<number>; spe: ArrayLike<number> }) {
	return { t2: Array.from(c.t2, zeroIfNotFinite), spe: Array.from(c.spe, zeroIfNotFinite) };
}
