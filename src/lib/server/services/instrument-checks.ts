// Instrument performance checks: a technician records a check (the standard's spectrum, or the linearity readings),
// Lotgate computes the figures with the pure engine ($lib/analysis/peaks.ts, instrument-figures.ts), compares them
// with the plan's tolerances and records pass or fail. An instrument whose check is overdue or failed cannot screen
// (see ./instrument-gate.ts). Checks are append-only records, each with its audit event.
//
// Default plans. The tolerances come from the USP chapters for the technique where we could read the text, else they
// are marked "from memory"; every value is editable per instrument by an admin (audited):
// - NIR, USP <856>/<1856> (formerly <1119>): wavelength accuracy against a rare-earth oxide reflectance standard
//   (NIST SRM 1920a type), ±1.0 nm below 1900 nm and ±1.5 nm from 1900 nm (from memory); photometric linearity
//   slope 1.00 ± 0.05 and intercept 0.00 ± 0.05 (<1119> as quoted in an instrument manual: "The slope must be
//   1.0, +/- 0.05. The zero intercept must be 0.0 +/- 0.05"); noise RMS ≤ 0.0003 absorbance units (from memory).
// - Raman, USP <858>/<1858> (formerly <1120>): wavenumber accuracy against polystyrene (ASTM E1840 values, from
//   memory) ±1.0 cm⁻¹ (from memory); intensity linearity as for NIR (from memory); noise RMS ≤ 0.01 of full scale
//   (common practice).
// - mid-IR: polystyrene film bands ±1.0 cm⁻¹ (Ph. Eur. 2.2.24, from memory).
import { createHash } from 'node:crypto';
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { AnalysisError, linearity, peakPositions, rmsNoise } from '../../analysis';
import { can } from '../../permissions';
import { parseSpectrumFile, SpectrumFileError } from '../../spectra';
import { sequelize, transaction } from '../db';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { forbidden, invalid, notFound } from './errors';

export const CHECK_KINDS = ['wavelength', 'linearity', 'noise'] as const;
export type CheckKind = (typeof CHECK_KINDS)[number];
export const KIND_LABELS: Record<CheckKind, string> = { wavelength: 'wavelength accuracy', linearity: 'photometric linearity', noise: 'noise' };

const bandSchema = z.object({ position: z.number().finite(), tolerance: z.number().positive() });
export const planSchema = z.object({
	wavelength: z.object({ intervalDays: z.number().int().min(1).max(400), standard: z.string().trim().min(2).max(200), window: z.number().positive(), bands: z.array(bandSchema).min(1).max(20), source: z.string().max(400) }),
	linearity: z.object({ intervalDays: z.number().int().min(1).max(400), slope: z.number().positive(), slopeTolerance: z.number().positive(), interceptTolerance: z.number().positive(), source: z.string().max(400) }),
	noise: z.object({ intervalDays: z.number().int().min(1).max(400), maxRms: z.number().positive(), source: z.string().max(400) })
});
export type CheckPlan = z.infer<typeof planSchema>;

const LINEARITY_NIR = { slope: 1, slopeTolerance: 0.05, interceptTolerance: 0.05 };
export const DEFAULT_PLANS: Record<string, CheckPlan> = {
	NIR: {
		wavelength: {
			intervalDays: 30,
			standard: 'rare-earth oxide reflectance standard (NIST SRM 1920a type), absorbance log 1/R',
			window: 8,
			bands: [
				{ position: 1261, tolerance: 1.0 },
				{ position: 1681, tolerance: 1.0 },
				{ position: 1935, tolerance: 1.5 }
			],
			source: 'USP <856>/<1856>: ±1.0 nm below 1900 nm, ±1.5 nm from 1900 nm (from memory); band positions from memory — enter the certificate values'
		},
		linearity: { intervalDays: 180, ...LINEARITY_NIR, source: 'USP <1119> (2008) as quoted in an instrument manual: slope 1.0 ± 0.05, intercept 0.0 ± 0.05' },
		noise: { intervalDays: 30, maxRms: 0.0003, source: 'USP <856>: RMS noise ≤ 0.3 × 10⁻³ AU (from memory)' }
	},
	Raman: {
		wavelength: {
			intervalDays: 30,
			standard: 'polystyrene (ASTM E1840 band values)',
			window: 6,
			bands: [
				{ position: 620.9, tolerance: 1.0 },
				{ position: 1001.4, tolerance: 1.0 },
				{ position: 1602.3, tolerance: 1.0 }
			],
			source: 'USP <858>/<1858>: wavenumber accuracy ±1.0 cm⁻¹ (from memory); band values from memory — enter the certificate values'
		},
		linearity: { intervalDays: 180, ...LINEARITY_NIR, source: 'as NIR (from memory)' },
		noise: { intervalDays: 30, maxRms: 0.01, source: 'common practice' }
	},
	'mid-IR': {
		wavelength: {
			intervalDays: 30,
			standard: 'polystyrene film',
			window: 6,
			bands: [
				{ position: 1601.2, tolerance: 1.0 },
				{ position: 1028.3, tolerance: 1.0 }
			],
			source: 'Ph. Eur. 2.2.24 polystyrene bands ±1.0 cm⁻¹ (from memory)'
		},
		linearity: { intervalDays: 180, ...LINEARITY_NIR, source: 'as NIR (from memory)' },
		noise: { intervalDays: 30, maxRms: 0.001, source: 'common practice' }
	}
};

