import { describe, expect, it } from 'vitest';
import { parseInt8, parseNumeric } from '../../../src/lib/server/db/pg-types';

// The limit is ECMA-262's Number.MAX_SAFE_INTEGER, 2^53 − 1 = 9007199254740991.
describe('parseInt8', () => {
	it('reads PostgreSQL int8 text as a number within the safe range', () => {
		expect(parseInt8('0')).toBe(0);
		expect(parseInt8('-17')).toBe(-17);
		expect(parseInt8('9007199254740991')).toBe(Number.MAX_SAFE_INTEGER);
		expect(parseInt8('-9007199254740991')).toBe(-Number.MAX_SAFE_INTEGER);
	});
	it('throws a clear error beyond 2^53 − 1 rather than rounding', () => {
		expect(() => parseInt8('9007199254740992')).toThrow(/outside JavaScript's safe integer range/);
		// 2^53 + 1 would silently round to 2^53 as a double
		expect(() => parseInt8('9007199254740993')).toThrow(RangeError);
		expect(() => parseInt8('-9223372036854775808')).toThrow(RangeError);
	});
});

describe('parseNumeric', () => {
	it('reads numeric text as the nearest double', () => {
		expect(parseNumeric('12.50')).toBe(12.5);
		expect(parseNumeric('-0.000125')).toBe(-0.000125);
		expect(parseNumeric('2.3333333333333333333')).toBeCloseTo(7 / 3, 15);
	});
});
