import { describe, expect, test } from 'vitest';
import { AnalysisError, driftSeries } from '../../../src/lib/analysis';

// Hand-computed: history [1, 2, 1, 2, 1] → x̄ = 7/5 = 1.4, MR̄ = 4/4 = 1, σ̂ = 1/1.128 = 0.886525 (Montgomery §6.4),
// UCL = 1.4 + 3·0.886525 = 4.059574, LCL = −1.259574.
const ok = (value: number, accepted = true) => ({ value, accepted });

describe('drift series: each lot judged against the accepted lots before it', () => {
	test('collecting until 5 history lots, then judged; rule 1 on the first lot beyond the UCL', () => {
		const r = driftSeries([ok(1), ok(2), ok(1), ok(2), ok(1), ok(4.0), ok(5.6)]);
		expect(r.lots.slice(0, 5).every((l) => l.limits === null && l.signal === null)).toBe(true);
		expect(r.lots[5].limits!.centre).toBeCloseTo(1.4, 12);
		expect(r.lots[5].limits!.ucl).toBeCloseTo(1.4 + 3 / 1.128, 12);
		expect(r.lots[5].signal).toBeNull(); // 4.0 < 4.0596
		// Lot 7 is judged against six history lots [1,2,1,2,1,4]: x̄ = 11/6, MR̄ = 7/5, UCL = 11/6 + 3·1.4/1.128 = 5.5567
		expect(r.lots[6].limits!.ucl).toBeCloseTo(11 / 6 + (3 * 1.4) / 1.128, 12);
		// (the in-control 4.0 joined the history and widened it: the price of an expanding history, see methods §16)
		expect(r.lots[6].signal?.rule).toBe(1); // 5.6 > 5.5567
	});
	test('a lot that is not accepted (identity failed) never joins the history', () => {
		const r = driftSeries([ok(1), ok(2), ok(9, false), ok(1), ok(2), ok(1)]);
		expect(r.lots[2].inBaseline).toBe(false);
		expect(r.baselineCount).toBe(5);
		expect(r.current!.centre).toBeCloseTo(7 / 5, 12);
		expect(r.state).toBe('in-control');
	});
	test('state: collecting before 5 lots, signal once any lot fired', () => {
		expect(driftSeries([ok(1), ok(2)]).state).toBe('collecting');
		const r = driftSeries([ok(1), ok(2), ok(1), ok(2), ok(1), ok(10)]);
		expect(r.lots[5].signal?.rule).toBe(1);
		expect(r.lots[5].inBaseline).toBe(false);
		expect(r.state).toBe('signal');
	});
	test('bad input is refused', () => {
		expect(() => driftSeries([ok(Number.NaN)])).toThrow(AnalysisError);
		expect(() => driftSeries([], { minBaseline: 1 })).toThrow(/at least 2/);
	});
});
