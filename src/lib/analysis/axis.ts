import { AnalysisError } from './errors';

export type AxisUnit = 'nm' | 'cm-1' | 'um';

export const AXIS_UNITS: readonly AxisUnit[] = ['nm', 'cm-1', 'um'];

/** The axis every spectrum is resampled onto before preprocessing; ascending in `unit`. */
export interface ModelAxis {
	unit: AxisUnit;
	from: number;
	to: number;
	points: number;
	/** Constant spacing when the grid is uniform, otherwise null. */
	step: number | null;
	x: number[];
}

export type ResampleOutcome = { ok: true; values: Float64Array } | { ok: false; code: string; reason: string };

export function isAxisUnit(u: unknown): u is AxisUnit {
	return u === 'nm' || u === 'cm-1' || u === 'um';
}

/** Converts one axis value between units: nm ↔ cm⁻¹ is 10⁷/x, µm is nm/1000. */
export function convertAxisValue(x: number, from: AxisUnit, to: AxisUnit): number {
	if (from === to) return x;
	const nm = from === 'nm' ? x : from === 'um' ? x * 1000 : 1e7 / x;
	return to === 'nm' ? nm : to === 'um' ? nm / 1000 : 1e7 / nm;
}

export function convertAxis(x: ArrayLike<number>, from: AxisUnit, to: AxisUnit): Float64Array {
	const out = new Float64Array(x.length);
	for (let i = 0; i < x.length; i++) out[i] = convertAxisValue(x[i], from, to);
	return out;
}

const fmt = (v: number): string => String(Number(v.toPrecision(7)));

/** Tolerance for "is the model grid": rounding of unit conversions only. */
function edgeTolerance(axis: ModelAxis): number {
	const span = Math.abs(axis.to - axis.from);
	const step = axis.points > 1 ? span / (axis.points - 1) : span || 1;
	return 1e-6 * step + 1e-12 * Math.max(Math.abs(axis.from), Math.abs(axis.to));
}

/** Share of the model step an edge may fall short by and still count as covered (docs/methods.md §2). */
export const EDGE_STEP_FRACTION = 0.01;

/**
 * Tolerance for "covers the range": 1 % of the model step (plus float rounding). A file exported with a rounded axis
 * (e.g. cm⁻¹ with 2 decimals, which is up to ~0.0004 nm off at 900 nm) may miss a model edge by far less than a step;
 * the resampler then takes its edge value (no slope is extrapolated). A real shortfall is a step or more.
 */
function coverageTolerance(axis: ModelAxis): number {
	const span = Math.abs(axis.to - axis.from);
	const step = axis.points > 1 ? span / (axis.points - 1) : span || 1;
	return EDGE_STEP_FRACTION * step + 1e-12 * Math.max(Math.abs(axis.from), Math.abs(axis.to));
}

interface Sorted {
	x: Float64Array;
	y: Float64Array;
	/** Original index of each sorted point, to name positions in the input file. */
	index: Int32Array;
}

/** Converts to the model unit and sorts ascending, so either input direction works. */
function sortedInUnit(axis: ArrayLike<number>, values: ArrayLike<number>, unit: AxisUnit, target: AxisUnit): Sorted {
	const n = axis.length;
	const x = convertAxis(axis, unit, target);
	let ascending = true;
	for (let i = 1; i < n && ascending; i++) if (!(x[i] > x[i - 1])) ascending = false;
	if (ascending) {
		const index = new Int32Array(n);
		for (let i = 0; i < n; i++) index[i] = i;
		return { x, y: Float64Array.from(values), index };
	}
	const order = Array.from({ length: n }, (_, i) => i);
	order.sort((a, b) => x[a] - x[b]);
	const sx = new Float64Array(n);
	const sy = new Float64Array(n);
	const index = new Int32Array(n);
	for (let i = 0; i < n; i++) {
		sx[i] = x[order[i]];
		sy[i] = values[order[i]];
		index[i] = order[i];
	}
	return { x: sx, y: sy, index };
}

/**
 * Resamples a spectrum linearly onto the model axis. Refuses (never extrapolates) when the
 * model range is not covered, and refuses non-finite values unless gaps of at most `maxGap`
 * consecutive points may be bridged by the same linear interpolation.
 */
