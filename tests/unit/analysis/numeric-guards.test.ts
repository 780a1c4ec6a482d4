import { describe, expect, test } from 'vitest';
import { buildModel, screen, type TrainingSpectrum } from '../../../src/lib/analysis';
import { fitScaling, AUTOSCALE_FLOOR } from '../../../src/lib/analysis/preprocess/scaling';
import { gasolineTraining, iris } from './fixtures';

// Issue 12 §4: numeric guards that warn a chemometrician (docs/methods.md §4, §8, §9).

describe('autoscale floor (0.1 × the median training s.d.)', () => {
	test('hand example: s.d. (n − 1) of the columns 2, 4 and 0; median of the positive ones 3; floor 0.3', () => {
		// column 1: 1, 3, 5 → s = 2; column 2: 2, 6, 10 → s = 4; column 3 constant → s = 0 (hand-computed)
		const s = fitScaling([Float64Array.from([1, 2, 7]), Float64Array.from([3, 6, 7]), Float64Array.from([5, 10, 7])], 'autoscale');
		expect(AUTOSCALE_FLOOR).toBe(0.1);
		expect(Array.from(s.scale)).toEqual([2, 4, 0.30000000000000004]);
		expect(s.floor).toEqual({ value: 0.30000000000000004, count: 1 });
	});

	// Iris (Fisher 1936) with a fifth variable that barely varies in training (s ≈ 10⁻⁹), as the review did.
	// Without a floor a new flower 10⁻⁷ off at that variable is 100 s.d. away there: z² = 10⁴ alone in SPE.
	const setosa = iris().filter((s) => s.className === 'setosa');
	const withFifth = (s: TrainingSpectrum, i: number, v?: number): TrainingSpectrum => ({
		...s,
		className: null,
		axis: [1, 2, 3, 4, 5],
		values: [...Array.from(s.values as ArrayLike<number>), v ?? 1 + (i % 2 ? 1e-9 : -1e-9)]
	});
	test('a variable with s ≈ 10⁻⁹ no longer dominates c: a flower 10⁻⁷ off there is accepted, and the build warns', () => {
		const training = setosa.slice(0, 40).map((s, i) => withFifth(s, i));
		const a = buildModel(training, { recipe: 'autoscale', familyComponents: 2, familyAlpha: 0.01 });
		expect(a.family.warnings?.join(' ')).toMatch(/1 variable has a training s\.d\. below the autoscale floor/);
		const probe = withFifth(setosa[45], 0, 1 + 1e-7);
		const r = screen(a, { id: 'probe', axis: probe.axis, values: probe.values, unit: 'nm' });
		expect(r.family!.c / r.family!.cCrit).toBeLessThan(1);
		expect(r.verdict).toBe('genuine');
		// the same flower without the offset gives almost the same c: the floor made the offset negligible
		const plain = withFifth(setosa[45], 0, 1);
		const r0 = screen(a, { id: 'plain', axis: plain.axis, values: plain.values, unit: 'nm' });
		expect(Math.abs(r.family!.c - r0.family!.c)).toBeLessThan(1e-6);
	});
});

describe('messages that name the problem', () => {
	const g = gasolineTraining();
	test('--components without classes is refused, pointing to familyComponents', () => {
		expect(() => buildModel(g.slice(0, 20), { components: 3 })).toThrow(/components \(3\) sets the class models, but the training spectra have no classes.*familyComponents/);
		expect(() => buildModel(g.slice(0, 20), { familyComponents: 3 })).not.toThrow();
	});
	test('12 identical spectra: "identical", not a zero-variance component', () => {
		const same = Array.from({ length: 12 }, (_, i) => ({ ...g[0], id: `same-${i}` }));
		expect(() => buildModel(same)).toThrow(/family model: its 12 training spectra are identical after preprocessing/);
	});
	test('grouping on, a class from one supplier lot: the error names the class and the lot', () => {
		const labelled = g.slice(0, 40).map((s, i) => ({ ...s, className: i < 20 ? 'genuine' : 'diluted', group: i < 20 ? `L${i % 4}` : 'L9' }));
		expect(() => buildModel(labelled, { familyComponents: 2, components: 2 })).toThrow(/class "diluted": all 20 training spectra come from one supplier lot \("L9"\)/);
	});
});

describe('a flat spectrum is unusable under every recipe (docs §9 and the flat gate agree)', () => {
	const g = gasolineTraining();
	const a = buildModel(g.slice(0, 30), { recipe: 'center', familyComponents: 3 });
	test('flat at 0.5 AU under the default `center` recipe: unusable, not not-this-material', () => {
		const r = screen(a, { id: 'flat', axis: g[0].axis, values: Array.from(g[0].axis, () => 0.5), unit: 'nm' });
		expect(r.verdict).toBe('unusable');
		expect(r.reason).toMatch(/flat on the model axis/);
	});
	test('a real spectrum is not caught by the flat rule', () => expect(screen(a, { id: 'g40', axis: g[40].axis, values: g[40].values, unit: 'nm' }).verdict).not.toBe('unusable'));
});

describe('Savitzky–Golay on a non-uniform axis is refused at build time (issue 12 §3)', () => {
	const g = gasolineTraining();
	// gasoline (Kalivas 1997) is on a uniform 2 nm grid; drop every third point to make the spacing 2 or 4 nm
	const keep = (x: ArrayLike<number>) => Array.from(x).filter((_, j) => j % 3 !== 2);
	const uneven = g.slice(0, 30).map((s) => ({ ...s, axis: keep(s.axis), values: keep(s.values) }));
	test('a non-uniform grid with savgol: the message names the spacing and the remedy', () => {
		expect(() => buildModel(uneven, { recipe: 'savgol(11,2,1),center', familyComponents: 2 })).toThrow(/savgol needs a uniformly spaced axis, but the model axis spacing varies from 2 to 4 nm: give the axis a step/);
	});
	test('with a declared step the build resamples onto a uniform grid and succeeds', () => {
		const a = buildModel(uneven, { recipe: 'savgol(11,2,1),center', familyComponents: 2, axis: { unit: 'nm', from: 900, to: 1698, step: 2 } });
		expect(a.axis.step).toBe(2);
	});
	test('without savgol the non-uniform grid is allowed', () => expect(() => buildModel(uneven, { recipe: 'snv,center', familyComponents: 2 })).not.toThrow());
});
