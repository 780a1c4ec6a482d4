// Illustrations on invented containers: the outcome is wording and selection logic, not a formula.
import { describe, expect, test } from 'vitest';
import { isClosed, outcomeOf, type OutcomeContainer } from '../../../src/lib/analysis/lot-outcome';

const scan = (verdict: string, counts = true, reason: string | null = null, ambiguous = false) => ({ verdict, counts, reason, ambiguous });
const genuine = (number: number): OutcomeContainer => ({ number, result: 'genuine', profile: null, decided: true, scans: [scan('genuine')] });

describe('lot outcome (illustration)', () => {
	test('meets identity, naming the replicates when more than one', () => {
		expect(outcomeOf('screened', 'meets', [genuine(1), genuine(2)]).summary).toBe('Meets identity: every sampled container is genuine.');
		expect(outcomeOf('screened', 'meets', [genuine(1)], 3).summary).toBe('Meets identity: every sampled container is genuine in all 3 replicates.');
	});

	test('fails identity: each failing container with the latest counting scan of its result', () => {
		const c2: OutcomeContainer = {
			number: 2,
			result: 'suspect',
			profile: 'diluted',
			decided: true,
			scans: [scan('suspect', true, 'first', true), scan('genuine'), scan('suspect', true, 'latest'), scan('suspect', false, 'invalidated')]
		};
		const o = outcomeOf('screened', 'fails', [genuine(1), c2]);
		expect(o.failures).toEqual([{ container: 2, verdict: 'suspect', profile: 'diluted', ambiguous: false, reason: 'latest' }]);
		expect(o.summary).toBe('Fails identity, quarantine recommended: C02 suspect (diluted).');
		expect(o.investigation).toBe(false);
		expect(o.investigationNote).toBeNull();
	});

	test('unknown or not-this-material calls for investigation, not automatic rejection', () => {
		const c: OutcomeContainer = { number: 4, result: 'unknown', profile: null, decided: true, scans: [scan('unknown')] };
		const o = outcomeOf('screened', 'fails', [c]);
		expect(o.investigation).toBe(true);
		expect(o.investigationNote).toMatch(/not an automatic rejection/);
	});

	test('awaiting scans lists the undecided containers, singular and plural', () => {
		const waiting: OutcomeContainer = { number: 3, result: 'awaiting-scan', profile: null, decided: false, scans: [] };
		expect(outcomeOf('awaiting-scans', null, [genuine(1), waiting]).summary).toBe('Awaiting scans: 1 of 2 sampled containers still needs a valid scan.');
		const o = outcomeOf('awaiting-scans', null, [waiting, { ...waiting, number: 5 }], 2);
		expect(o.waiting).toEqual([3, 5]);
		expect(o.summary).toBe('Awaiting scans: 2 of 2 sampled containers still need 2 genuine replicate scans or a failing one.');
	});

	test('not screened, closed states, and bad input', () => {
		expect(outcomeOf('screened', 'not-screened', []).summary).toMatch(/^Not screened/);
		expect(isClosed({ status: 'released' })).toBe(true);
		expect(isClosed({ status: 'rejected' })).toBe(true);
		expect(isClosed({ status: 'quarantined' })).toBe(false);
		expect(() => outcomeOf('screened', 'meets', [], 0)).toThrow('Replicates must be a whole number of at least 1');
	});
});
