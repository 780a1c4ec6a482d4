// EWMA control chart for small sustained shifts (Roberts 1959; design tables in Lucas & Saccucci 1990,
// Technometrics 32(1):1–12; formulas as in Montgomery, Introduction to Statistical Quality Control, 6th ed., §9.2).
//   z_i = λ·x_i + (1 − λ)·z_{i−1},  z_0 = μ₀
//   limits μ₀ ± L·σ·√(λ/(2 − λ)·[1 − (1 − λ)^{2i}])   (exact, time-varying limits)
// Our default λ = 0.2, L = 2.962 is the Lucas & Saccucci design with an in-control ARL of about 500 (from memory,
// their Table 3 as reproduced by Montgomery); any (λ, L) may be passed.
import { AnalysisError } from './errors';

export const EWMA_DEFAULT = { lambda: 0.2, L: 2.962 } as const;

export interface EwmaPoint {
	z: number;
	lcl: number;
	ucl: number;
	signal: 'above' | 'below' | null;
}

export function ewma(x: readonly number[], target: { mu0: number; sigma: number }, options: { lambda?: number; L?: number } = {}): EwmaPoint[] {
	const lambda = options.lambda ?? EWMA_DEFAULT.lambda;
	const L = options.L ?? EWMA_DEFAULT.L;
	if (!(lambda > 0 && lambda <= 1)) throw new AnalysisError('ewma-input', 'λ must lie in (0, 1]');
	if (!(L > 0) || !Number.isFinite(L)) throw new AnalysisError('ewma-input', 'L must be a positive number');
	const { mu0, sigma } = target;
	if (!Number.isFinite(mu0) || !Number.isFinite(sigma) || sigma < 0) throw new AnalysisError('ewma-input', 'μ₀ and σ must be finite, σ ≥ 0');
	if (!Array.isArray(x)) throw new AnalysisError('ewma-input', 'the series must be an array of numbers');
	let z = mu0;
	return x.map((v, i) => {
		if (typeof v !== 'number' || !Number.isFinite(v)) throw new AnalysisError('ewma-input', `series[${i}] is not a finite number`);
		z = lambda * v + (1 - lambda) * z;
		const w = L * sigma * Math.sqrt((lambda / (2 - lambda)) * (1 - (1 - lambda) ** (2 * (i + 1))));
		const lcl = mu0 - w;
		const ucl = mu0 + w;
		return { z, lcl, ucl, signal: z > ucl ? 'above' : z < lcl ? 'below' : null };
	});
}
