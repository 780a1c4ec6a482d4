// Spectrum intake: parse an uploaded file, keep its bytes exactly (with SHA-256) and the parsed spectra beside them,
import { can } from '../../permissions';
// one transaction and one audit event per file. Library and lot workflows reuse `ingestFile` inside their own transaction.
import { createHash } from 'node:crypto';
import { QueryTypes, UniqueConstraintError } from 'sequelize';
import { isSpectrumErrorCode, parseSpectrumFile, SpectrumFileError, type AxisUnit, type ParsedFile, type ParsedSpectrum } from '../../spectra';
import { sequelize, transaction, type Transaction } from '../db';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { conflict, forbidden, invalid, notFound, ServiceError, storableFileName } from './errors';
import * as instruments from './instruments';
import { displayFileName } from '../../validation/text';
import { fileTooLargeMessage, maxBatchFiles, maxFileBytes } from '../upload-limits';

export type SpectrumContext = 'loose' | 'library' | 'lot';
const CONTEXTS: SpectrumContext[] = ['loose', 'library', 'lot'];


/** A refused file: the shared error shape plus the file (and line, where the parser knows it). */
export class IntakeError extends ServiceError {
	constructor(
		status: ServiceError['status'],
		code: string,
		message: string,
		readonly file: string,
		readonly line?: number,
		readonly existing?: { id: number; fileName: string; createdAt: string }
	) {
		super(status, code, message, 'file');
		this.name = 'IntakeError';
	}

	toJSON() {
		return {
			code: this.code,
			message: this.message,
			file: this.file,
			...(this.line !== undefined ? { line: this.line } : {}),
			...(this.existing ? { existing: this.existing } : {})
		};
	}
}

// Empty, binary and unknown files are not spectra at all (415); the rest are spectra with a problem (400).
const MEDIA_CODES = new Set(['empty', 'binary', 'unknown-format']);

export interface IngestInput {
	bytes: Uint8Array;
	/** SHA-256 of `bytes` when already computed (the streamed upload hashes while reading). */
	sha256?: string;
	fileName: string;
	/** For a session upload; an instrument token sets the instrument itself. */
	instrumentId?: number | null;
	context: SpectrumContext;
	contextId?: number | null;
	/** Keep non-finite values as gaps (stored as NULL) when the material's recipe allows them. */
	allowGaps?: boolean;
	minPoints?: number;
	/** Lot scans only (ingestScanFile): keep an unreadable file as evidence, in this unit when no instrument names one. */
	keepUnreadable?: { unit: AxisUnit };
}

export interface StoredSpectrum {
	id: number;
	rowIndex: number;
	sha256: string;
	fileName: string;
	format: ParsedFile['format'];
	points: number;
	axis: { from: number; to: number; unit: AxisUnit };
	/** The row's id in a CSV matrix, else null. */
	sourceId: string | null;
	title: string | null;
	technique: string | null;
	acquiredAt: string | null;
	meta: Record<string, string>;
	instrumentId: number | null;
	missing: number;
}

export function sha256Hex(bytes: Uint8Array) {
	return createHash('sha256').update(bytes).digest('hex');
}

/**
 * A float8[] in PostgreSQL's binary array format (what array_recv reads): exact doubles, 12 bytes a point, and no
 * text form of a large spectrum held in memory. Gaps (NaN/Inf, only present with allowGaps) become NULL elements.
 */
export function float8ArrayBinary(values: ArrayLike<number>): Buffer {
	const n = values.length;
	let nulls = 0;
	for (let i = 0; i < n; i++) if (!Number.isFinite(values[i])) nulls++;
	const buf = Buffer.allocUnsafe(20 + 12 * (n - nulls) + 4 * nulls);
	buf.writeInt32BE(1, 0); // one dimension
	buf.writeInt32BE(nulls ? 1 : 0, 4);
	buf.writeInt32BE(701, 8); // element type: float8
	buf.writeInt32BE(n, 12);
	buf.writeInt32BE(1, 16); // lower bound
	let at = 20;
	for (let i = 0; i < n; i++) {
		const v = values[i];
		if (Number.isFinite(v)) {
			buf.writeInt32BE(8, at);
			buf.writeDoubleBE(v, at + 4);
			at += 12;
		} else {
			buf.writeInt32BE(-1, at);
			at += 4;
		}
	}
	return buf;
}