interface InstrumentRow {
	id: number;
	name: string;
	technique: string;
	active: boolean;
	check_plan: CheckPlan | null;
	checks_due_from: string;
}

async function instrumentRow(ref: number | string, tx?: Transaction): Promise<InstrumentRow> {
	const text = String(ref).trim();
	const [row] = await sequelize().query<InstrumentRow>(
		`SELECT id, name, technique, active, check_plan, to_char(checks_due_from, 'YYYY-MM-DD') AS checks_due_from FROM instruments WHERE ${/^\d+$/.test(text) ? 'id = :ref' : 'lower(name) = lower(:ref)'}`,
		{ replacements: { ref: text }, type: QueryTypes.SELECT, transaction: tx }
	);
	if (!row) throw notFound(`Instrument ${text}`);
	return { ...row, id: Number(row.id) };
}

export const planOf = (i: Pick<InstrumentRow, 'technique' | 'check_plan'>): CheckPlan => i.check_plan ?? DEFAULT_PLANS[i.technique] ?? DEFAULT_PLANS.NIR;

const day = (d: Date) => d.toISOString().slice(0, 10);
const addDays = (iso: string, n: number) => day(new Date(Date.parse(`${iso.slice(0, 10)}T00:00:00Z`) + n * 86_400_000));

export interface KindStatus {
	kind: CheckKind;
	label: string;
	last: { id: number; at: string; passed: boolean; summary: string } | null;
	/** The last day the instrument may screen on the current check (or the first-check deadline). */
	dueOn: string;
	state: 'current' | 'overdue' | 'failed';
	/** Why screening is blocked, or null. */
	reason: string | null;
}

export interface QualificationStatus {
	instrumentId: number;
	name: string;
	qualified: boolean;
	reason: string | null;
	kinds: KindStatus[];
}

/** Per kind: the latest check, its due date and state; the instrument is qualified when every kind is current. */
export async function status(ref: number | string, tx?: Transaction, now = new Date()): Promise<QualificationStatus> {
	const inst = await instrumentRow(ref, tx);
	const plan = planOf(inst);
	const latest = await sequelize().query<{ id: number; kind: CheckKind; performed_at: Date; passed: boolean; summary: string }>(
		`SELECT DISTINCT ON (kind) id, kind, performed_at, passed, summary FROM instrument_checks WHERE instrument_id = :id ORDER BY kind, performed_at DESC, id DESC`,
		{ replacements: { id: inst.id }, type: QueryTypes.SELECT, transaction: tx }
	);
	const today = day(now);
	const kinds = CHECK_KINDS.map((kind): KindStatus => {
		const l = latest.find((r) => r.kind === kind);
		const at = l ? new Date(l.performed_at).toISOString() : null;
		const dueOn = l ? addDays(at!, plan[kind].intervalDays) : inst.checks_due_from;
		const label = KIND_LABELS[kind];
		if (l && !l.passed) return { kind, label, last: { id: Number(l.id), at: at!, passed: false, summary: l.summary }, dueOn, state: 'failed', reason: `instrument not qualified: ${kind} check failed on ${at!.slice(0, 10)}` };
		const last = l ? { id: Number(l.id), at: at!, passed: true, summary: l.summary } : null;
		if (dueOn < today) return { kind, label, last, dueOn, state: 'overdue', reason: `instrument not qualified: ${kind} check overdue since ${dueOn}` };
		return { kind, label, last, dueOn, state: 'current', reason: null };
	});
	const blocking = kinds.find((k) => k.reason);
	return { instrumentId: inst.id, name: inst.name, qualified: !blocking, reason: blocking?.reason ?? null, kinds };
}

export const recordSchema = z.object({
	kind: z.enum(CHECK_KINDS, { errorMap: () => ({ message: 'Choose wavelength, linearity or noise' }) }),
	/** linearity: one "certified observed" pair per line */
	readings: z.string().max(4000).optional()
});

export interface CheckFile {
	bytes: Uint8Array;
	fileName: string;
}

