import { AnalysisError } from '../errors';
import { betaInv, fInv } from '../quantiles';

function check(n: number, k: number, alpha: number): void {
	if (!(alpha > 0 && alpha < 1)) throw new AnalysisError('bad-alpha', `alpha must be in (0, 1), got ${alpha}`);
	if (!(Number.isInteger(k) && k >= 1 && n - k - 1 > 0)) throw new AnalysisError('too-few', `T² limits need n > k + 1 (n = ${n}, k = ${k})`);
}

/** New (future) observation: k(n−1)(n+1)/(n(n−k))·F_{1−α}(k, n−k) (NIST/SEMATECH e-Handbook §6.5.4.3). */
export function t2LimitNew(n: number, k: number, alpha: number): number {
	check(n, k, alpha);
	return ((k * (n - 1) * (n + 1)) / (n * (n - k))) * fInv(1 - alpha, k, n - k);
}

/** Training object: ((n−1)²/n)·B_{1−α}(k/2, (n−k−1)/2) (Tracy, Young & Mason 1992). */
export function t2LimitTraining(n: number, k: number, alpha: number): number {
	check(n, k, alpha);
	return (((n - 1) ** 2) / n) * betaInv(1 - alpha, k / 2, (n - k - 1) / 2);
}