function mayUpload(actor: Actor) {
	return actor.instrumentId != null || hasRole(actor, can.uploadSpectra);
}

/** The instrument a file comes from: the token's own, or the one named in the upload; refused when not qualified. */
export async function sourceInstrument(actor: Actor, requested: number | string | null | undefined, tx?: Transaction) {
	if (actor.instrumentId != null) {
		if (requested != null && requested !== '') {
			const named = await instruments.get(requested, tx).catch(() => null);
			if (!named || named.id !== actor.instrumentId) throw invalid(`This token belongs to another instrument than "${requested}"`, 'instrument');
		}
		return instruments.assertQualified(actor.instrumentId, tx);
	}
	if (requested == null || requested === '') return null;
	const found = await instruments.get(requested, tx).catch((e) => {
		if (e instanceof ServiceError && e.status === 404) throw invalid(`Instrument "${requested}" is not registered`, 'instrument');
		throw e;
	});
	return instruments.assertQualified(found.id, tx);
}

/** Parses without touching the database; a refusal names the file, the line where known, and the problem. */
export function parseOrRefuse(bytes: Uint8Array, fileName: string, options: { allowGaps?: boolean; minPoints?: number; unit?: AxisUnit } = {}): ParsedFile {
	if (bytes.length > maxFileBytes()) throw tooLarge(fileName, bytes.length);
	try {
		return parseSpectrumFile(bytes, fileName, options);
	} catch (e) {
		if (e instanceof SpectrumFileError) throw new IntakeError(MEDIA_CODES.has(e.code) ? 415 : 400, e.code, e.message, e.file, e.line);
		throw e;
	}
}

/** A timestamp PostgreSQL accepts, or null (the original text stays in meta). */
function acquiredAtOf(text: string | null): string | null {
	return text && !Number.isNaN(Date.parse(text)) ? text : null;
}

async function findDuplicate(tx: Transaction | undefined, context: SpectrumContext, contextId: number | null, sha256: string) {
	const rows = await sequelize().query<{ id: string; file_name: string; created_at: Date }>(
		`SELECT id, file_name, created_at FROM spectra
		  WHERE sha256 = :sha256 AND context = :context AND coalesce(context_id, 0) = :contextId AND row_index = 0 LIMIT 1`,
		{ replacements: { sha256, context, contextId: contextId ?? 0 }, type: QueryTypes.SELECT, transaction: tx }
	);
	return rows[0] ? { id: Number(rows[0].id), fileName: displayFileName(rows[0].file_name), createdAt: new Date(rows[0].created_at).toISOString() } : null;
}

const contextWords = (context: SpectrumContext, contextId: number | null) =>
	context === 'loose' ? 'the loose intake' : context === 'library' ? `this library (material ${contextId})` : `this lot (${contextId})`;

function duplicateError(fileName: string, context: SpectrumContext, contextId: number | null, existing: { id: number; fileName: string; createdAt: string }) {
	return new IntakeError(
		409,
		'duplicate',
		`${fileName}: the same bytes are already stored in ${contextWords(context, contextId)} as spectrum ${existing.id} ("${existing.fileName}", ${existing.createdAt.slice(0, 16).replace('T', ' ')} UTC); nothing is overwritten`,
		fileName,
		undefined,
		existing
	);
}

/** What the intake stored, and the spectra it parsed (so no caller reads them back from the database). */
export interface Ingested {
	stored: StoredSpectrum[];
	/** `stored[i]` holds `parsed.spectra[i]`. */
	parsed: ParsedFile;
}

/**
 * Stores one file: raw bytes and SHA-256, and one row per spectrum it holds (a CSV matrix holds many). The raw bytes
 * are kept once, on the row with row_index 0; the other rows of the same file point to it by (context, sha256), so a
 * large matrix is not stored once per row. Within `tx` when given (the caller's unit of work), else in its own.
 */
export async function ingestFile(
	actor: Actor,
	input: Omit<IngestInput, 'keepUnreadable'>,
	tx?: Transaction,
	checked?: { instrument: instruments.PublicInstrument | null }
): Promise<StoredSpectrum[]> {
	const done = await ingest(actor, { ...input, keepUnreadable: undefined }, tx, checked);
	if (done.refused) throw new Error('a file is kept unread only for a lot scan (ingestScanFile)');
	return done.stored;
}