function parseReadings(text: string | undefined) {
	const lines = (text ?? '').split(/\r?\n/).map((l) => l.trim()).filter(Boolean);
	const ref: number[] = [];
	const obs: number[] = [];
	lines.forEach((l, i) => {
		const parts = l.split(/[\s,;]+/).map(Number);
		if (parts.length !== 2 || parts.some((p) => !Number.isFinite(p))) throw invalid(`Readings line ${i + 1}: write the certified value and the observed value, e.g. "0.10 0.102"`, 'readings');
		ref.push(parts[0]);
		obs.push(parts[1]);
	});
	if (ref.length < 3) throw invalid('Enter at least 3 standards, one "certified observed" pair per line', 'readings');
	return { ref, obs };
}

function readSpectrum(file: CheckFile | null | undefined) {
	if (!file?.bytes?.length) throw invalid('Upload the spectrum of the standard', 'file');
	try {
		const parsed = parseSpectrumFile(file.bytes, file.fileName);
		if (parsed.spectra.length !== 1) throw invalid(`${file.fileName} holds ${parsed.spectra.length} spectra; a check takes one`, 'file');
		return parsed.spectra[0];
	} catch (e) {
		if (e instanceof SpectrumFileError) throw invalid(`${file.fileName}: ${e.message}`, 'file');
		throw e;
	}
}

/** Computes the figures of one check and whether they meet the plan (pure given the inputs). */
export function evaluate(plan: CheckPlan, kind: CheckKind, input: { spectrum?: { axis: ArrayLike<number>; values: ArrayLike<number> }; readings?: { ref: number[]; obs: number[] } }) {
	try {
		if (kind === 'wavelength') {
			const p = plan.wavelength;
			const found = peakPositions(input.spectrum!.axis, input.spectrum!.values, p.bands.map((b) => b.position), { window: p.window });
			const bands = found.map((f, i) => ({ expected: f.expected, found: +f.position.toFixed(3), error: +f.error.toFixed(3), tolerance: p.bands[i].tolerance, ok: Math.abs(f.error) <= p.bands[i].tolerance }));
			const worst = bands.reduce((w, b) => (Math.abs(b.error) > Math.abs(w.error) ? b : w), bands[0]);
			const passed = bands.every((b) => b.ok);
			return { figures: { bands, maxAbsError: Math.abs(worst.error) }, tolerance: { bands: p.bands, window: p.window }, passed, summary: `${bands.length} bands, largest error ${worst.error >= 0 ? '+' : ''}${worst.error.toFixed(2)} at ${worst.expected} (±${worst.tolerance})${passed ? '' : ': out of tolerance'}` };
		}
		if (kind === 'linearity') {
			const p = plan.linearity;
			const r = linearity(input.readings!.ref, input.readings!.obs);
			const passed = Math.abs(r.slope - p.slope) <= p.slopeTolerance && Math.abs(r.intercept) <= p.interceptTolerance;
			return { figures: { slope: +r.slope.toFixed(5), intercept: +r.intercept.toFixed(5), n: r.n }, tolerance: { slope: p.slope, slopeTolerance: p.slopeTolerance, interceptTolerance: p.interceptTolerance }, passed, summary: `slope ${r.slope.toFixed(4)} (${p.slope} ± ${p.slopeTolerance}), intercept ${r.intercept.toFixed(4)} (0 ± ${p.interceptTolerance})${passed ? '' : ': out of tolerance'}` };
		}
		const p = plan.noise;
		const rms = rmsNoise(input.spectrum!.axis, input.spectrum!.values);
		const passed = rms <= p.maxRms;
		return { figures: { rms: +rms.toPrecision(4) }, tolerance: { maxRms: p.maxRms }, passed, summary: `RMS noise ${rms.toExponential(2)} (≤ ${p.maxRms})${passed ? '' : ': out of tolerance'}` };
	} catch (e) {
		// A standard whose bands cannot be found fails the check, with the reason, rather than refusing the upload.
		if (e instanceof AnalysisError) return { figures: { error: e.message }, tolerance: {}, passed: false, summary: `could not evaluate: ${e.message}` };
		throw e;
	}
}

