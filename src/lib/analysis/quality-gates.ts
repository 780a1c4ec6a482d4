// Spectral quality gates, run on the spectrum as measured, before any axis step, preprocessing or model
// (docs/methods.md §22). A spectrum that fails a gate is `unusable` with a reason naming the gate and its value: it
// never gets a material verdict and never raises a supplier alert, because the cause is in the laboratory
// (instrument, presentation, export), not in the material. Pure: no database.
import { AnalysisError } from './errors';

export type Gate = 'flat' | 'wrong-ordinate' | 'saturation' | 'no-sample';
export type Technique = 'NIR' | 'Raman' | 'mid-IR';

export interface GateThresholds {
	/** flat: max − min of the ordinate at or below this, in ordinate units. */
	flatRange: number;
	/** saturation: this many or more consecutive points exactly at the spectrum's maximum value. */
	saturationRun: number;
	/** saturation: any value above this ordinate ceiling (the instrument's declared one, else the technique default). null: no ceiling. */
	ordinateCeiling: number | null;
	/** no sample: the spectrum's range divided by the library's median range at or below this. */
	noSampleRatio: number;
	/** wrong ordinate (absorbance techniques): a maximum above this, with no negative value, reads as percent reflectance/transmittance. */
	absorbanceMax: number;
}

/**
 * Defaults, all "common practice" (no single standard fixes them; they are the usual working values of NIR/IR and
 * Raman laboratories and are meant to be tuned per material and instrument):
 * - flatRange 1e-6: below the last printed digit of a 6-decimal export; a real spectrum varies far more.
 * - saturationRun 5: a detector or ADC at full scale reports the same top value on neighbouring points; five in a row
 *   at the very maximum does not happen by chance in a noisy band top.
 * - ordinateCeiling: absorbance 3.0 for NIR and mid-IR (at A = 3 only 0.1 % of the light reaches the detector and
 *   stray light makes readings non-linear); 65535 counts for Raman (a 16-bit CCD/ADC full scale).
 * - noSampleRatio 0.05: a measurement whose range is under 5 % of the library's typical range is at noise level
 *   (an empty probe, a closed shutter, a reference measured against itself).
 * - absorbanceMax 5: absorbance spectra of solids stay well under 5; values up to 100 with none below 0 are percent.
 */
/** Default flat range: the engine's own `screen` uses the same value, so the command line and the server agree (§9, §22). */
export const DEFAULT_FLAT_RANGE = 1e-6;

export function defaultThresholds(technique: Technique): GateThresholds {
	return {
		flatRange: DEFAULT_FLAT_RANGE,
		saturationRun: 5,
		ordinateCeiling: technique === 'Raman' ? 65535 : 3.0,
		noSampleRatio: 0.05,
		absorbanceMax: 5
	};
}

export interface GateInput {
	values: ArrayLike<number>;
	technique: Technique;
	/** The file's own ordinate unit (JCAMP-DX ##YUNITS, CSV header), if it states one. */
	yUnits?: string | null;
	/** The median (max − min) of the material's library spectra, for the no-sample gate; omitted: that gate is not run. */
	libraryRange?: number | null;
	thresholds?: Partial<GateThresholds>;
}

export type GateOutcome = { ok: true; checked: Gate[] } | { ok: false; gate: Gate; value: number | string; reason: string; checked: Gate[] };

const fmt = (x: number) => (Math.abs(x) >= 1e4 || (Math.abs(x) < 1e-3 && x !== 0) ? x.toExponential(3) : String(+x.toPrecision(4)));

/** Absorbance-type ordinate words (accepted), and reflectance/transmittance ones (refused where absorbance is expected). */
const ABSORBANCE_UNITS = /absorb|log\s*\(?\s*1\s*\/\s*[rt]\s*\)?|kubelka|\bA\.?U\.?\b|\bAU\b/i;
const LINEAR_UNITS = /reflect|transmit|%\s*[rt]\b|\bpercent\b|\b[rt]\s*%/i;

function checkThresholds(t: GateThresholds) {
	const positive = (k: keyof GateThresholds) => {
		const v = t[k];
		if (v === null && k === 'ordinateCeiling') return;
		if (typeof v !== 'number' || !Number.isFinite(v) || v <= 0) throw new AnalysisError('gate-threshold', `Quality gate threshold ${k} must be a positive number, got ${v}`);
	};
	(['flatRange', 'saturationRun', 'ordinateCeiling', 'noSampleRatio', 'absorbanceMax'] as const).forEach(positive);
	if (!Number.isInteger(t.saturationRun) || t.saturationRun < 2) throw new AnalysisError('gate-threshold', `saturationRun must be a whole number of at least 2, got ${t.saturationRun}`);
	if (t.noSampleRatio >= 1) throw new AnalysisError('gate-threshold', `noSampleRatio must be below 1, got ${t.noSampleRatio}`);
}

