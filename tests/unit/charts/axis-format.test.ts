// Wavelengths in contribution summaries use the axis's own precision (issue 17 item 10).
import { describe, expect, it } from 'vitest';
import { axisDecimals, fmtAxis } from '../../../src/lib/components/charts/chart-kit';

describe('axis precision', () => {
	it('names 2 nm grid points as whole numbers, not 1.76e+3', () => {
		const axis = Array.from({ length: 700 }, (_, i) => 1100 + 2 * i);
		const d = axisDecimals(axis);
		expect(d).toBe(0);
		expect(fmtAxis(1758, d)).toBe('1758');
		// Neighbours that 3 significant figures merged ("1.40e+3" three times) stay apart.
		expect(new Set([1398, 1400, 1402].map((x) => fmtAxis(x, d))).size).toBe(3);
	});
	it('keeps one decimal for a 0.5 nm grid and two for a 0.02 cm-1 grid', () => {
		expect(axisDecimals([1000, 1000.5, 1001])).toBe(1);
		expect(axisDecimals([4000, 4000.02, 4000.04])).toBe(2);
		expect(fmtAxis(1000.5, 1)).toBe('1000.5');
	});
	it('uses the smallest step of an irregular axis and handles one point', () => {
		expect(axisDecimals([1100, 1102, 1102.5, 1110])).toBe(1);
		expect(axisDecimals([1100])).toBe(0);
	});
});