/** Records one check (technician or admin), computing the figures and pass/fail; audited. */
export async function record(actor: Actor, ref: number | string, input: z.input<typeof recordSchema>, file?: CheckFile | null) {
	if (!hasRole(actor, can.recordInstrumentChecks)) throw forbidden('Only a technician or an admin records instrument checks');
	const data = recordSchema.parse(input);
	const inst = await instrumentRow(ref);
	const plan = planOf(inst);
	const spectrum = data.kind === 'linearity' ? undefined : readSpectrum(file);
	const readings = data.kind === 'linearity' ? parseReadings(data.readings) : undefined;
	const result = evaluate(plan, data.kind, { spectrum, readings });
	return transaction(async (tx) => {
		const sha256 = file?.bytes?.length && spectrum ? createHash('sha256').update(file.bytes).digest('hex') : null;
		const [row] = await sequelize().query<{ id: number; performed_at: Date }>(
			`INSERT INTO instrument_checks (instrument_id, kind, performed_by, file_name, raw, sha256, input, figures, tolerance, passed, summary)
			 VALUES (:instrumentId, :kind, :by, :fileName, :raw, :sha256, :input, :figures, :tolerance, :passed, :summary) RETURNING id, performed_at`,
			{
				replacements: {
					instrumentId: inst.id,
					kind: data.kind,
					by: actor.id,
					fileName: spectrum ? file!.fileName : null,
					raw: spectrum ? Buffer.from(file!.bytes) : null,
					sha256,
					input: JSON.stringify(readings ? { readings } : { points: spectrum!.axis.length, unit: spectrum!.unit }),
					figures: JSON.stringify(result.figures),
					tolerance: JSON.stringify(result.tolerance),
					passed: result.passed,
					summary: result.summary
				},
				type: QueryTypes.SELECT,
				transaction: tx
			}
		);
		await audit.record(tx, actor, {
			action: 'instrument.check-recorded',
			entity: 'instrument',
			entityId: inst.id,
			after: { checkId: Number(row.id), kind: data.kind, passed: result.passed, summary: result.summary, figures: result.figures, sha256 }
		});
		return { id: Number(row.id), instrument: inst.name, kind: data.kind, passed: result.passed, summary: result.summary, figures: result.figures, performedAt: new Date(row.performed_at).toISOString() };
	});
}

export interface CheckView {
	id: number;
	kind: CheckKind;
	at: string;
	by: string | null;
	passed: boolean;
	summary: string;
	figures: Record<string, unknown>;
	fileName: string | null;
	sha256: string | null;
}

export async function history(ref: number | string, limit = 200): Promise<CheckView[]> {
	const inst = await instrumentRow(ref);
	const rows = await sequelize().query<Record<string, unknown>>(
		`SELECT c.id, c.kind, c.performed_at, u.name AS by, c.passed, c.summary, c.figures, c.file_name, c.sha256
		   FROM instrument_checks c LEFT JOIN users u ON u.id = c.performed_by WHERE c.instrument_id = :id ORDER BY c.performed_at DESC, c.id DESC LIMIT :limit`,
		{ replacements: { id: inst.id, limit }, type: QueryTypes.SELECT }
	);
	return rows.map((r) => ({
		id: Number(r.id),
		kind: r.kind as CheckKind,
		at: new Date(r.performed_at as Date).toISOString(),
		by: (r.by as string | null) ?? null,
		passed: !!r.passed,
		summary: r.summary as string,
		figures: r.figures as Record<string, unknown>,
		fileName: (r.file_name as string | null) ?? null,
		sha256: (r.sha256 as string | null) ?? null
	}));
}

export async function detail(ref: number | string) {
	const inst = await instrumentRow(ref);
	return { instrument: { id: inst.id, name: inst.name, technique: inst.technique, active: inst.active, checksDueFrom: inst.checks_due_from }, plan: planOf(inst), customPlan: inst.check_plan != null, status: await status(inst.id), history: await history(inst.id) };
}

/** All instruments with their qualification state (for the instruments list). */
export async function overview() {
	const rows = await sequelize().query<{ id: number }>('SELECT id FROM instruments ORDER BY name', { type: QueryTypes.SELECT });
	return Promise.all(rows.map((r) => status(Number(r.id))));
}

/** An admin edits the plan (intervals, bands, tolerances), with a reason; audited. */
export async function updatePlan(actor: Actor, ref: number | string, plan: unknown, reason: string) {
	if (!hasRole(actor, can.administer)) throw forbidden('Only an admin changes an instrument check plan');
	if (!reason?.trim() || reason.trim().length < 5) throw invalid('A plan change needs a reason', 'reason');
	const parsed = planSchema.safeParse(plan);
	if (!parsed.success) throw invalid(`Plan: ${parsed.error.issues[0].path.join('.')}: ${parsed.error.issues[0].message}`, 'plan');
	return transaction(async (tx) => {
		const inst = await instrumentRow(ref, tx);
		const before = planOf(inst);
		await sequelize().query('UPDATE instruments SET check_plan = :plan WHERE id = :id', { replacements: { id: inst.id, plan: JSON.stringify(parsed.data) }, transaction: tx });
		await audit.record(tx, actor, { action: 'instrument.check-plan-changed', entity: 'instrument', entityId: inst.id, before, after: parsed.data, reason: reason.trim() });
		return parsed.data;
	});
}
