// Model transfer check (issue 14 §3): before an approved version screens scans from an instrument it was not built
// on, genuine spectra of the material measured on that instrument are screened by the version. Pure: the server
// screens the spectra and passes the verdicts, their supplier lots and the genuine-class distances in here.
//
// Criteria (issue 14 §3, with the version's acceptance criteria of issue 12 §1 where they are stricter):
// - at least max(10, genuineTestMin) genuine spectra from at least max(3, genuineTestLotsMin) supplier lots;
// - verdict-level sensitivity (share called `genuine`) of at least max(0.90, sensitivityMin), reported with its
//   Clopper–Pearson 95 % interval.
// The distance comparison (old instrument against new) is evidence beside the criteria, not a criterion:
// c/c_crit of the genuine class on the version's own training spectra against the same on the new instrument,
// summarised by n, median, 95th percentile (linear interpolation between order statistics, Hyndman & Fan type 7 =
// numpy.percentile's default) and the share above 1, with the two-sample Kolmogorov–Smirnov statistic
// D = sup_x |F_old(x) − F_new(x)| (Kolmogorov 1933, Smirnov 1948; scipy.stats.ks_2samp computes the same D).
import { AnalysisError } from './errors';
import { clopperPearson, type Interval } from './metrics';
import { sampleQuantile } from './quantiles';

export const TRANSFER_MINIMUMS = Object.freeze({ spectra: 10, lots: 3, sensitivity: 0.9 });

export interface TransferItem {
	/** The supplier lot the genuine spectrum was measured on. */
	lot: string;
	/** The version's verdict on the spectrum. */
	verdict: string;
	/** c / c_crit of the genuine class model (null when the spectrum could not be screened). */
	ratio: number | null;
}

export interface TransferCriteria {
	minSpectra: number;
	minLots: number;
	sensitivityMin: number;
}

export interface DistanceSummary {
	n: number;
	median: number | null;
	p95: number | null;
	/** Share with c/c_crit above 1 (outside the genuine class's acceptance area). */
	above: number | null;
}

export interface TransferEvaluation {
	met: boolean;
	criteria: TransferCriteria;
	spectra: number;
	lots: string[];
	genuine: number;
	sensitivity: Interval;
	checks: { key: 'spectra' | 'lots' | 'sensitivity'; label: string; met: boolean; observed: string; required: string }[];
	unmet: string[];
	comparison: { old: DistanceSummary; new: DistanceSummary; ks: number | null };
}

/** The transfer criteria: the minimums, raised by the version's acceptance criteria where those are stricter. */
export function transferCriteria(acceptance: { genuineTestMin?: number; genuineTestLotsMin?: number; sensitivityMin?: number } | null | undefined): TransferCriteria {
	const a = acceptance ?? {};
	return {
		minSpectra: Math.max(TRANSFER_MINIMUMS.spectra, finiteOr(a.genuineTestMin, 0)),
		minLots: Math.max(TRANSFER_MINIMUMS.lots, finiteOr(a.genuineTestLotsMin, 0)),
		sensitivityMin: Math.max(TRANSFER_MINIMUMS.sensitivity, finiteOr(a.sensitivityMin, 0))
	};
}

const finiteOr = (x: unknown, d: number) => (typeof x === 'number' && Number.isFinite(x) ? x : d);

function checkRatios(values: readonly number[], what: string) {
	if (!Array.isArray(values)) throw new AnalysisError('transfer-input', `${what} must be an array of numbers`);
	values.forEach((v, i) => {
		if (typeof v !== 'number' || !Number.isFinite(v) || v < 0) throw new AnalysisError('transfer-input', `${what}[${i}] must be a finite number ≥ 0, got ${v}`);
	});
}

/** Sample quantile, Hyndman & Fan (1996) type 7 (numpy.percentile's default): the engine's shared one. */
export function quantile7(values: readonly number[], p: number): number {
	if (!values.length) throw new AnalysisError('transfer-input', 'a quantile of no values');
	return sampleQuantile(values, p);
}

