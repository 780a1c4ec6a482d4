import { describe, expect, test } from 'vitest';
import { convertAxisValue, defaultAxis, resampleOnto, uniformAxis } from '../../../src/lib/analysis/axis';

describe('axis units (definitions: ν̃[cm⁻¹] = 10⁷/λ[nm], 1 µm = 1000 nm)', () => {
	test('1000 nm = 10000 cm⁻¹ = 1 µm, and back', () => {
		expect(convertAxisValue(1000, 'nm', 'cm-1')).toBe(10000);
		expect(convertAxisValue(2500, 'nm', 'um')).toBe(2.5);
		expect(convertAxisValue(4000, 'cm-1', 'um')).toBeCloseTo(2.5, 12);
		expect(convertAxisValue(convertAxisValue(1234.5, 'nm', 'cm-1'), 'cm-1', 'nm')).toBeCloseTo(1234.5, 9);
	});
});

describe('resampling onto the model axis', () => {
	const model = uniformAxis(1000, 1100, 10, 'nm');
	const line = (x: number) => 0.5 + 0.002 * x;
	test('linear interpolation reproduces a linear spectrum exactly, ascending or descending input', () => {
		const ax = Array.from({ length: 41 }, (_, i) => 990 + i * 3.3);
		for (const axis of [ax, [...ax].reverse()]) {
			const r = resampleOnto({ axis, values: axis.map(line), unit: 'nm' }, model);
			expect(r.ok).toBe(true);
			if (r.ok) model.x.forEach((x, i) => expect(r.values[i]).toBeCloseTo(line(x), 12));
		}
	});
	test('a spectrum in cm⁻¹ (descending in nm after conversion) lands on the nm axis', () => {
		const nm = Array.from({ length: 200 }, (_, i) => 950 + i);
		const wn = nm.map((x) => 1e7 / x);
		const r = resampleOnto({ axis: wn, values: nm.map(line), unit: 'cm-1' }, model);
		expect(r.ok).toBe(true);
		if (r.ok) expect(r.values[5]).toBeCloseTo(line(1050), 9);
	});
	test('refuses a spectrum that does not cover the model range and names the missing interval', () => {
		const axis = Array.from({ length: 50 }, (_, i) => 1020 + i * 2);
		const r = resampleOnto({ axis, values: axis.map(line), unit: 'nm' }, model);
		expect(r.ok).toBe(false);
		if (!r.ok) {
			expect(r.code).toBe('range-not-covered');
			expect(r.reason).toContain('missing 1000–1020 nm');
		}
	});
	test('never extrapolates, even by a fraction of a step', () => {
		const axis = Array.from({ length: 50 }, (_, i) => 1000.5 + i * 2.1);
		const r = resampleOnto({ axis, values: axis.map(line), unit: 'nm' }, model);
		expect(r.ok).toBe(false);
	});
	test('a cm⁻¹ file exported with 2 decimals covers a 900–1700 nm model (edge tolerance 1 % of the model step, methods §2)', () => {
		const nmModel = uniformAxis(900, 1700, 2, 'nm');
		// 11111.11 cm⁻¹ is 900.00009 nm: short of 900 nm by 9·10⁻⁵ nm, far below 1 % of the 2 nm step.
		const wn = [11111.11];
		while (wn[wn.length - 1] > 5882.35 + 4) wn.push(+(wn[wn.length - 1] - 4).toFixed(2));
		wn.push(5882.35);
		const r = resampleOnto({ axis: wn, values: wn.map((v) => line(1e7 / v)), unit: 'cm-1' }, nmModel);
		expect(r.ok, r.ok ? '' : r.reason).toBe(true);
		// The first model point takes the edge value (held, not extrapolated): the line at 900.00009 nm.
		if (r.ok) {
			expect(r.values[0]).toBeCloseTo(line(1e7 / 11111.11), 12);
			expect(r.values[200]).toBeCloseTo(line(1300), 6);
		}
		// A shortfall of a quarter step is still refused, naming the interval.
		const short = resampleOnto({ axis: wn.slice(1), values: wn.slice(1).map((v) => line(1e7 / v)), unit: 'cm-1' }, nmModel);
		expect(short.ok).toBe(false);
		if (!short.ok) expect(short.reason).toMatch(/missing 900–900\.3\d* nm/);
	});
	test('non-finite values are refused with their count and positions', () => {
		const axis = Array.from({ length: 101 }, (_, i) => 1000 + i);
		const values = axis.map(line);
		values[20] = Number.NaN;
		values[21] = Infinity;
		const r = resampleOnto({ axis, values, unit: 'nm' }, model);
		expect(r.ok).toBe(false);
		if (!r.ok) expect(r.reason).toMatch(/^2 non-finite values at positions 20 \(1020 nm\), 21 \(1021 nm\)/);
	});
	test('gaps(n): runs of at most n non-finite points inside the range are bridged linearly', () => {
		const axis = Array.from({ length: 101 }, (_, i) => 1000 + i);
		const values = axis.map(line);
		values[48] = values[49] = values[50] = Number.NaN;
		const ok = resampleOnto({ axis, values, unit: 'nm' }, model, { maxGap: 3 });
		expect(ok.ok).toBe(true);
		if (ok.ok) expect(ok.values[5]).toBeCloseTo(line(1050), 12);
		const refused = resampleOnto({ axis, values, unit: 'nm' }, model, { maxGap: 2 });
		expect(refused.ok).toBe(false);
	});
	test('a NaN outside the model range does not matter', () => {
		const axis = Array.from({ length: 121 }, (_, i) => 990 + i);
		const values = axis.map(line);
		values[0] = Number.NaN;
		expect(resampleOnto({ axis, values, unit: 'nm' }, model).ok).toBe(true);
	});
	test('default axis: the first spectrum’s points clipped to the common range', () => {
		const a = defaultAxis([
			{ id: 'a', axis: [900, 902, 904, 906, 908], unit: 'nm' },
			{ id: 'b', axis: [903, 905, 907, 909], unit: 'nm' }
		]);
		expect(a.x).toEqual([904, 906, 908]);
		expect(a.step).toBe(2);
	});
});
