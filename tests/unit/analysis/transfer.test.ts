import { describe, expect, test } from 'vitest';
import { AnalysisError } from '../../../src/lib/analysis';
import { evaluateTransfer, ksStatistic, summariseDistances, transferCriteria, type TransferItem } from '../../../src/lib/analysis/transfer';

// Two samples of c/c_crit values, chosen for the check (inputs only: every expected figure below was computed by
// numpy 2.4 / scipy 1.17, not by this code).
const OLD = [0.42, 0.55, 0.61, 0.38, 0.72, 0.49, 0.66, 0.58, 0.51, 0.44, 0.93, 0.47];
const NEW = [0.71, 0.88, 0.64, 1.12, 0.79, 0.95, 0.69, 0.83, 0.77, 0.91, 0.58];

describe('distance comparison, against numpy and scipy', () => {
	test('two-sample Kolmogorov–Smirnov D = scipy.stats.ks_2samp(OLD, NEW).statistic = 0.6590909090909091', () => {
		expect(ksStatistic(OLD, NEW)).toBeCloseTo(0.6590909090909091, 12);
		expect(ksStatistic(NEW, OLD)).toBeCloseTo(0.6590909090909091, 12);
	});
	test('with ties: scipy.stats.ks_2samp([1,2,2,3,3,3], [2,3,3,4]).statistic = 0.25', () => {
		expect(ksStatistic([1, 2, 2, 3, 3, 3], [2, 3, 3, 4])).toBeCloseTo(0.25, 12);
	});
	test('median and 95th percentile = numpy.percentile (linear): 0.53 / 0.8145 and 0.79 / 1.035', () => {
		const a = summariseDistances(OLD);
		expect(a.median).toBeCloseTo(0.53, 12);
		expect(a.p95).toBeCloseTo(0.8145, 12);
		const b = summariseDistances(NEW);
		expect(b.median).toBeCloseTo(0.79, 12);
		expect(b.p95).toBeCloseTo(1.035, 12);
		expect(b.above).toBeCloseTo(1 / 11, 12); // 1.12 is the only value above 1
	});
	test('inputs are checked', () => {
		expect(() => ksStatistic([], [1])).toThrow(AnalysisError);
		expect(() => summariseDistances([0.5, Number.NaN])).toThrow(/finite/);
		expect(() => summariseDistances([-1])).toThrow(/≥ 0/);
	});
});

const item = (lot: string, verdict: string, ratio: number | null = 0.5): TransferItem => ({ lot, verdict, ratio });

describe('transfer criteria (issue 14 §3)', () => {
	test("the issue's minimums, raised by stricter acceptance criteria, never lowered", () => {
		expect(transferCriteria(null)).toEqual({ minSpectra: 10, minLots: 3, sensitivityMin: 0.9 });
		expect(transferCriteria({ genuineTestMin: 15, genuineTestLotsMin: 2, sensitivityMin: 0.95 })).toEqual({ minSpectra: 15, minLots: 3, sensitivityMin: 0.95 });
		expect(transferCriteria({ genuineTestMin: 5, sensitivityMin: 0.8 })).toEqual({ minSpectra: 10, minLots: 3, sensitivityMin: 0.9 });
	});

	const c = transferCriteria(null);
	test('10 spectra from 3 lots, 9 called genuine: met (9/10 = 90 %); Clopper–Pearson bounds = scipy beta.ppf(0.025, 9, 2), beta.ppf(0.975, 10, 1)', () => {
		const items = [...Array(4)].map(() => item('L1', 'genuine')).concat([...Array(3)].map(() => item('L2', 'genuine')), [item('L3', 'genuine'), item('L3', 'genuine'), item('L3', 'unknown', 1.4)]);
		const e = evaluateTransfer(items, OLD, c);
		expect(e.met).toBe(true);
		expect(e.lots).toEqual(['L1', 'L2', 'L3']);
		expect(e.sensitivity.estimate).toBeCloseTo(0.9, 12);
		expect(e.sensitivity.lower).toBeCloseTo(0.5549838829718047, 8);
		expect(e.sensitivity.upper).toBeCloseTo(0.9974714214555382, 8);
	});
	test('8 of 10 genuine: sensitivity unmet and named', () => {
		const items = [...Array(8)].map((_, i) => item(`L${i % 3}`, 'genuine')).concat([item('L1', 'unknown'), item('L2', 'not-this-material')]);
		const e = evaluateTransfer(items, OLD, c);
		expect(e.met).toBe(false);
		expect(e.unmet).toHaveLength(1);
		expect(e.unmet[0]).toMatch(/sensitivity.*8\/10 = 80\.0 %.*required ≥ 90\.0 %/);
	});
	test('too few spectra and lots: both unmet', () => {
		const e = evaluateTransfer([item('L1', 'genuine'), item('L1', 'genuine'), item('L2', 'genuine')], OLD, c);
		expect(e.checks.filter((k) => !k.met).map((k) => k.key)).toEqual(['spectra', 'lots']);
		expect(e.met).toBe(false);
	});
	test('the comparison carries both distributions and D', () => {
		const e = evaluateTransfer(NEW.map((r, i) => item(`L${i % 3}`, r > 1 ? 'unknown' : 'genuine', r)), OLD, c);
		expect(e.comparison.old.n).toBe(12);
		expect(e.comparison.new.n).toBe(11);
		expect(e.comparison.ks).toBeCloseTo(0.6590909090909091, 12);
	});
	test('a spectrum without a lot is refused, not counted', () => {
		expect(() => evaluateTransfer([item('', 'genuine')], OLD, c)).toThrow(/names no supplier lot/);
	});
});
