// Shewhart individuals chart with sigma from the average moving range, and the Western Electric rules 1–4.
//
// Sources:
// - Montgomery, D.C., Introduction to Statistical Quality Control (Wiley; 6th ed. 2009, §6.4 "Control charts for
//   individual measurements"): σ̂ = MR̄/d₂ with d₂ = 1.128 for moving ranges of n = 2; limits x̄ ± 3σ̂.
// - Western Electric Co. (1956), Statistical Quality Control Handbook, as quoted in Montgomery & Runger, Applied
//   Statistics and Probability for Engineers (3rd ed. 2003, §16-3, p. 606): out of control if
//   1. one point plots outside the 3-sigma control limits;
//   2. two out of three consecutive points plot beyond a 2-sigma limit;
//   3. four out of five consecutive points plot at a distance of 1-sigma or beyond from the center line;
//   4. eight consecutive points plot on one side of the center line.
//   "Rules 2 and 3 apply to one side of the center line at a time." We apply rule 4 one side at a time as well.
import { AnalysisError } from './errors';

/** d₂ for ranges of n = 2 observations (Montgomery, Appendix Table VI; E|x₁ − x₂|/σ = 2/√π = 1.1284). */
export const D2_N2 = 1.128;
/** D₄ for n = 2: upper limit of the moving-range chart, D₄·MR̄ (Montgomery, Appendix Table VI). */
export const D4_N2 = 3.267;

export interface IndividualsLimits {
	/** Number of baseline observations. */
	n: number;
	centre: number;
	/** Average moving range MR̄ = Σ|x_i − x_{i−1}| / (n − 1). */
	mrBar: number;
	/** σ̂ = MR̄ / d₂. */
	sigma: number;
	lcl: number;
	ucl: number;
	/** Upper limit of the companion moving-range chart, D₄·MR̄. */
	mrUcl: number;
}

function checkSeries(x: readonly number[], what: string, min: number) {
	if (!Array.isArray(x)) throw new AnalysisError('chart-input', `${what} must be an array of numbers`);
	if (x.length < min) throw new AnalysisError('chart-too-few', `${what} needs at least ${min} values, got ${x.length}`);
	x.forEach((v, i) => {
		if (typeof v !== 'number' || !Number.isFinite(v)) throw new AnalysisError('chart-input', `${what}[${i}] is not a finite number`);
	});
}

/** Centre line, σ̂ from the average moving range, and L-sigma limits (L = 3) of an individuals chart. */
export function individualsLimits(baseline: readonly number[], L = 3): IndividualsLimits {
	checkSeries(baseline, 'baseline', 2);
	if (!(L > 0) || !Number.isFinite(L)) throw new AnalysisError('chart-input', 'L must be a positive number');
	const n = baseline.length;
	const centre = baseline.reduce((s, v) => s + v, 0) / n;
	let mr = 0;
	for (let i = 1; i < n; i++) mr += Math.abs(baseline[i] - baseline[i - 1]);
	const mrBar = mr / (n - 1);
	const sigma = mrBar / D2_N2;
	return { n, centre, mrBar, sigma, lcl: centre - L * sigma, ucl: centre + L * sigma, mrUcl: D4_N2 * mrBar };
}

export type WeRule = 1 | 2 | 3 | 4;
export interface RuleHit {
	rule: WeRule;
	side: 'above' | 'below';
	message: string;
}

export const RULE_TEXT: Record<WeRule, string> = {
	1: 'one point beyond a 3-sigma control limit',
	2: 'two of three consecutive points beyond the same 2-sigma limit',
	3: 'four of five consecutive points beyond the same 1-sigma line',
	4: 'eight consecutive points on the same side of the centre line'
};

/**
 * The Western Electric rules that the LAST point of `recent` completes, judged against `limits`. `recent` is the
 * series up to and including the point being judged, oldest first. A rule fires only on a point that takes part in
 * its pattern (the judged point itself lies beyond the zone on the same side), so each excursion is reported where it
 * becomes visible. Returned lowest rule first; empty when the point is in control.
 */
export function westernElectric(recent: readonly number[], limits: Pick<IndividualsLimits, 'centre' | 'sigma'>): RuleHit[] {
	checkSeries(recent, 'series', 1);
	const { centre, sigma } = limits;
	if (!Number.isFinite(centre) || !Number.isFinite(sigma) || sigma < 0) throw new AnalysisError('chart-input', 'limits need a finite centre and a non-negative sigma');
	const z = recent.map((v) => (sigma > 0 ? (v - centre) / sigma : v === centre ? 0 : Math.sign(v - centre) * Infinity));
	const last = z[z.length - 1];
	const hits: RuleHit[] = [];
	if (last === 0) return hits;
	const side: 'above' | 'below' = last > 0 ? 'above' : 'below';
	const s = last > 0 ? 1 : -1;
	const tail = (k: number) => z.slice(Math.max(0, z.length - k));
	const beyond = (k: number, zone: number) => tail(k).filter((v) => s * v > zone).length;
	const sideText = side === 'above' ? 'above' : 'below';
	if (s * last > 3) hits.push({ rule: 1, side, message: `Rule 1: ${RULE_TEXT[1]} (${sideText} the ${side === 'above' ? 'upper' : 'lower'} limit)` });
	if (s * last > 2 && beyond(3, 2) >= 2) hits.push({ rule: 2, side, message: `Rule 2: ${RULE_TEXT[2]} (${sideText} the centre)` });
	if (s * last > 1 && beyond(5, 1) >= 4) hits.push({ rule: 3, side, message: `Rule 3: ${RULE_TEXT[3]} (${sideText} the centre)` });
	if (z.length >= 8 && beyond(8, 0) === 8) hits.push({ rule: 4, side, message: `Rule 4: ${RULE_TEXT[4]} (${sideText})` });
	return hits;
}
