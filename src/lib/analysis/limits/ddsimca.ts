import { AnalysisError } from '../errors';
import { chi2Inv, median, sampleQuantile } from '../quantiles';

export type DofEstimator = 'moments' | 'robust';

export interface ScaledChi2 {
	/** Scale x₀ (h₀ or v₀). */
	x0: number;
	/** Degrees of freedom N (N_h or N_q). */
	dof: number;
}

/** Method of moments: x₀ = mean, N = max(1, round(2x₀²/var)), var on n − 1 (Pomerantsev 2008). */
export function dofMoments(x: ArrayLike<number>): ScaledChi2 {
	const n = x.length;
	if (n < 2) throw new AnalysisError('too-few', 'DD-SIMCA needs at least 2 distances');
	let m = 0;
	for (let i = 0; i < n; i++) m += x[i];
	m /= n;
	let v = 0;
	for (let i = 0; i < n; i++) v += (x[i] - m) ** 2;
	v /= n - 1;
	const dof = v > 0 ? Math.max(1, Math.round((2 * m * m) / v)) : 100;
	return { x0: m, dof };
}

/**
 * Robust estimator from the median M and inter-quartile range S (Pomerantsev & Rodionova 2014):
 * N = round(exp{[1.380948·ln(2.68631·M/S)]^1.185785}), N = 1 if S/M > 2.685592, N = 100 if S/M < 0.194566;
 * x₀ = ½N[M/χ²_{0.5}(N) + S/(χ²_{0.75}(N) − χ²_{0.25}(N))]. IQR from R type-7 sample quantiles.
 */
export function dofRobust(x: ArrayLike<number>): ScaledChi2 {
	const M = median(x);
	const S = sampleQuantile(x, 0.75) - sampleQuantile(x, 0.25);
	return robustFromMedianIqr(M, S);
}

export function robustFromMedianIqr(M: number, S: number): ScaledChi2 {
	if (!(M > 0)) throw new AnalysisError('degenerate', `robust DD-SIMCA estimator needs a positive median, got ${M}`);
	const ratio = S / M;
	let dof: number;
	if (!(ratio > 0.194566)) dof = 100;
	else if (ratio > 2.685592) dof = 1;
	else dof = Math.max(1, Math.round(Math.exp((1.380948 * Math.log((2.68631 * M) / S)) ** 1.185785)));
	const x0 = 0.5 * dof * (M / chi2Inv(0.5, dof) + S / (chi2Inv(0.75, dof) - chi2Inv(0.25, dof)));
	return { x0, dof };
}

export function estimateDof(x: ArrayLike<number>, estimator: DofEstimator): ScaledChi2 {
	return estimator === 'robust' ? dofRobust(x) : dofMoments(x);
}

/** c = N_h·h/h₀ + N_q·v/v₀ ~ χ²(N_h + N_q). */
export function ddStatistic(h: number, v: number, p: { h0: number; v0: number; nh: number; nq: number }): number {
	const hv = p.h0 > 0 ? (p.nh * h) / p.h0 : 0;
	const vv = p.v0 > 0 ? (p.nq * v) / p.v0 : v > 0 ? Infinity : 0;
	return hv + vv;
}

/** Acceptance boundary c_crit = χ²_{1−α}(N_h + N_q). */
export function cCritical(dof: number, alpha: number): number {
	if (!(alpha > 0 && alpha < 1)) throw new AnalysisError('bad-alpha', `alpha must be in (0, 1), got ${alpha}`);
	return chi2Inv(1 - alpha, dof);
}

/** Outlier boundary c_out = χ²⁻¹((1−γ)^{1/I}; N_h + N_q), I training objects. */
export function cOutlier(dof: number, gamma: number, count: number): number {
	if (!(gamma > 0 && gamma < 1)) throw new AnalysisError('bad-gamma', `gamma must be in (0, 1), got ${gamma}`);
	return chi2Inv((1 - gamma) ** (1 / count), dof);
}
