import { describe, expect, test } from 'vitest';
import { decide } from '../../../src/lib/analysis/classify';

// The decision table of docs/methods.md §Decision (design §3, step 5); every row is tested.
const acc = (c: number) => ({ accepted: c <= 10, c, cCrit: 10 });
const cls = (name: string, kind: 'genuine' | 'suspect', c: number) => ({ name, kind, stats: acc(c) });

describe('two-stage decision table', () => {
	test('family rejects → not-this-material (whatever the class models say)', () => {
		const d = decide(acc(11), [cls('genuine', 'genuine', 1)]);
		expect(d).toMatchObject({ verdict: 'not-this-material', profile: null, ambiguous: false });
	});
	test('only genuine accepts → genuine', () => {
		expect(decide(acc(3), [cls('genuine', 'genuine', 2), cls('diluted', 'suspect', 20)])).toMatchObject({ verdict: 'genuine', profile: null, ambiguous: false });
	});
	test('only suspects accept → suspect with the smallest c/c_crit', () => {
		const d = decide(acc(3), [cls('genuine', 'genuine', 12), cls('diluted', 'suspect', 8), cls('swapped', 'suspect', 4)]);
		expect(d).toMatchObject({ verdict: 'suspect', profile: 'swapped', ambiguous: true });
		expect(decide(acc(3), [cls('genuine', 'genuine', 12), cls('diluted', 'suspect', 8)])).toMatchObject({ verdict: 'suspect', profile: 'diluted', ambiguous: false });
	});
	test('genuine and a suspect both accept → suspect, ambiguous (conservative)', () => {
		const d = decide(acc(3), [cls('genuine', 'genuine', 1), cls('diluted', 'suspect', 9)]);
		expect(d).toMatchObject({ verdict: 'suspect', profile: 'diluted', ambiguous: true });
		expect(d.reason).toMatch(/outranks genuine/);
	});
	test('none accepts → unknown, naming the closest class', () => {
		const d = decide(acc(3), [cls('genuine', 'genuine', 15), cls('diluted', 'suspect', 30)]);
		expect(d).toMatchObject({ verdict: 'unknown', profile: null, ambiguous: false });
		expect(d.reason).toContain('closest: genuine');
	});
	test('family-only model: genuine when the family accepts', () => {
		expect(decide(acc(3), [])).toMatchObject({ verdict: 'genuine' });
		expect(decide(acc(30), [])).toMatchObject({ verdict: 'not-this-material' });
	});
	test('boundary: c = c_crit is accepted (c ≤ c_crit)', () => {
		expect(decide(acc(10), [cls('genuine', 'genuine', 10)]).verdict).toBe('genuine');
	});
});