/** A lot scan's file: stored and parsed, or kept byte for byte as unreadable evidence with the reason. */
export type ScanIngested =
	| { ok: true; stored: StoredSpectrum; spectrum: ParsedSpectrum }
	| { ok: false; stored: Kept; format: 'unparsed' | 'refused'; reason: string };

/**
 * Stores a container scan's file inside the scan's transaction. Unlike a library upload, a file that does not parse
 * (or whose own technique contradicts its instrument) is not refused: its bytes are kept as an unusable scan with the
 * reason and no points, in `fallbackUnit` when no instrument names the unit. A file holding several spectra is refused.
 */
export async function ingestScanFile(actor: Actor, input: Omit<IngestInput, 'keepUnreadable'>, fallbackUnit: AxisUnit, tx: Transaction): Promise<ScanIngested> {
	return scanIngested(await ingest(actor, { ...input, keepUnreadable: { unit: fallbackUnit } }, tx), input.fileName);
}

/**
 * A lot scan's file parsed before the scan's transaction (issue 16 §2: no connection is held while the CPU decodes
 * it); `store` then writes it inside that transaction exactly as ingestScanFile does. An error found while preparing is
 * raised by `store`, at the point of the scan's checks where ingestScanFile would raise it.
 */
export interface PreparedScanFile {
	/** The one spectrum the file holds, when it reads and holds exactly one. */
	spectrum: ParsedSpectrum | null;
	store(tx: Transaction): Promise<ScanIngested>;
}

export async function prepareScanFile(actor: Actor, input: Omit<IngestInput, 'keepUnreadable'>, fallbackUnit: AxisUnit): Promise<PreparedScanFile> {
	const full: IngestInput = { ...input, keepUnreadable: { unit: fallbackUnit } };
	let prepared: Prepared;
	try {
		prepared = await prepare(actor, full);
	} catch (e) {
		return { spectrum: null, store: () => Promise.reject(e) };
	}
	return {
		spectrum: prepared.parsed?.spectra.length === 1 ? prepared.parsed.spectra[0] : null,
		store: async (tx) => scanIngested(await storePrepared(actor, full, prepared, tx), input.fileName)
	};
}

function scanIngested(done: Done, fileName: string): ScanIngested {
	if (done.refused) return { ok: false, stored: done.kept, format: done.refused.format, reason: done.refused.reason };
	if (done.stored.length !== 1) throw invalid(`${done.stored[0]?.fileName ?? fileName} holds ${done.stored.length} spectra; a container scan is one spectrum`, 'file');
	return { ok: true, stored: done.stored[0], spectrum: done.parsed.spectra[0] };
}

type Refusal = { format: 'unparsed' | 'refused'; reason: string };
/** The row an unreadable file is kept in. */
type Kept = { id: number; sha256: string; title: null };
type Done = (Ingested & { refused: null }) | { kept: Kept; parsed: null; refused: Refusal };

/** One row of the spectra table: a parsed spectrum, or (points 0, empty arrays) an unreadable file kept as evidence. */
interface SpectrumRow {
	sha256: string;
	raw: Buffer;
	fileName: string;
	format: string;
	rowIndex: number;
	axis: ArrayLike<number>;
	values: ArrayLike<number>;
	unit: AxisUnit;
	yUnit: string | null;
	title: string | null;
	technique: string | null;
	acquiredAt: string | null;
	meta: Record<string, string>;
	instrumentId: number | null;
	uploadedBy: number | null;
	context: SpectrumContext;
	contextId: number | null;
}

/** The one INSERT into spectra. */
async function insertRow(t: Transaction, r: SpectrumRow): Promise<number> {
	const [row] = await sequelize().query<{ id: string }>(
		`INSERT INTO spectra (sha256, raw, file_name, format, row_index, points, axis, intensities, unit, y_unit, title, technique,
		                      acquired_at, meta, instrument_id, uploaded_by, context, context_id)
		 VALUES ($sha256, $raw, $fileName, $format, $rowIndex, $points, $axis::float8[], $values::float8[], $unit, $yUnit, $title, $technique,
		         $acquiredAt::timestamptz, $meta::jsonb, $instrumentId::integer, $uploadedBy::integer, $context, $contextId::integer)
		 RETURNING id`,
		{
			bind: { ...r, points: r.axis.length, axis: float8ArrayBinary(r.axis), values: float8ArrayBinary(r.values), meta: JSON.stringify(r.meta) },
			type: QueryTypes.SELECT,
			transaction: t
		}
	);
	return Number(row.id);
}

