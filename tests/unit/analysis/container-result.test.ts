// The container result policy (docs/methods.md §16). The cases are the rule's own definitions from issue #11 and
// FDA (2006) OOS guidance: a retest never replaces a failing result; only an approved invalidation removes a scan.
import { describe, expect, it } from 'vitest';
import { containerResult, lotIdentity, type ScanForResult } from '../../../src/lib/analysis/container-result';

let n = 0;
const scan = (verdict: ScanForResult['verdict'], invalidated = false, profile: string | null = null): ScanForResult => ({ id: ++n, verdict, invalidated, profile });

describe('containerResult', () => {
	it('a genuine retest after a failing scan does not make the container genuine (no testing into compliance)', () => {
		const r = containerResult([scan('not-this-material'), scan('genuine'), scan('genuine')]);
		expect(r.result).toBe('not-this-material');
		expect(r.decided).toBe(true);
		expect(r.everFailed).toBe(true);
	});

	it('the failing scan stops counting only when its invalidation is approved; then the retest counts', () => {
		const failing = scan('suspect', false, 'diluted');
		const retest = scan('genuine');
		expect(containerResult([failing, retest]).result).toBe('suspect');
		const after = containerResult([{ ...failing, invalidated: true }, retest]);
		expect(after.result).toBe('genuine');
		expect(after.decisive).toEqual([retest.id]);
		// The history is kept: the container still counts as having failed once (two-signature rule).
		expect(after.everFailed).toBe(true);
	});

	it('orders failures not-this-material > unknown > suspect, whatever the upload order', () => {
		expect(containerResult([scan('suspect', false, 'diluted'), scan('unknown')]).result).toBe('unknown');
		expect(containerResult([scan('unknown'), scan('not-this-material'), scan('suspect')]).result).toBe('not-this-material');
		const s = containerResult([scan('genuine'), scan('suspect', false, 'starch')]);
		expect(s).toMatchObject({ result: 'suspect', profile: 'starch' });
	});

	it('unusable and not-screened scans are not results: a later valid scan decides, and alone they leave the container open', () => {
		expect(containerResult([scan('unusable'), scan('genuine')])).toMatchObject({ result: 'genuine', decided: true, replicatesDone: 1, everFailed: false });
		expect(containerResult([scan('unusable')])).toMatchObject({ result: 'unusable', decided: false });
		expect(containerResult([scan('unusable'), scan('not-screened')])).toMatchObject({ result: 'not-screened', decided: false });
		expect(containerResult([])).toMatchObject({ result: 'awaiting-scan', decided: false, replicatesDone: 0 });
	});

	it('replicates k = 3 with one failing: the container fails; with all three genuine it is genuine; two of three waits', () => {
		expect(containerResult([scan('genuine'), scan('unknown'), scan('genuine')], 3)).toMatchObject({ result: 'unknown', decided: true, replicatesDone: 3, replicatesRequired: 3 });
		expect(containerResult([scan('genuine'), scan('genuine'), scan('genuine')], 3)).toMatchObject({ result: 'genuine', decided: true });
		expect(containerResult([scan('genuine'), scan('genuine')], 3)).toMatchObject({ result: 'awaiting-scan', decided: false, replicatesDone: 2 });
		// An invalidated replicate is not a replicate.
		expect(containerResult([scan('genuine'), scan('genuine', true), scan('genuine')], 3)).toMatchObject({ result: 'awaiting-scan', replicatesDone: 2 });
	});

	it('refuses k outside 1..5 and unknown verdicts', () => {
		expect(() => containerResult([], 0)).toThrow(/1 to 5/);
		expect(() => containerResult([], 6)).toThrow(/1 to 5/);
		expect(() => containerResult([], 2.5)).toThrow(/whole number/);
		expect(() => containerResult([{ id: 1, verdict: 'fine' as never, invalidated: false }])).toThrow(/Unknown scan verdict/);
	});
});

describe('lotIdentity', () => {
	it('meets only when every container is decided genuine; fails when all are decided and one is not', () => {
		expect(lotIdentity([{ result: 'genuine', decided: true }, { result: 'genuine', decided: true }])).toBe('meets');
		expect(lotIdentity([{ result: 'genuine', decided: true }, { result: 'suspect', decided: true }])).toBe('fails');
		expect(lotIdentity([{ result: 'genuine', decided: true }, { result: 'awaiting-scan', decided: false }])).toBeNull();
		expect(lotIdentity([{ result: 'not-screened', decided: false }, { result: 'genuine', decided: true }])).toBe('not-screened');
		expect(lotIdentity([])).toBeNull();
	});
});
