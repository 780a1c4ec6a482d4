import { AnalysisError } from '../errors';
import { chi2Inv, normalInv } from '../quantiles';

export type SpeMethod = 'jackson-mudholkar' | 'box' | 'moments';
export const SPE_METHODS: readonly SpeMethod[] = ['jackson-mudholkar', 'box', 'moments'];

function checkAlpha(alpha: number): void {
	if (!(alpha > 0 && alpha < 1)) throw new AnalysisError('bad-alpha', `alpha must be in (0, 1), got ${alpha}`);
}

/**
 * Jackson & Mudholkar (1979), one-sided: Q_α = θ₁[z_{1−α}√(2θ₂h₀²)/θ₁ + 1 + θ₂h₀(h₀−1)/θ₁²]^{1/h₀},
 * h₀ = 1 − 2θ₁θ₃/(3θ₂²). Returns NaN when h₀ ≤ 0 or the bracket is not positive (approximation undefined).
 */
export function speJacksonMudholkar(theta1: number, theta2: number, theta3: number, alpha: number): number {
	checkAlpha(alpha);
	if (!(theta1 > 0 && theta2 > 0)) return 0;
	const h0 = 1 - (2 * theta1 * theta3) / (3 * theta2 * theta2);
	if (!(h0 > 0)) return Number.NaN;
	const z = normalInv(1 - alpha);
	const bracket = (z * Math.sqrt(2 * theta2 * h0 * h0)) / theta1 + 1 + (theta2 * h0 * (h0 - 1)) / (theta1 * theta1);
	if (!(bracket > 0)) return Number.NaN;
	return theta1 * bracket ** (1 / h0);
}

/** Box (1954) in eigenvalue form: g = θ₂/θ₁, h = θ₁²/θ₂, Q_α = g·χ²_{1−α}(h). */
export function speBox(theta1: number, theta2: number, alpha: number): number {
	checkAlpha(alpha);
	if (!(theta1 > 0 && theta2 > 0)) return 0;
	const g = theta2 / theta1;
	const h = (theta1 * theta1) / theta2;
	return g * chi2Inv(1 - alpha, h);
}

/** Box (1954) by moments of reference Q values: g = v/(2m), h = 2m²/v, v on n − 1 (Nomikos & MacGregor 1995). */
export function speMoments(q: ArrayLike<number>, alpha: number): number {
	checkAlpha(alpha);
	const n = q.length;
	if (n < 2) throw new AnalysisError('too-few', 'the moment SPE limit needs at least 2 reference values');
	let m = 0;
	for (let i = 0; i < n; i++) m += q[i];
	m /= n;
	let v = 0;
	for (let i = 0; i < n; i++) v += (q[i] - m) ** 2;
	v /= n - 1;
	if (!(m > 0 && v > 0)) return m;
	return (v / (2 * m)) * chi2Inv(1 - alpha, (2 * m * m) / v);
}
