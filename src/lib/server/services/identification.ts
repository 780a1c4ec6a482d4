// "Not this material: what is it then?" (issue 13 §2). For a scan its own material's family model rejected, rank the
// site's other materials: by their approved family models (c/c_crit), or, for a material without an approved model, by
// correlation with the mean of its training library. Evidence for the investigation only: it changes no verdict,
// opens nothing and releases nothing. The ranking is stored with the scan's result, so it never changes afterwards.
import { QueryTypes, type Transaction } from 'sequelize';
import { identify, type FamilyCandidate, type Identification, type MeanCandidate, type PreparedArtefact } from '../../analysis';
import { sequelize } from '../db';

/** How many materials the stored ranking keeps (the best ones). */
const KEEP = 5;

export interface StoredIdentification extends Identification {
	/** When the ranking was made (the approved models of that moment). */
	at: string;
}

type Loader = (versionId: number) => Promise<{ prep: PreparedArtefact } | null>;

/** The approved family models of every other material, prepared (read before the scan's transaction). */
export async function candidates(materialId: number, load: Loader): Promise<FamilyCandidate[]> {
	const rows = await sequelize().query<{ id: number; code: string }>(
		`SELECT v.id, m.code FROM model_versions v JOIN materials m ON m.id = v.material_id
		  WHERE v.state = 'approved' AND v.artefact IS NOT NULL AND v.material_id <> :materialId ORDER BY m.code`,
		{ replacements: { materialId }, type: QueryTypes.SELECT }
	);
	const out: FamilyCandidate[] = [];
	for (const r of rows) {
		try {
			const m = await load(r.id);
			if (m) out.push({ material: r.code, prepared: m.prep });
		} catch {
			// a refused artefact (integrity) cannot be evidence for another material's scan; that material is skipped
		}
	}
	return out;
}

/** Mean training spectrum of each other material without an approved model (same unit and axis as its first spectrum). */
async function libraryMeans(materialId: number, tx: Transaction): Promise<MeanCandidate[]> {
	const rows = await sequelize().query<{ code: string; axis: number[]; intensities: number[]; unit: 'nm' | 'cm-1' | 'um' }>(
		`SELECT m.code, sp.axis, sp.intensities, sp.unit FROM library_entries e
		   JOIN materials m ON m.id = e.material_id JOIN spectra sp ON sp.id = e.spectrum_id
		  WHERE e.role = 'training' AND e.material_id <> :materialId
		    AND NOT EXISTS (SELECT 1 FROM model_versions v WHERE v.material_id = e.material_id AND v.state = 'approved' AND v.artefact IS NOT NULL)
		  ORDER BY m.code, e.id`,
		{ replacements: { materialId }, type: QueryTypes.SELECT, transaction: tx }
	);
	const by = new Map<string, { axis: number[]; unit: 'nm' | 'cm-1' | 'um'; sum: Float64Array; n: number }>();
	for (const r of rows) {
		const axis = r.axis.map(Number);
		let e = by.get(r.code);
		if (!e) by.set(r.code, (e = { axis, unit: r.unit, sum: new Float64Array(axis.length), n: 0 }));
		if (r.unit !== e.unit || axis.length !== e.axis.length || axis.some((x, j) => x !== e!.axis[j])) continue;
		for (let j = 0; j < axis.length; j++) e.sum[j] += Number(r.intensities[j]);
		e.n++;
	}
	return [...by.entries()].map(([material, e]) => {
		// ascending axis for resampling
		const order = e.axis.map((_, j) => j).sort((a, b) => e.axis[a] - e.axis[b]);
		return { material, unit: e.unit, axis: order.map((j) => e.axis[j]), mean: order.map((j) => e.sum[j] / e.n) };
	});
}

/** The ranking for one not-this-material spectrum, to store with its result. */
export async function forSpectrum(
	spectrum: { axis: ArrayLike<number>; values: ArrayLike<number>; unit: 'nm' | 'cm-1' | 'um' },
	families: FamilyCandidate[],
	materialId: number,
	tx: Transaction
): Promise<StoredIdentification> {
	const means = await libraryMeans(materialId, tx);
	const id = identify(spectrum, families, means);
	return { resembles: id.resembles, ranking: id.ranking.slice(0, KEEP), at: new Date().toISOString() };
}

/** Text for pages and the certificate. */
export function identificationText(id: Pick<Identification, 'resembles' | 'ranking'> | null | undefined, materialCode: string): string | null {
	if (!id) return null;
	if (id.resembles) return `not ${materialCode}; accepted by the family model of ${id.resembles.material} (c/c_crit ${id.resembles.ratio.toFixed(2)})`;
	const near = id.ranking.find((m) => m.basis === 'library-mean' && m.correlation !== null);
	return `matches no material in this site's library${near ? ` (closest library mean: ${near.material}, r = ${near.correlation!.toFixed(3)})` : ''}`;
}
