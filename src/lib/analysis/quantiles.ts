import jStat from 'jstat';
import { AnalysisError } from './errors';

// Every distribution quantile goes through jstat; nothing here is hand-rolled.

function checkP(p: number): void {
	if (!(p > 0 && p < 1)) throw new AnalysisError('bad-probability', `probability must be in (0, 1), got ${p}`);
}

/** F quantile F_p(d1, d2). */
export function fInv(p: number, d1: number, d2: number): number {
	checkP(p);
	return jStat.centralF.inv(p, d1, d2);
}

/** Chi-square quantile χ²_p(df); df need not be an integer. */
export function chi2Inv(p: number, df: number): number {
	checkP(p);
	return jStat.chisquare.inv(p, df);
}

export function chi2Cdf(x: number, df: number): number {
	return jStat.chisquare.cdf(x, df);
}

/** Standard normal quantile z_p. */
export function normalInv(p: number): number {
	checkP(p);
	return jStat.normal.inv(p, 0, 1);
}

/** Beta quantile B_p(a, b). */
export function betaInv(p: number, a: number, b: number): number {
	checkP(p);
	return jStat.beta.inv(p, a, b);
}

/**
 * Binomial quantile: the smallest k with P(X ≤ k) ≥ p for X ~ Binomial(n, prob), from jstat's binomial CDF
 * (the definition of a discrete quantile; scipy.stats.binom.ppf gives the same).
 */
export function binomialInv(p: number, n: number, prob: number): number {
	checkP(p);
	if (!(Number.isInteger(n) && n >= 0)) throw new AnalysisError('bad-argument', `n must be a whole number ≥ 0, got ${n}`);
	if (!(prob >= 0 && prob <= 1)) throw new AnalysisError('bad-probability', `probability must be in [0, 1], got ${prob}`);
	for (let k = 0; k < n; k++) if (jStat.binomial.cdf(k, n, prob) >= p) return k;
	return n;
}

/**
 * Sample quantile with linear interpolation between order statistics (R type 7, numpy's default), via
 * jstat's `quantiles` with plotting positions alphap = betap = 1. `jStat.percentile` is not used: it stops
 * interpolating below the top order statistic (n = 12, p = 0.95 gave 0.72 where numpy gives 0.8235) and
 * returns the lower value as the median of two.
 */
export function sampleQuantile(values: ArrayLike<number>, p: number): number {
	if (!(p >= 0 && p <= 1)) throw new AnalysisError('bad-probability', `probability must be in [0, 1], got ${p}`);
	const data = Array.from(values);
	if (data.length === 0) throw new AnalysisError('empty-sample', 'a sample quantile needs at least one value');
	if (data.some((v) => !Number.isFinite(v))) throw new AnalysisError('non-finite', 'a sample quantile needs finite values');
	if (data.length === 1) return data[0];
	return jStat.quantiles(data, [p], 1, 1)[0];
}

export function median(values: ArrayLike<number>): number {
	return sampleQuantile(values, 0.5);
}
