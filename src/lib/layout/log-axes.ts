// Log axes for distance plots, shared by the browser charts and the printed reports: when to use them, where the ticks
// go (whole decades), how they read (0.1, 1, 10, 100, never 1e-1 or 1.00e+2), and which labels to drop so that none
// overlap. Pure; every input checked.

/** Decades spanned by the positive finite values (log10 of max / min); 0 with fewer than two positive values. */
export function decadesSpanned(values: readonly number[]): number {
	if (!Array.isArray(values)) throw new TypeError('log axes: values must be an array of numbers');
	let lo = Infinity;
	let hi = -Infinity;
	for (const v of values) {
		if (typeof v !== 'number') throw new TypeError('log axes: values must be numbers');
		if (Number.isFinite(v) && v > 0) {
			if (v < lo) lo = v;
			if (v > hi) hi = v;
		}
	}
	return hi > lo ? Math.log10(hi / lo) : 0;
}

/** Log axes by default when the data span more than `threshold` decades (issue 17: more than two). */
export function preferLogAxes(values: readonly number[], threshold = 2): boolean {
	if (!(threshold >= 0)) throw new RangeError('log axes: the threshold must be a non-negative number of decades');
	return decadesSpanned(values) > threshold;
}

/** The whole decades 10^k that bracket [min, max] (both positive): from the decade at or below min to the one at or above max. */
export function decadeTicks(min: number, max: number): number[] {
	if (!(Number.isFinite(min) && Number.isFinite(max) && min > 0 && max > 0)) throw new RangeError('log axes: the range needs positive finite ends');
	if (min > max) throw new RangeError('log axes: min must not exceed max');
	const from = Math.floor(Math.log10(min) + 1e-9);
	const to = Math.ceil(Math.log10(max) - 1e-9);
	if (to - from > 60) throw new RangeError('log axes: more than 60 decades');
	const out: number[] = [];
	for (let k = from; k <= Math.max(to, from); k++) out.push(decade(k));
	return out;
}

/** 10^k without the binary noise of Math.pow (10 ** -1 is 0.1, not 0.10000000000000002). */
function decade(k: number): number {
	return Number(`1e${k}`);
}

/** A decade as people write it: 0.001, 0.1, 1, 10, 100, 10000; beyond six places a power of ten (1e-7, 1e+9). */
export function formatDecade(v: number): string {
	if (!(Number.isFinite(v) && v > 0)) throw new RangeError('log axes: a tick must be a positive finite number');
	const k = Math.round(Math.log10(v));
	if (Math.abs(v / decade(k) - 1) > 1e-9) throw new RangeError(`log axes: ${v} is not a whole decade`);
	if (k < -6 || k > 6) return `1e${k > 0 ? '+' : ''}${k}`;
	return k < 0 ? `0.${'0'.repeat(-k - 1)}1` : `1${'0'.repeat(k)}`;
}

/** True when v is a whole decade (1, 10, 0.1, …). */
export function isDecade(v: number): boolean {
	if (!(Number.isFinite(v) && v > 0)) return false;
	return Math.abs(v / decade(Math.round(Math.log10(v))) - 1) < 1e-9;
}

/**
 * Which tick labels to print so that none overlap: left to right (or bottom to top), a label is kept when it starts at
 * least `gap` after the end of the last kept one. `centres` are the labels' centres along the axis, `sizes` their
 * extents along it (width on an x axis, height on a y axis). The first label is always kept.
 */
export function keepApart(centres: readonly number[], sizes: readonly number[], gap = 4): boolean[] {
	if (centres.length !== sizes.length) throw new RangeError('log axes: one size per label');
	if (!(gap >= 0)) throw new RangeError('log axes: the gap must be non-negative');
	for (const v of [...centres, ...sizes]) if (!Number.isFinite(v)) throw new TypeError('log axes: label positions and sizes must be finite');
	const order = centres.map((_, i) => i).sort((a, b) => centres[a] - centres[b]);
	const keep = centres.map(() => false);
	let end = -Infinity;
	for (const i of order) {
		const start = centres[i] - sizes[i] / 2;
		if (start >= end + gap || end === -Infinity) {
			keep[i] = true;
			end = centres[i] + sizes[i] / 2;
		}
	}
	return keep;
}
