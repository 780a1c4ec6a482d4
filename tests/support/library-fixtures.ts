// Synthetic labelled NIR-like spectra for method-development tests: Gaussian bands per class, with noise, offset and scatter.
import { createHash } from 'node:crypto';
import { QueryTypes } from 'sequelize';
import { mulberry32 } from '../../src/lib/analysis/sampling';

// The project's seeded generator, so fixtures are the same bytes on every machine.
export const rng = (seed: number) => mulberry32(seed);

const BANDS: Record<string, [number, number, number][]> = {
	genuine: [[1450, 40, 0.8], [1930, 50, 1.0], [2100, 60, 0.6], [2300, 40, 0.4]],
	diluted: [[1450, 40, 0.6], [1930, 50, 0.8], [2100, 60, 0.75], [2250, 50, 0.35], [2300, 40, 0.3]],
	substituted: [[1470, 45, 0.7], [1940, 40, 0.5], [2120, 70, 0.65], [2330, 40, 0.5]],
	alien: [[1400, 30, 0.9], [1700, 50, 0.5], [2200, 40, 0.9]]
};

export function axis(points = 300, from = 1100, to = 2498) {
	return Array.from({ length: points }, (_, i) => from + ((to - from) * i) / (points - 1));
}

export function spectrum(kind: keyof typeof BANDS, x: number[], random: () => number) {
	const offset = 0.05 * (random() - 0.5);
	const scale = 1 + 0.08 * (random() - 0.5);
	const drift = (random() - 0.5) * 0.02;
	const bands = BANDS[kind].map(([c, w, h]) => [c + 3 * (random() - 0.5), w, h * (1 + 0.06 * (random() - 0.5))]);
	return x.map((xi) => {
		let y = 0.2 + offset + drift * ((xi - 1800) / 700);
		for (const [c, w, h] of bands) y += scale * h * Math.exp(-0.5 * ((xi - c) / w) ** 2);
		return y + 0.002 * (random() - 0.5);
	});
}

export interface FixtureRow {
	label: string;
	kind: keyof typeof BANDS;
	role: 'training' | 'test' | 'challenge';
	lot: string;
}

/** Stores spectra and library entries directly (as the intake would), so builds can be tested in isolation. */
export async function insertLibrary(materialId: number, rows: FixtureRow[], seed = 1, points = 300) {
	const { sequelize } = await import('../../src/lib/server/db/index');
	const { models } = await import('../../src/lib/server/db/index');
	const classes = await models().MaterialClass.findAll({ where: { materialId } });
	const classId = new Map(classes.map((c) => [c.name, c.id]));
	const random = rng(seed);
	const x = axis(points);
	const ids: number[] = [];
	for (const [i, r] of rows.entries()) {
		const y = spectrum(r.kind, x, random);
		const raw = Buffer.from(`${x.join(',')}\n${y.join(',')}\n`);
		const [sp] = await sequelize().query<{ id: number }>(
			`INSERT INTO spectra (sha256, raw, file_name, format, row_index, points, axis, intensities, unit, context, context_id, meta)
			 VALUES (:sha, :raw, :file, 'csv-matrix', :row, :points, :axis, :values, 'nm', 'library', :materialId, :meta) RETURNING id`,
			{
				replacements: {
					sha: createHash('sha256').update(raw).update(String(seed)).update(String(i)).digest('hex'),
					raw,
					file: `fixture-${seed}.csv`,
					row: i,
					points: x.length,
					axis: `{${x.join(',')}}`,
					values: `{${y.join(',')}}`,
					materialId,
					meta: JSON.stringify({ id: `S${seed}-${i}` })
				},
				type: QueryTypes.SELECT
			}
		);
		const [e] = await sequelize().query<{ id: number }>(
			`INSERT INTO library_entries (material_id, spectrum_id, class_id, label, role, supplier_lot) VALUES (:materialId, :spectrumId, :classId, :label, :role, :lot) RETURNING id`,
			{ replacements: { materialId, spectrumId: sp.id, classId: classId.get(r.label) ?? null, label: r.label, role: r.role, lot: r.lot }, type: QueryTypes.SELECT }
		);
		ids.push(Number(e.id));
	}
	return ids;
}

/**
 * n training spectra per class in lots of 3, plus test and challenge spectra. Without `tests`, the held-out set meets
 * the default acceptance criteria's counts (issue 12): 12 genuine test spectra from 4 lots not in training, 5 test
 * spectra per suspect profile, 5 challenge spectra of another material. With `tests`, that many of each.
 */
export function standardRows(perClass = 14, tests?: number): FixtureRow[] {
	const rows: FixtureRow[] = [];
	const classes: [string, keyof typeof BANDS][] = [['genuine', 'genuine'], ['diluted', 'diluted'], ['substituted', 'substituted']];
	for (const [label, kind] of classes) {
		for (let i = 0; i < perClass; i++) rows.push({ label, kind, role: 'training', lot: `${label}-L${Math.floor(i / 3)}` });
		const n = tests ?? (label === 'genuine' ? 12 : 5);
		for (let i = 0; i < n; i++) rows.push({ label, kind, role: 'test', lot: tests === undefined && label === 'genuine' ? `${label}-T${i % 4}` : `${label}-T${i}` });
	}
	for (let i = 0; i < (tests ?? 5); i++) rows.push({ label: 'talc-cut', kind: 'alien', role: 'challenge', lot: `alien-${i}` });
	return rows;
}

/** The same spectra as a CSV matrix with label columns, as `lotgate build --train` and the library upload read. */
export function csvMatrix(rows: FixtureRow[], seed = 1, points = 300) {
	const random = rng(seed);
	const x = axis(points);
	const lines = [['id', 'class', 'supplier_lot', 'role', ...x.map((v) => v.toFixed(3))].join(',')];
	rows.forEach((r, i) => lines.push([`S${seed}-${i}`, r.label, r.lot, r.role, ...spectrum(r.kind, x, random).map((v) => v.toFixed(6))].join(',')));
	return lines.join('\n') + '\n';
}