/** `checked`: the source instrument already resolved and checked by the caller for the whole batch. */
async function ingest(actor: Actor, input: IngestInput, tx?: Transaction, checked?: { instrument: instruments.PublicInstrument | null }): Promise<Done> {
	return storePrepared(actor, input, await prepare(actor, input, tx, checked), tx);
}

/** What a file becomes before anything is stored: checked, sourced and parsed (or the reason it cannot be read). */
interface Prepared {
	fileName: string;
	contextId: number | null;
	instrument: instruments.PublicInstrument | null;
	parsed: ParsedFile | null;
	refused: Refusal | null;
}

/** Checks, sources and parses a file, touching the database only to read the instrument (`tx` when given). */
async function prepare(actor: Actor, input: IngestInput, tx?: Transaction, checked?: { instrument: instruments.PublicInstrument | null }): Promise<Prepared> {
	if (!mayUpload(actor)) throw forbidden('Only a technician, a chemometrician, an admin or an instrument token uploads spectra');
	const fileName = storableFileName(input.fileName);
	if (!CONTEXTS.includes(input.context)) throw invalid(`Unknown context "${input.context}"`, 'context');
	const contextId = input.context === 'loose' ? null : (input.contextId ?? null);
	if (input.context !== 'loose' && contextId == null) throw invalid(`A ${input.context} upload needs the ${input.context} it belongs to`, 'contextId');

	// Source and parse before the transaction: no connection is held while the CPU decodes the file.
	const instrument = checked?.instrument !== undefined ? checked.instrument : await sourceInstrument(actor, input.instrumentId, tx);
	let parsed: ParsedFile | null = null;
	let refused: Refusal | null = null;
	try {
		parsed = parseOrRefuse(input.bytes, fileName, { allowGaps: input.allowGaps, minPoints: input.minPoints, unit: instrument?.axisUnit });
		const other = instrument ? parsed.spectra.find((s) => s.technique && s.technique !== instrument.technique) : undefined;
		if (instrument && other) {
			throw new IntakeError(
				400,
				'wrong-technique',
				`${fileName}: the file is a ${other.technique!} spectrum, but instrument ${instrument.name} measures ${instrument.technique}`,
				fileName,
				other.line
			);
		}
	} catch (e) {
		if (!input.keepUnreadable || !(e instanceof IntakeError)) throw e;
		if (isSpectrumErrorCode(e.code)) refused = { format: 'unparsed', reason: e.message };
		else if (e.code === 'wrong-technique') refused = { format: 'refused', reason: `wrong technique: ${e.message}` };
		else throw e;
	}

	return { fileName, contextId, instrument, parsed, refused };
}