/** n, median, 95th percentile (type 7) and the share above 1 of a set of c/c_crit values. */
export function summariseDistances(values: readonly number[]): DistanceSummary {
	checkRatios(values, 'distances');
	if (!values.length) return { n: 0, median: null, p95: null, above: null };
	return { n: values.length, median: quantile7(values, 0.5), p95: quantile7(values, 0.95), above: values.filter((v) => v > 1).length / values.length };
}

/** Two-sample Kolmogorov–Smirnov statistic D = max over the pooled sample of |F_a(x) − F_b(x)| (empirical CDFs). */
export function ksStatistic(a: readonly number[], b: readonly number[]): number {
	checkRatios(a, 'first sample');
	checkRatios(b, 'second sample');
	if (!a.length || !b.length) throw new AnalysisError('transfer-input', 'the Kolmogorov–Smirnov statistic needs two non-empty samples');
	const x = [...a].sort((p, q) => p - q);
	const y = [...b].sort((p, q) => p - q);
	let i = 0;
	let j = 0;
	let d = 0;
	// walk the pooled values in order; at each distinct value both CDFs include every observation ≤ it
	while (i < x.length && j < y.length) {
		const v = Math.min(x[i], y[j]);
		while (i < x.length && x[i] <= v) i++;
		while (j < y.length && y[j] <= v) j++;
		d = Math.max(d, Math.abs(i / x.length - j / y.length));
	}
	return d;
}

const pct = (x: number) => `${(x * 100).toFixed(1)} %`;

/**
 * Evaluates a transfer check. `items` are the new instrument's genuine spectra screened by the version; `oldRatios`
 * are c/c_crit of the genuine class on the version's own training spectra (its home instruments).
 */
export function evaluateTransfer(items: readonly TransferItem[], oldRatios: readonly number[], criteria: TransferCriteria): TransferEvaluation {
	if (!Array.isArray(items)) throw new AnalysisError('transfer-input', 'items must be an array');
	for (const [k, v] of Object.entries(criteria)) if (typeof v !== 'number' || !Number.isFinite(v) || v < 0) throw new AnalysisError('transfer-input', `criterion ${k} must be a finite number ≥ 0`);
	if (criteria.sensitivityMin > 1) throw new AnalysisError('transfer-input', 'the sensitivity criterion is a share between 0 and 1');
	items.forEach((it, i) => {
		if (!it || typeof it.lot !== 'string' || !it.lot.trim()) throw new AnalysisError('transfer-input', `spectrum ${i + 1} names no supplier lot: a transfer check counts lots`);
		if (typeof it.verdict !== 'string') throw new AnalysisError('transfer-input', `spectrum ${i + 1} has no verdict`);
	});
	const lots = [...new Set(items.map((i) => i.lot.trim()))].sort();
	const genuine = items.filter((i) => i.verdict === 'genuine').length;
	const sensitivity = clopperPearson(genuine, items.length);
	const checks: TransferEvaluation['checks'] = [
		{ key: 'spectra', label: 'genuine spectra measured on the new instrument', met: items.length >= criteria.minSpectra, observed: String(items.length), required: `≥ ${criteria.minSpectra}` },
		{ key: 'lots', label: 'supplier lots among them', met: lots.length >= criteria.minLots, observed: String(lots.length), required: `≥ ${criteria.minLots}` },
		{
			key: 'sensitivity',
			label: 'verdict-level sensitivity (share called genuine)',
			met: items.length > 0 && genuine / items.length >= criteria.sensitivityMin - 1e-12,
			observed: items.length ? `${genuine}/${items.length} = ${pct(genuine / items.length)} (95 % CI ${pct(sensitivity.lower)}–${pct(sensitivity.upper)})` : 'no spectra',
			required: `≥ ${pct(criteria.sensitivityMin)}`
		}
	];
	const newRatios = items.map((i) => i.ratio).filter((r): r is number => r != null);
	const comparison = {
		old: summariseDistances(oldRatios),
		new: summariseDistances(newRatios),
		ks: oldRatios.length && newRatios.length ? ksStatistic(oldRatios, newRatios) : null
	};
	const unmet = checks.filter((c) => !c.met).map((c) => `${c.label}: ${c.observed}, required ${c.required}`);
	return { met: unmet.length === 0, criteria, spectra: items.length, lots, genuine, sensitivity, checks, unmet, comparison };
}
