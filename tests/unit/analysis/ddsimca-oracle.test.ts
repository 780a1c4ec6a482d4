// DD-SIMCA acceptance end to end (build, then screen) against an independent NumPy/SciPy recomputation of the published
// formulas (Pomerantsev 2008): tests/unit/analysis/reference/ddsimca_numpy.py wrote ddsimca_numpy.json from the open
// gasoline NIR data (Kalivas 1997). The suite reads the JSON only.
import { readFileSync } from 'node:fs';
import { describe, expect, test } from 'vitest';
import { buildModel, prepareArtefact, screen } from '../../../src/lib/analysis';
import { gasolineTraining, relErr, root } from './fixtures';

interface Reference {
	generator: string;
	components: number;
	alpha: number;
	eigenvalues: number[];
	h0: number;
	Nh: number;
	v0: number;
	Nq: number;
	cCrit: number;
	new: { id: string; h: number; v: number; c: number; accepted: boolean }[];
}
const ref: Reference = JSON.parse(readFileSync(`${root}/tests/unit/analysis/reference/ddsimca_numpy.json`, 'utf8'));

describe(`DD-SIMCA on gasoline spectra 1–50, A = 3, limits from fitted distances (${ref.generator})`, () => {
	const all = gasolineTraining();
	const artefact = buildModel(all.slice(0, 50), { recipe: 'center', familyComponents: ref.components, familyAlpha: ref.alpha, limits: 'training', meta: { material: 'gasoline' } });
	const m = artefact.family;

	test('eigenvalues, h₀, N_h, v₀, N_q and c_crit equal the NumPy/SciPy recomputation', () => {
		expect(m.components).toBe(ref.components);
		ref.eigenvalues.forEach((l, a) => expect(relErr(m.eigenvalues[a], l)).toBeLessThan(1e-9));
		expect(m.nh).toBe(ref.Nh);
		expect(m.nq).toBe(ref.Nq);
		expect(relErr(m.h0, ref.h0)).toBeLessThan(1e-9);
		expect(relErr(m.v0, ref.v0)).toBeLessThan(1e-9);
		expect(relErr(m.cCrit, ref.cCrit)).toBeLessThan(1e-9);
	});

	test('screening gives the same h, v, c and acceptance for training and new objects', () => {
		const prep = prepareArtefact(artefact);
		for (const r of ref.new) {
			const s = all.find((t) => t.id === r.id)!;
			const out = screen(prep, { id: s.id, axis: s.axis, values: s.values, unit: s.unit });
			expect(relErr(out.family!.h, r.h), `${r.id} h`).toBeLessThan(1e-8);
			expect(relErr(out.family!.v, r.v), `${r.id} v`).toBeLessThan(1e-8);
			expect(relErr(out.family!.c, r.c), `${r.id} c`).toBeLessThan(1e-8);
			expect(out.family!.accepted, r.id).toBe(r.accepted);
		}
	});
});