/** Stores a prepared file within `tx` when given, else in its own transaction. */
async function storePrepared(actor: Actor, input: IngestInput, prepared: Prepared, tx?: Transaction): Promise<Done> {
	const { fileName, contextId, instrument, parsed, refused } = prepared;
	const run = async (t: Transaction): Promise<Done> => {
		const sha256 = input.sha256 ?? sha256Hex(input.bytes);
		const existing = await findDuplicate(t, input.context, contextId, sha256);
		if (existing) throw refused ? conflict(`${fileName}: the same file was already uploaded to this lot`, 'file') : duplicateError(fileName, input.context, contextId, existing);

		// Buffer.from over the same memory: no copy of a large file; pg sends it as a binary parameter.
		const raw = Buffer.from(input.bytes.buffer, input.bytes.byteOffset, input.bytes.byteLength);
		const common = { sha256, fileName, instrumentId: instrument?.id ?? null, uploadedBy: actor.id, context: input.context, contextId };
		if (refused) {
			// Kept byte for byte as the scan's evidence, with no points; the scan's own audit event records it.
			const unit = instrument?.axisUnit ?? input.keepUnreadable!.unit;
			const meta = { refusedBecause: refused.reason };
			const none = new Float64Array(0);
			const id = await insertRow(t, { ...common, raw, format: refused.format, rowIndex: 0, axis: none, values: none, unit, yUnit: null, title: null, technique: null, acquiredAt: null, meta });
			return { kept: { id, sha256, title: null }, parsed: null, refused };
		}
		const file = parsed!;
		const stored: StoredSpectrum[] = [];
		const empty = Buffer.alloc(0);
		for (let rowIndex = 0; rowIndex < file.spectra.length; rowIndex++) {
			const s = file.spectra[rowIndex];
			const acquiredAt = acquiredAtOf(s.acquiredAt);
			const meta = { ...s.meta, ...(s.acquiredAt && !acquiredAt ? { acquiredAtText: s.acquiredAt } : {}) };
			const id = await insertRow(t, {
				...common,
				raw: rowIndex === 0 ? raw : empty,
				format: file.format,
				rowIndex,
				axis: s.axis,
				values: s.values,
				unit: s.unit,
				yUnit: s.yUnit ?? null,
				title: s.title ?? null,
				technique: s.technique ?? null,
				acquiredAt,
				meta
			});
			stored.push({
				id,
				rowIndex,
				sha256,
				fileName,
				format: file.format,
				points: s.axis.length,
				axis: { from: s.axis[0], to: s.axis[s.axis.length - 1], unit: s.unit },
				sourceId: s.id,
				title: s.title,
				technique: s.technique,
				acquiredAt,
				meta,
				instrumentId: instrument?.id ?? null,
				missing: s.missing.length
			});
		}
		await audit.record(t, actor, {
			action: 'spectrum.stored',
			entity: 'spectrum',
			entityId: stored[0].id,
			after: {
				fileName,
				bytes: input.bytes.byteLength,
				sha256,
				format: file.format,
				spectra: stored.length,
				ids: stored.length > 20 ? [stored[0].id, stored[stored.length - 1].id] : stored.map((s) => s.id),
				context: input.context,
				contextId,
				instrument: instrument?.name ?? null
			}
		});
		return { stored, parsed: file, refused: null };
	};

	try {
		return tx ? await run(tx) : await transaction(run);
	} catch (e) {
		// Two uploads of the same bytes at once: the unique index decides, and the loser hears who won.
		if (e instanceof UniqueConstraintError) {
			const existing = await findDuplicate(undefined, input.context, contextId, sha256Hex(input.bytes)).catch(() => null);
			if (existing) throw duplicateError(fileName, input.context, contextId, existing);
			throw new IntakeError(409, 'duplicate', `${fileName}: the same bytes are already stored in ${contextWords(input.context, contextId)}`, fileName);
		}
		throw e;
	}
}

export interface BatchFile {
	name: string;
	sha256?: string;
	/** Known before reading (multipart File.size), so an oversized file is refused without being read. */
	size: number;
	/** Read one file at a time, so a batch is not held in memory twice over. */
	read: () => Promise<Uint8Array> | Uint8Array;
}

export type BatchItem =
	| { file: string; ok: true; spectra: StoredSpectrum[] }
	| { file: string; ok: false; status: number; error: ReturnType<IntakeError['toJSON']> };

// Kept below the pool size so a batch leaves connections for other requests.
const BATCH_CONCURRENCY = 3;

const tooLarge = (name: string, size: number) => new IntakeError(413, 'too-large', fileTooLargeMessage(name, size), name);

