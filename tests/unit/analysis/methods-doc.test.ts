import { describe, expect, test } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { root } from './fixtures';
import { computeWorkedExample, parseWorkedExample } from './worked-example';

// docs/methods.md §13: the worked example's inputs are read from the document and recomputed with the
// engine; every expected number printed there (7 significant digits) must match.
describe('docs/methods.md worked example is executed', () => {
	const doc = readFileSync(join(root, 'docs/methods.md'), 'utf8');
	const { inputs, expected } = parseWorkedExample(doc);
	const got = computeWorkedExample(inputs);
	test('the document lists every computed quantity', () => {
		expect(Object.keys(expected).sort()).toEqual(Object.keys(got).sort());
	});
	test.each(Object.entries(expected))('%s = %s', (key, text) => {
		const value = got[key];
		if (typeof value === 'string') expect(value).toBe(text);
		else expect(Math.abs(value - Number(text))).toBeLessThanOrEqual(5e-7 * Math.max(Math.abs(value), 1e-12) + 1e-15);
	});
	test('the e-Handbook T² example in the document matches 9.857 / 7.164 (NIST §6.5.4.3)', () => {
		expect(Number(expected.T2_limit_F_n30_k3)).toBeCloseTo(9.857, 3);
		expect(Number(expected.T2_limit_Beta_n30_k3)).toBeCloseTo(7.164, 3);
	});
});