export function resampleOnto(
	spectrum: { axis: ArrayLike<number>; values: ArrayLike<number>; unit: AxisUnit },
	model: ModelAxis,
	options: { maxGap?: number } = {}
): ResampleOutcome {
	const { maxGap = 0 } = options;
	const { axis, values, unit } = spectrum;
	if (!isAxisUnit(unit)) return { ok: false, code: 'bad-unit', reason: `unknown axis unit "${String(unit)}"` };
	if (!axis || !values || axis.length !== values.length)
		return { ok: false, code: 'bad-shape', reason: `axis has ${axis?.length ?? 0} points but values has ${values?.length ?? 0}` };
	if (axis.length < 2) return { ok: false, code: 'bad-shape', reason: 'spectrum has fewer than 2 points' };
	// common case: the instrument grid is the model grid, so resampling is a copy; checked in the same
	// pass as the axis validation (screening time is dominated by such passes)
	let same = unit === model.unit && axis.length === model.points;
	const gridTol = same ? edgeTolerance(model) : 0;
	const gridX = model.x;
	const convertible = (unit === 'cm-1') === (model.unit === 'cm-1');
	for (let i = 0; i < axis.length; i++) {
		const a = axis[i];
		if (!Number.isFinite(a) || (a <= 0 && !convertible))
			return { ok: false, code: 'bad-axis', reason: `axis value at position ${i} is ${a}, which cannot be converted to ${model.unit}` };
		if (same && (!(Math.abs(a - gridX[i]) <= gridTol) || !Number.isFinite(values[i]))) same = false;
	}
	if (same) return { ok: true, values: new Float64Array(values) };
	const s = sortedInUnit(axis, values, unit, model.unit);
	const n = s.x.length;
	for (let i = 1; i < n; i++)
		if (!(s.x[i] > s.x[i - 1]))
			return { ok: false, code: 'bad-axis', reason: `axis value ${fmt(s.x[i])} ${model.unit} occurs twice` };

	const tol = coverageTolerance(model);
	const lo = model.from;
	const hi = model.to;
	const missing: string[] = [];
	if (s.x[0] > lo + tol) missing.push(`${fmt(lo)}–${fmt(Math.min(s.x[0], hi))} ${model.unit}`);
	if (s.x[n - 1] < hi - tol) missing.push(`${fmt(Math.max(s.x[n - 1], lo))}–${fmt(hi)} ${model.unit}`);
	if (missing.length > 0)
		return {
			ok: false,
			code: 'range-not-covered',
			reason: `spectrum covers ${fmt(s.x[0])}–${fmt(s.x[n - 1])} ${model.unit} but the model needs ${fmt(lo)}–${fmt(hi)} ${model.unit}; missing ${missing.join(' and ')}`
		};

	// Only points that bracket the model range influence the result; a NaN outside is irrelevant.
	let first = 0;
	while (first + 1 < n && s.x[first + 1] <= lo + tol) first++;
	let last = n - 1;
	while (last - 1 >= 0 && s.x[last - 1] >= hi - tol) last--;

	const bad: number[] = [];
	for (let i = first; i <= last; i++) if (!Number.isFinite(s.y[i])) bad.push(i);
	let keep: Int32Array | null = null;
	if (bad.length > 0) {
		const refused: number[] = [];
		const keepList: number[] = [];
		const isBad = new Uint8Array(n);
		for (const i of bad) isBad[i] = 1;
		for (let i = first; i <= last; ) {
			if (!isBad[i]) {
				keepList.push(i);
				i++;
				continue;
			}
			let j = i;
			while (j <= last && isBad[j]) j++;
			const run = j - i;
			const bridged = maxGap > 0 && run <= maxGap && i > first && j <= last;
			if (!bridged) for (let k = i; k < j; k++) refused.push(k);
			i = j;
		}
		if (refused.length > 0) {
			const shown = refused.slice(0, 10);
			const where = shown.map((k) => `${s.index[k]} (${fmt(s.x[k])} ${model.unit})`).join(', ');
			const more = refused.length > shown.length ? `, and ${refused.length - shown.length} more` : '';
			const rule = maxGap > 0 ? `; the recipe bridges gaps of at most ${maxGap} points inside the range` : '';
			return {
				ok: false,
				code: 'non-finite',
				reason: `${refused.length} non-finite value${refused.length === 1 ? '' : 's'} at position${refused.length === 1 ? '' : 's'} ${where}${more}${rule}`
			};
		}
		keep = Int32Array.from(keepList);
	}

	const out = new Float64Array(model.points);
	const mx = model.x;
	if (keep === null) {
		let j = first;
		for (let i = 0; i < model.points; i++) {
			const t = Math.min(Math.max(mx[i], s.x[first]), s.x[last]);
			while (j < last - 1 && s.x[j + 1] < t) j++;
			const x0 = s.x[j];
			const x1 = s.x[j + 1];
			const w = x1 === x0 ? 0 : (t - x0) / (x1 - x0);
			out[i] = s.y[j] + w * (s.y[j + 1] - s.y[j]);
		}
	} else {
		let j = 0;
		const m = keep.length;
		for (let i = 0; i < model.points; i++) {
			const t = Math.min(Math.max(mx[i], s.x[keep[0]]), s.x[keep[m - 1]]);
			while (j < m - 2 && s.x[keep[j + 1]] < t) j++;
			const a = keep[j];
			const b = keep[j + 1];
			const w = (t - s.x[a]) / (s.x[b] - s.x[a]);
			out[i] = s.y[a] + w * (s.y[b] - s.y[a]);
		}
	}
	return { ok: true, values: out };
}