/**
 * Runs the gates in order — flat, wrong ordinate, saturation, no sample — and stops at the first that fails.
 * Non-finite points (gaps) are ignored; a spectrum with fewer than 2 finite points is flat.
 */
export function runGates(input: GateInput): GateOutcome {
	if (!input || !input.values || typeof input.values.length !== 'number') throw new AnalysisError('gate-input', 'Quality gates need the spectrum values');
	if (!['NIR', 'Raman', 'mid-IR'].includes(input.technique)) throw new AnalysisError('gate-input', `Unknown technique ${input.technique}`);
	const t: GateThresholds = { ...defaultThresholds(input.technique), ...(input.thresholds ?? {}) };
	checkThresholds(t);
	const y = input.values;
	let min = Infinity;
	let max = -Infinity;
	let finite = 0;
	for (let i = 0; i < y.length; i++) {
		const v = y[i];
		if (!Number.isFinite(v)) continue;
		finite++;
		if (v < min) min = v;
		if (v > max) max = v;
	}
	const checked: Gate[] = [];
	const fail = (gate: Gate, value: number | string, reason: string): GateOutcome => ({ ok: false, gate, value, reason: `quality gate ${gate}: ${reason}`, checked: [...checked, gate] });

	// 1. Flat or constant, whatever the recipe.
	const range = finite >= 2 ? max - min : 0;
	if (range <= t.flatRange) return fail('flat', range, `the spectrum is flat (max − min = ${fmt(range)}, at most ${fmt(t.flatRange)} allowed as flat)`);
	checked.push('flat');

	// 2. Wrong ordinate: reflectance or transmittance where absorbance is expected (NIR, mid-IR).
	if (input.technique !== 'Raman') {
		const units = (input.yUnits ?? '').trim();
		if (units && LINEAR_UNITS.test(units) && !ABSORBANCE_UNITS.test(units)) {
			return fail('wrong-ordinate', units, `the file's ordinate is "${units}", but this material is screened on absorbance (log 1/R or log 1/T); export absorbance`);
		}
		if (!(units && ABSORBANCE_UNITS.test(units)) && min >= 0 && max > t.absorbanceMax && max <= 100.5) {
			return fail('wrong-ordinate', max, `values run from ${fmt(min)} to ${fmt(max)}, which reads as percent reflectance or transmittance, not absorbance (absorbance above ${fmt(t.absorbanceMax)} is not expected)`);
		}
		checked.push('wrong-ordinate');
	}

	// 3. Detector saturation: a run of points at one maximum value, or values above the ordinate ceiling.
	let run = 0;
	let longest = 0;
	for (let i = 0; i < y.length; i++) {
		run = y[i] === max ? run + 1 : 0;
		if (run > longest) longest = run;
	}
	if (longest >= t.saturationRun) return fail('saturation', longest, `${longest} consecutive points sit at the maximum value ${fmt(max)} (${t.saturationRun} or more means the detector was saturated)`);
	if (t.ordinateCeiling !== null && max > t.ordinateCeiling) {
		return fail('saturation', max, `the maximum ${fmt(max)} is above the instrument's ordinate ceiling ${fmt(t.ordinateCeiling)}`);
	}
	checked.push('saturation');

	// 4. No sample: the signal's range is at noise level compared with the material's library.
	if (input.libraryRange != null) {
		if (!Number.isFinite(input.libraryRange) || input.libraryRange <= 0) throw new AnalysisError('gate-input', `libraryRange must be a positive number, got ${input.libraryRange}`);
		const ratio = range / input.libraryRange;
		if (ratio <= t.noSampleRatio) {
			return fail('no-sample', ratio, `the signal's range ${fmt(range)} is ${fmt(100 * ratio)} % of the library's typical range ${fmt(input.libraryRange)} (at most ${fmt(100 * t.noSampleRatio)} % reads as no sample)`);
		}
		checked.push('no-sample');
	}
	return { ok: true, checked };
}

/** The median of (max − min) over library spectra: the reference the no-sample gate compares a scan with. */
export function libraryRangeOf(spectra: ArrayLike<number>[]): number | null {
	const ranges: number[] = [];
	for (const s of spectra) {
		let lo = Infinity;
		let hi = -Infinity;
		for (let i = 0; i < s.length; i++) {
			const v = s[i];
			if (!Number.isFinite(v)) continue;
			if (v < lo) lo = v;
			if (v > hi) hi = v;
		}
		if (hi > lo) ranges.push(hi - lo);
	}
	if (!ranges.length) return null;
	ranges.sort((a, b) => a - b);
	const m = ranges.length >> 1;
	return ranges.length % 2 ? ranges[m] : (ranges[m - 1] + ranges[m]) / 2;
}