/** Each file in its own transaction: a refused file leaves no row, and the others are still stored. */
export async function ingestBatch(
	actor: Actor,
	files: BatchFile[],
	options: { instrument?: number | string | null; context?: SpectrumContext; contextId?: number | null; allowGaps?: boolean } = {}
): Promise<BatchItem[]> {
	if (!mayUpload(actor)) throw forbidden('Only a technician, a chemometrician, an admin or an instrument token uploads spectra');
	if (!files.length) throw invalid('Choose at least one spectrum file (multipart field "file")', 'file');
	if (files.length > maxBatchFiles()) {
		throw new ServiceError(400, 'too-many-files', `${files.length} files in one upload; the limit is ${maxBatchFiles()}: send them in smaller batches`, 'file');
	}
	// The source is checked once, up front: an unqualified instrument refuses the whole batch with its reason.
	const instrument = await sourceInstrument(actor, options.instrument ?? null);
	const out: BatchItem[] = new Array(files.length);
	const one = async (f: BatchFile): Promise<BatchItem> => {
		try {
			if (f.size > maxFileBytes()) throw tooLarge(f.name, f.size);
			const input = {
				bytes: await f.read(),
				sha256: f.sha256,
				fileName: f.name,
				instrumentId: instrument?.id ?? null,
				context: options.context ?? 'loose',
				contextId: options.contextId ?? null,
				allowGaps: options.allowGaps
			};
			return { file: displayFileName(f.name), ok: true, spectra: await ingestFile(actor, input, undefined, { instrument }) };
		} catch (e) {
			if (e instanceof IntakeError) return { file: displayFileName(f.name), ok: false, status: e.status, error: e.toJSON() };
			if (e instanceof ServiceError && e.status !== 403 && e.status !== 401 && e.status !== 503) {
				return { file: displayFileName(f.name), ok: false, status: e.status, error: { code: e.code, message: `${displayFileName(f.name)}: ${e.message}`, file: displayFileName(f.name) } };
			}
			throw e;
		}
	};
	// A few files in flight: one parses while another waits on the database. Each is still its own transaction.
	let next = 0;
	const worker = async () => {
		while (next < files.length) {
			const i = next++;
			out[i] = await one(files[i]);
		}
	};
	await Promise.all(Array.from({ length: Math.min(BATCH_CONCURRENCY, files.length) }, worker));
	return out;
}

export interface SpectrumRecord {
	id: number;
	sha256: string;
	fileName: string;
	format: string;
	rowIndex: number;
	points: number;
	unit: AxisUnit;
	yUnit: string | null;
	title: string | null;
	technique: string | null;
	acquiredAt: string | null;
	meta: Record<string, string>;
	instrumentId: number | null;
	instrument: string | null;
	uploadedBy: number | null;
	uploader: string | null;
	context: SpectrumContext;
	contextId: number | null;
	createdAt: string;
	bytes: number;
}

interface Row {
	id: string;
	sha256: string;
	file_name: string;
	format: string;
	row_index: number;
	points: number;
	unit: AxisUnit;
	y_unit: string | null;
	title: string | null;
	technique: string | null;
	acquired_at: Date | null;
	meta: Record<string, string>;
	instrument_id: number | null;
	instrument: string | null;
	uploaded_by: number | null;
	uploader: string | null;
	context: SpectrumContext;
	context_id: number | null;
	created_at: Date;
	bytes: string | number;
}

const iso = (d: Date | null) => (d ? new Date(d).toISOString() : null);
function toRecord(r: Row): SpectrumRecord {
	return {
		id: Number(r.id),
		sha256: r.sha256,
		fileName: displayFileName(r.file_name),
		format: r.format,
		rowIndex: r.row_index,
		points: r.points,
		unit: r.unit,
		yUnit: r.y_unit,
		title: r.title,
		technique: r.technique,
		acquiredAt: iso(r.acquired_at),
		meta: r.meta ?? {},
		instrumentId: r.instrument_id,
		instrument: r.instrument,
		uploadedBy: r.uploaded_by,
		uploader: r.uploader,
		context: r.context,
		contextId: r.context_id,
		createdAt: iso(r.created_at)!,
		bytes: Number(r.bytes)
	};
}

// The byte count comes from the row that holds the file (row_index 0), so every spectrum of a matrix reports the file's size.
const RECORD_SQL = `
  SELECT sp.id, sp.sha256, sp.file_name, sp.format, sp.row_index, sp.points, sp.unit, sp.y_unit, sp.title, sp.technique, sp.acquired_at,
         sp.meta, sp.instrument_id, i.name AS instrument, sp.uploaded_by, u.name AS uploader, sp.context, sp.context_id, sp.created_at,
         CASE WHEN sp.row_index = 0 THEN octet_length(sp.raw) ELSE
           (SELECT octet_length(f.raw) FROM spectra f WHERE f.sha256 = sp.sha256 AND f.context = sp.context
              AND coalesce(f.context_id, 0) = coalesce(sp.context_id, 0) AND f.row_index = 0 LIMIT 1) END AS bytes
    FROM spectra sp
    LEFT JOIN instruments i ON i.id = sp.instrument_id
    LEFT JOIN users u ON u.id = sp.uploaded_by`;

