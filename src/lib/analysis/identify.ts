import { AnalysisError } from './errors';
import { axisFromJson, resampleOnto, type AxisUnit, type ModelAxis } from './axis';
import { project } from './projection';
import type { PreparedArtefact } from './screen';

/**
 * "Not this material: what is it then?" A spectrum that failed its own material's family model is put through
 * the family model of each other material (that material's axis, root recipe and limits), and the materials
 * are ranked by c/c_crit. A material "accepts" it when c/c_crit ≤ 1. Where a material has no approved model,
 * the fallback is Pearson's correlation with the mean of its library spectra on that mean's axis.
 * Evidence for an investigation only: it never releases or rejects anything.
 */

export interface FamilyCandidate {
	material: string;
	prepared: PreparedArtefact;
}

export interface MeanCandidate {
	material: string;
	axis: ArrayLike<number>;
	unit: AxisUnit;
	mean: ArrayLike<number>;
}

export interface IdentityMatch {
	material: string;
	basis: 'family-model' | 'library-mean';
	/** family-model: c/c_crit under that material's family model. */
	ratio: number | null;
	accepted: boolean;
	/** library-mean: Pearson correlation with the library mean. */
	correlation: number | null;
	/** Why this material could not be compared (e.g. the spectrum does not cover its range). */
	reason: string | null;
}

export interface Identification {
	/** Best accepting material by its family model (smallest c/c_crit), else null. */
	resembles: { material: string; ratio: number } | null;
	/** Every candidate: family-model matches by c/c_crit, then library-mean matches by falling correlation, then the incomparable ones. */
	ranking: IdentityMatch[];
}

type Spectrum = { axis: ArrayLike<number>; values: ArrayLike<number>; unit: AxisUnit };

const inputKeys = new WeakMap<PreparedArtefact, string>();

/**
 * Materials measured on the same axis with the same root recipe and fitted steps turn a spectrum into the same
 * preprocessed row, so identification computes it once per distinct key (exactly the same numbers).
 */
function inputKey(prep: PreparedArtefact): string {
	let k = inputKeys.get(prep);
	if (k === undefined) {
		const a = prep.artefact;
		k = JSON.stringify([a.axis.unit, a.axis.x, prep.maxGap, a.recipe, a.preprocess.fitted]);
		inputKeys.set(prep, k);
	}
	return k;
}

type Row = { x: Float64Array } | { reason: string };

function preprocess(prep: PreparedArtefact, spectrum: Spectrum): Row {
	const r = resampleOnto(spectrum, prep.axis, { maxGap: prep.maxGap });
	if (!r.ok) return { reason: r.reason };
	let x: Float64Array;
	try {
		x = prep.pipeline.apply(r.values);
	} catch (e) {
		if (e instanceof AnalysisError) return { reason: e.message };
		throw e;
	}
	for (let j = 0; j < x.length; j++) if (!Number.isFinite(x[j])) return { reason: `preprocessing produced a non-finite value at point ${j}` };
	return { x };
}

/** c/c_crit of a spectrum under one prepared artefact's family model, or the reason it cannot be computed. */
export function familyRatio(prep: PreparedArtefact, spectrum: Spectrum, rows?: Map<string, Row>): { ratio: number; accepted: boolean } | { reason: string } {
	let row: Row;
	if (rows) {
		const key = inputKey(prep);
		row = rows.get(key) ?? preprocess(prep, spectrum);
		rows.set(key, row);
	} else row = preprocess(prep, spectrum);
	if ('reason' in row) return row;
	const s = project(prep.family, row.x);
	return { ratio: s.c / s.cCrit, accepted: s.accepted };
}

/** Pearson correlation of a spectrum with a library mean, after resampling onto the mean's axis. */
export function meanCorrelation(candidate: MeanCandidate, spectrum: Spectrum): { correlation: number } | { reason: string } {
	const { axis, mean, unit } = candidate;
	if (axis.length !== mean.length || axis.length < 3) throw new AnalysisError('bad-input', `library mean of "${candidate.material}" needs matching axis and values (≥ 3 points)`);
	const r = resampleOnto(spectrum, axisFromJson({ unit, x: Array.from(axis) } as ModelAxis));
	if (!r.ok) return { reason: r.reason };
	const n = axis.length;
	let ma = 0;
	let mb = 0;
	for (let j = 0; j < n; j++) {
		ma += r.values[j];
		mb += mean[j];
	}
	ma /= n;
	mb /= n;
	let sab = 0;
	let saa = 0;
	let sbb = 0;
	for (let j = 0; j < n; j++) {
		const a = r.values[j] - ma;
		const b = mean[j] - mb;
		sab += a * b;
		saa += a * a;
		sbb += b * b;
	}
	if (!(saa > 0 && sbb > 0)) return { reason: 'a flat spectrum has no correlation' };
	return { correlation: sab / Math.sqrt(saa * sbb) };
}

export function identify(spectrum: Spectrum, families: FamilyCandidate[], means: MeanCandidate[] = []): Identification {
	const rows = new Map<string, Row>();
	const fam: IdentityMatch[] = families.map((f) => {
		const out = familyRatio(f.prepared, spectrum, rows);
		return 'reason' in out
			? { material: f.material, basis: 'family-model', ratio: null, accepted: false, correlation: null, reason: out.reason }
			: { material: f.material, basis: 'family-model', ratio: out.ratio, accepted: out.accepted, correlation: null, reason: null };
	});
	const cor: IdentityMatch[] = means.map((m) => {
		const out = meanCorrelation(m, spectrum);
		return 'reason' in out
			? { material: m.material, basis: 'library-mean', ratio: null, accepted: false, correlation: null, reason: out.reason }
			: { material: m.material, basis: 'library-mean', ratio: null, accepted: false, correlation: out.correlation, reason: null };
	});
	const byRatio = fam.filter((m) => m.ratio !== null).sort((a, b) => a.ratio! - b.ratio! || (a.material < b.material ? -1 : 1));
	const byCorr = cor.filter((m) => m.correlation !== null).sort((a, b) => b.correlation! - a.correlation! || (a.material < b.material ? -1 : 1));
	const rest = [...fam, ...cor].filter((m) => m.reason !== null);
	const best = byRatio.find((m) => m.accepted);
	return { resembles: best ? { material: best.material, ratio: best.ratio! } : null, ranking: [...byRatio, ...byCorr, ...rest] };
}
