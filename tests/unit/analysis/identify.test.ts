// Identification of a wrong-material container (issue 13 §2). Spectra: the invented demo generator (wiring only);
// the correlation fallback is checked against numpy.corrcoef.
import { beforeAll, describe, expect, test } from 'vitest';
import { buildModel, identify, meanCorrelation, prepareArtefact, type FamilyCandidate } from '../../../src/lib/analysis';
import { demoScenario, treeLibrary } from '../../../src/lib/demo';

const scenario = demoScenario();
const training = (code: string) =>
	scenario.library.filter((r) => r.material === code && r.role === 'training').map((r) => ({ id: r.id, axis: r.axis, values: r.values, unit: r.unit }));
let families: FamilyCandidate[];
beforeAll(() => {
	families = ['MCC-100', 'LAC-200', 'CIT-ANH'].map((m) => ({ material: m, prepared: prepareArtefact(buildModel(training(m), { recipe: 'snv, savgol(11,2,1), center' })) }));
}, 120_000);

describe('identify', () => {
	test('an MCC container is accepted by the MCC family model and ranked first; lactose rejects it; the Raman model cannot compare', () => {
		for (const s of treeLibrary({ step: 2 }).filter((r) => r.className === 'mcc')) {
			const id = identify(s, families);
			expect(id.resembles?.material).toBe('MCC-100');
			expect(id.resembles!.ratio).toBeLessThanOrEqual(1);
			expect(id.ranking.map((m) => m.material)).toEqual(['MCC-100', 'LAC-200', 'CIT-ANH']);
			expect(id.ranking[1]).toMatchObject({ basis: 'family-model', accepted: false });
			expect(id.ranking[1].ratio!).toBeGreaterThan(1);
			// an NIR spectrum in nm does not cover a Raman axis in cm⁻¹: no ratio, and the reason
			expect(id.ranking[2]).toMatchObject({ ratio: null, accepted: false });
			expect(id.ranking[2].reason).toBeTruthy();
		}
	});
	test('no accepting material gives resembles null', () => {
		const lactose = treeLibrary({ step: 2 }).find((r) => r.className === 'substituted')!;
		const id = identify(lactose, families.filter((f) => f.material !== 'LAC-200'));
		expect(id.resembles).toBeNull();
	});
	test('library-mean fallback: Pearson correlation as numpy.corrcoef gives 0.999096080480639', () => {
		// numpy 1.24: np.corrcoef([0.1,0.4,0.35,0.8,1.2], [1.0,2.1,1.9,3.5,5.2])[0,1]
		const axis = [1, 2, 3, 4, 5];
		const r = meanCorrelation({ material: 'X', axis, unit: 'nm', mean: [1.0, 2.1, 1.9, 3.5, 5.2] }, { axis, unit: 'nm', values: [0.1, 0.4, 0.35, 0.8, 1.2] });
		expect('correlation' in r && r.correlation).toBeCloseTo(0.999096080480639, 12);
	});
	test('mean matches rank after model matches, by falling correlation, and never set resembles', () => {
		const s = treeLibrary({ step: 2 }).find((r) => r.className === 'mcc')!;
		const mean = (code: string) => {
			const rows = scenario.library.filter((r) => r.material === code && r.role === 'training');
			return { material: code, axis: rows[0].axis, unit: rows[0].unit, mean: rows[0].values.map((_, j) => rows.reduce((t, r) => t + r.values[j], 0) / rows.length) };
		};
		const id = identify(s, [], [mean('LAC-200'), mean('MCC-100')]);
		expect(id.resembles).toBeNull();
		expect(id.ranking.map((m) => [m.material, m.basis])).toEqual([
			['MCC-100', 'library-mean'],
			['LAC-200', 'library-mean']
		]);
		expect(id.ranking[0].correlation!).toBeGreaterThan(id.ranking[1].correlation!);
	});
});