function requireReader(actor: Actor) {
	if (!hasRole(actor, can.readSpectra)) throw forbidden('Your role does not give access to stored spectra');
}

const spectrumId = (id: number | string) => {
	const n = Number(id);
	if (!Number.isInteger(n) || n < 1) throw notFound(`Spectrum ${id}`);
	return n;
};

/** Metadata, axis and values (gaps come back as null). */
export async function get(actor: Actor, id: number | string) {
	requireReader(actor);
	const n = spectrumId(id);
	const rows = await sequelize().query<Row & { axis: number[]; intensities: (number | null)[] }>(
		`SELECT r.*, sp.axis, sp.intensities FROM (${RECORD_SQL} WHERE sp.id = :id) r JOIN spectra sp ON sp.id = r.id`,
		{ replacements: { id: n }, type: QueryTypes.SELECT }
	);
	if (!rows[0]) throw notFound(`Spectrum ${id}`);
	return { ...toRecord(rows[0]), axis: rows[0].axis, values: rows[0].intensities };
}

/** The exact uploaded bytes of the file a spectrum came from. */
export async function raw(actor: Actor, id: number | string) {
	requireReader(actor);
	const n = spectrumId(id);
	const rows = await sequelize().query<{ raw: Buffer; file_name: string; sha256: string }>(
		`SELECT f.raw, f.file_name, f.sha256 FROM spectra sp
		   JOIN spectra f ON f.sha256 = sp.sha256 AND f.context = sp.context AND coalesce(f.context_id, 0) = coalesce(sp.context_id, 0) AND f.row_index = 0
		  WHERE sp.id = :id LIMIT 1`,
		{ replacements: { id: n }, type: QueryTypes.SELECT }
	);
	if (!rows[0]) throw notFound(`Spectrum ${id}`);
	return { bytes: rows[0].raw, fileName: rows[0].file_name, sha256: rows[0].sha256 };
}

const SORTS: Record<string, string> = {
	id: 'sp.id',
	file: 'sp.file_name',
	format: 'sp.format',
	points: 'sp.points',
	instrument: 'i.name',
	uploader: 'u.name',
	created: 'sp.created_at'
};

/** Stored spectra of one context (default: loose uploads), paged and sorted in the database. */
export async function list(actor: Actor, query: { context?: SpectrumContext; contextId?: number; page?: number; pageSize?: number; sort?: string; q?: string } = {}) {
	requireReader(actor);
	const context = query.context && CONTEXTS.includes(query.context) ? query.context : 'loose';
	const pageSize = Math.min(Math.max(Math.floor(query.pageSize ?? 25), 1), 200);
	const page = Math.max(Math.floor(query.page ?? 1), 1);
	const [column, direction] = (query.sort ?? 'created:desc').split(':');
	const order = `${SORTS[column] ?? SORTS.created} ${direction === 'asc' || (!direction && column !== 'created') ? 'ASC' : 'DESC'}, sp.id DESC`;
	const where = `sp.context = :context AND (:contextId::integer IS NULL OR sp.context_id = :contextId::integer)
	               AND (:q::text IS NULL OR sp.file_name ILIKE '%' || :q::text || '%' OR sp.title ILIKE '%' || :q::text || '%')`;
	const replacements = { context, contextId: query.contextId ?? null, q: query.q?.trim() ? query.q.trim().replace(/[%_\\]/g, '\\$&') : null };
	const [rows, total] = await Promise.all([
		sequelize().query<Row>(`${RECORD_SQL} WHERE ${where} ORDER BY ${order} LIMIT :limit OFFSET :offset`, {
			replacements: { ...replacements, limit: pageSize, offset: (page - 1) * pageSize },
			type: QueryTypes.SELECT
		}),
		sequelize().query<{ n: string }>(`SELECT count(*) AS n FROM spectra sp WHERE ${where}`, { replacements, type: QueryTypes.SELECT })
	]);
	return { rows: rows.map(toRecord), total: Number(total[0].n), page, pageSize, sort: `${column in SORTS ? column : 'created'}${direction ? `:${direction}` : ''}` };
}
