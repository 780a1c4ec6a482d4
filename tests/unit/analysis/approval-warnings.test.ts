// What the approval page warns about (issue 17 item 6). The binomial allowance is checked against SciPy:
// scipy.stats.binom.ppf(0.95, 20, 0.05) = 3 and scipy.stats.binom.ppf(0.95, 60, 0.05) = 6 (SciPy 1.x, run for this test).
import { describe, expect, it } from 'vitest';
import { approvalWarnings } from '../../../src/lib/analysis/approval-warnings';

const criteria = { cvFrrFactor: 2, cvFrrQuantile: 0.95 };
const model = (name: string, n: number, rejected: number, warnings: string[] = []) => ({ name, n, alpha: 0.05, cvFalseRejectRate: rejected / n, warnings });

describe('approvalWarnings', () => {
	it('sorts the engine guards into components at the cap and low degrees of freedom', () => {
		const w = approvalWarnings(
			[
				model('family', 60, 0, [
					'family model: the suggested component count equals the cap (15): PRESS still falls there, so the count may be fitting noise; the parsimony rule (smallest A within 5 % of the minimum PRESS) gives 6; consider fixing A'
				]),
				model('genuine', 20, 1, ['class "genuine": N_q = 2 (below 3): a heavy-tailed distance distribution widens the acceptance area; compare the observed distance quantiles with the fitted χ²'])
			],
			criteria
		);
		expect(w.map((x) => [x.kind, x.model])).toEqual([
			['components-at-cap', 'family'],
			['low-degrees-of-freedom', 'genuine']
		]);
	});

	it('flags a false-reject rate above 2α, saying whether the binomial allowance for n covers it', () => {
		// n = 20, α = 0.05: 2α·n = 2 rejections; the 95th percentile of Binomial(20, 0.05) is 3 (SciPy), so 3 is allowed, 4 is not.
		expect(approvalWarnings([model('genuine', 20, 2)], criteria)).toEqual([]);
		const three = approvalWarnings([model('genuine', 20, 3)], criteria);
		expect(three).toHaveLength(1);
		expect(three[0]).toMatchObject({ kind: 'high-false-reject-rate', model: 'genuine' });
		expect(three[0].text).toBe('cross-validated false-reject rate 15.0 % (3 of 20) is above 2α = 10.0 %; with n = 20 the binomial allowance (15.0 %) still covers it, so it may be chance');
		const four = approvalWarnings([model('genuine', 20, 4)], criteria);
		expect(four[0].text).toBe('cross-validated false-reject rate 20.0 % (4 of 20) is above 2α = 10.0 %; it exceeds the acceptance bound 15.0 %');
		// n = 60: 2α·n = 6 and the SciPy quantile is also 6, so 7 exceeds the bound.
		expect(approvalWarnings([model('family', 60, 6)], criteria)).toEqual([]);
		expect(approvalWarnings([model('family', 60, 7)], criteria)[0].text).toContain('exceeds the acceptance bound 10.0 %');
	});

	it('refuses figures that cannot be a model, naming the problem', () => {
		expect(() => approvalWarnings([{ name: 'genuine', n: 0, alpha: 0.05, cvFalseRejectRate: 0 }], criteria)).toThrow(/n must be a positive whole number/);
		expect(() => approvalWarnings([{ name: 'genuine', n: 10, alpha: 0.05, cvFalseRejectRate: 1.5 }], criteria)).toThrow(/false-reject rate must be in \[0, 1\]/);
		expect(() => approvalWarnings([model('genuine', 10, 0)], { cvFrrFactor: 0.5, cvFrrQuantile: 0.95 })).toThrow(/cvFrrFactor/);
	});
});