function makeAxis(unit: AxisUnit, x: number[]): ModelAxis {
	if (x.length < 2) throw new AnalysisError('bad-axis', `the model axis needs at least 2 points, got ${x.length}`);
	const points = x.length;
	const from = x[0];
	const to = x[points - 1];
	const step0 = (to - from) / (points - 1);
	let uniform = true;
	for (let i = 1; i < points; i++) if (Math.abs(x[i] - x[i - 1] - step0) > 1e-9 * Math.abs(step0) + 1e-12 * Math.abs(to)) uniform = false;
	return { unit, from, to, points, step: uniform ? step0 : null, x };
}

/** A uniform grid from..to with the given step (the last point is `to` when it falls on the grid). */
export function uniformAxis(from: number, to: number, step: number, unit: AxisUnit): ModelAxis {
	if (!(step > 0) || !(to > from)) throw new AnalysisError('bad-axis', `axis needs from < to and step > 0 (got ${from}, ${to}, ${step})`);
	const count = Math.floor((to - from) / step + 1e-9) + 1;
	const x = Array.from({ length: count }, (_, i) => from + i * step);
	return makeAxis(unit, x);
}

/**
 * Default model axis: the first training spectrum's points (in its own unit, ascending),
 * clipped to the range every training spectrum covers, and optionally to [from, to].
 */
export function defaultAxis(
	spectra: { id: string; axis: ArrayLike<number>; unit: AxisUnit }[],
	request?: { from: number; to: number; unit: AxisUnit; step?: number }
): ModelAxis {
	if (spectra.length === 0) throw new AnalysisError('no-training', 'no training spectra');
	const unit = request?.unit ?? spectra[0].unit;
	let lo = -Infinity;
	let hi = Infinity;
	for (const s of spectra) {
		if (!isAxisUnit(s.unit)) throw new AnalysisError('bad-unit', `spectrum "${s.id}" has unknown axis unit "${String(s.unit)}"`);
		const x = convertAxis(s.axis, s.unit, unit);
		let mn = Infinity;
		let mx = -Infinity;
		for (const v of x) {
			if (!Number.isFinite(v)) continue;
			if (v < mn) mn = v;
			if (v > mx) mx = v;
		}
		lo = Math.max(lo, mn);
		hi = Math.min(hi, mx);
	}
	if (request) {
		// the same edge allowance as resampling (1 % of a step, or 10⁻⁹ of the span without a step): a file whose axis
		// was rounded on export still covers a declared edge
		const tol = request.step !== undefined ? EDGE_STEP_FRACTION * request.step : 1e-9 * Math.abs(request.to - request.from);
		if (request.from < lo - tol || request.to > hi + tol)
			throw new AnalysisError('range-not-covered', `requested axis ${request.from}–${request.to} ${unit} is outside the range all training spectra cover (${fmt(lo)}–${fmt(hi)} ${unit})`);
		lo = request.from;
		hi = request.to;
		if (request.step !== undefined) return uniformAxis(lo, hi, request.step, unit);
	}
	if (!(hi > lo)) throw new AnalysisError('range-not-covered', 'the training spectra share no common axis range');
	const first = convertAxis(spectra[0].axis, spectra[0].unit, unit);
	const xs = Array.from(first)
		.filter((v) => Number.isFinite(v) && v >= lo && v <= hi)
		.sort((a, b) => a - b);
	return makeAxis(unit, xs);
}

/** Keeps only the points of a model axis inside [from, to] (the `range` recipe step). */
export function restrictAxis(axis: ModelAxis, from: number, to: number): ModelAxis {
	const x = axis.x.filter((v) => v >= Math.min(from, to) && v <= Math.max(from, to));
	if (x.length < 2) throw new AnalysisError('bad-range', `range(${from}, ${to}) keeps ${x.length} points of the model axis ${fmt(axis.from)}–${fmt(axis.to)} ${axis.unit}`);
	return makeAxis(axis.unit, x);
}

/** The model axis points inside any of several windows (in axis order); each window must keep at least 2 points. */
export function restrictAxisToWindows(axis: ModelAxis, windows: { from: number; to: number }[]): ModelAxis {
	if (windows.length === 0) return axis;
	if (windows.length === 1) return restrictAxis(axis, windows[0].from, windows[0].to);
	for (const w of windows) {
		const kept = axis.x.filter((v) => v >= w.from && v <= w.to).length;
		if (kept < 2) throw new AnalysisError('bad-range', `range(${w.from}, ${w.to}) keeps ${kept} points of the model axis ${fmt(axis.from)}–${fmt(axis.to)} ${axis.unit}`);
	}
	return makeAxis(axis.unit, axis.x.filter((v) => windows.some((w) => v >= w.from && v <= w.to)));
}

export function axisFromJson(a: ModelAxis): ModelAxis {
	return makeAxis(a.unit, a.x);
}
