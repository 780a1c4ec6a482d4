// The lot page's evidence, shaped for the browser: the screening model's training cloud and limits, the lot's scans
// in the same coordinates, decimated spectra on the model axis, and a library background for the Coomans plot.
import { LRUCache } from 'lru-cache';
import { QueryTypes } from 'sequelize';
import { resampleOnto, type ModelArtefact, type ModelJson } from '../../analysis';
import { sequelize } from '../db';
import * as lots from './lots';
import * as scans from './scans';

const MAX_PLOT_POINTS = 200;

type SlimProjections = Record<string, { label: string; role: string; models: Record<string, { c: number }> }>;
// The library's projections through a version (c per model), by version id. Nothing invalidates an entry: a version's
// figures are written once, when its build finishes, and never change; a version still building has none and is not
// cached (the lot page only asks for versions that screened a scan). Bounded so a long-running server keeps at most
// the 64 most recently viewed versions.
const figuresCache = new LRUCache<number, SlimProjections>({ max: 64 });

async function libraryProjections(versionId: number) {
	const hit = figuresCache.get(versionId);
	if (hit) return hit;
	const rows = await sequelize().query<{ p: Record<string, { label: string; role: string; models: Record<string, { c: number }> }> | null }>(
		"SELECT figures->'projections' AS p FROM model_versions WHERE id = :versionId",
		{ replacements: { versionId }, type: QueryTypes.SELECT }
	);
	if (!rows[0]?.p) return {};
	const p = rows[0].p;
	// Keep only c per model: all the Coomans background needs.
	const slim = Object.fromEntries(
		Object.entries(p).map(([id, v]) => [id, { label: v.label, role: v.role, models: Object.fromEntries(Object.entries(v.models ?? {}).map(([k, m]) => [k, { c: m.c }])) }])
	);
	figuresCache.set(versionId, slim);
	return slim;
}

function decimate<T>(values: ArrayLike<T>, step: number): T[] {
	const out: T[] = [];
	for (let i = 0; i < values.length; i += step) out.push(values[i]);
	return out;
}

export interface EvidenceModel {
	name: string;
	kind: 'family' | 'genuine' | 'suspect';
	components: number;
	h0: number;
	v0: number;
	nh: number;
	nq: number;
	cCrit: number;
	cOutlier: number;
	alpha: number;
	limitsFrom: 'cv' | 'training';
	training: { id: string; h: number; v: number }[];
}

function modelView(m: ModelJson, trainingPrefix: string): EvidenceModel {
	const set = m.limitsFrom === 'cv' ? m.training.cv : m.training.fitted;
	return {
		name: m.name,
		kind: m.kind,
		components: m.components,
		h0: m.h0,
		v0: m.v0,
		nh: m.nh,
		nq: m.nq,
		cCrit: m.cCrit,
		cOutlier: m.cOutlier,
		alpha: m.alpha,
		limitsFrom: m.limitsFrom,
		training: m.training.ids.map((id, i) => ({ id: `${trainingPrefix}${id}`, h: set.h[i], v: set.v[i] }))
	};
}

/** The model version whose evidence the page shows: the one that screened the lot's counted scans, else the approved one. */
function versionOf(lot: lots.LotView, approvedId: number | null) {
	const counted = lot.scans.filter((s) => s.counts && s.modelVersion);
	const last = counted[counted.length - 1] ?? lot.scans.filter((s) => s.modelVersion).pop();
	return last?.modelVersion?.id ?? approvedId;
}

export async function evidenceFor(lot: lots.LotView) {
	const approved = await scans.approvedModel(lot.material.id);
	const versionId = versionOf(lot, approved?.versionId ?? null);
	const model = versionId ? await scans.preparedVersion(versionId) : null;
	if (!model) return null;
	const a: ModelArtefact = model.prep.artefact;
	const step = Math.max(1, Math.ceil(a.axis.x.length / MAX_PLOT_POINTS));
	const meta: Record<string, Record<string, string>> = {};
	// Training objects are prefixed "t:", the lot's scans are their scan id: brushing with the table uses scan ids.
	const classOf = new Map<string, string>();
	for (const c of a.classes) for (const id of a.models[c].training.ids) classOf.set(id, c);
	for (const id of a.family.training.ids) meta[`t:${id}`] = { class: `training ${classOf.get(id) ?? '—'}`, source: 'training' };
	for (const s of lot.scans) meta[String(s.id)] = { class: 'this lot', verdict: s.verdict + (s.profile ? ` (${s.profile})` : ''), container: `C${String(s.container).padStart(2, '0')}`, source: s.counts ? 'lot (counted)' : 'lot (earlier scan)' };
	const models = [modelView(a.family, 't:'), ...a.classes.map((c) => modelView(a.models[c], 't:'))];

	// The lot's spectra as measured, resampled onto the model axis and decimated (never extrapolated: gaps are skipped).
	const ids = lot.scans.filter((s) => s.format !== 'unparsed' && s.format !== 'refused').map((s) => s.spectrumId);
	const rows = ids.length
		? await sequelize().query<{ id: number; axis: number[]; intensities: number[]; unit: 'nm' | 'cm-1' | 'um' }>('SELECT id, axis, intensities, unit FROM spectra WHERE id IN (:ids)', {
				replacements: { ids },
				type: QueryTypes.SELECT
			})
		: [];
	const bySpectrum = new Map(rows.map((r) => [r.id, r]));
	const spectra: { id: string; values: number[] }[] = [];
	for (const s of lot.scans) {
		const r = bySpectrum.get(s.spectrumId);
		if (!r || r.axis.length < 2) continue;
		const out = resampleOnto({ axis: r.axis, values: r.intensities, unit: r.unit }, a.axis);
		if (out.ok) spectra.push({ id: String(s.id), values: decimate(out.values, step) });
	}
	const classSpectra = Object.fromEntries(Object.entries(a.classSpectra ?? {}).map(([k, v]) => [k, { n: v.n, mean: decimate(v.mean, step), sd: decimate(v.sd, step) }]));

	// Coomans: genuine against the suspect profile the lot's scans come nearest to (smallest c/c_crit).
	const suspects = a.classes.filter((c) => a.models[c].kind === 'suspect');
	let nearest = suspects[0] ?? null;
	let best = Infinity;
	for (const c of suspects) {
		for (const s of lot.scans) {
			const st = s.statistics?.classes[c];
			if (st?.c != null && st.cCrit) {
				const r = st.c / st.cCrit;
				if (r < best) {
					best = r;
					nearest = c;
				}
			}
		}
	}
	const coomans: { id: string; c1: number; c2: number }[] = [];
	if (a.genuine && nearest) {
		const projections = await libraryProjections(model.versionId);
		for (const [id, p] of Object.entries(projections)) {
			const g = p.models[a.genuine]?.c;
			const x = p.models[nearest]?.c;
			if (g == null || x == null) continue;
			coomans.push({ id: `l:${id}`, c1: g, c2: x });
			meta[`l:${id}`] = { class: `library ${p.label}`, source: `library ${p.role}` };
		}
		for (const s of lot.scans) {
			const g = s.statistics?.classes[a.genuine]?.c;
			const x = s.statistics?.classes[nearest]?.c;
			if (g != null && x != null) coomans.push({ id: String(s.id), c1: g, c2: x });
		}
	}
	return {
		version: { id: model.versionId, label: model.label, artefactSha256: model.sha256, approved: approved?.versionId === model.versionId },
		axis: decimate(a.axis.x, step),
		fullAxis: a.axis.x,
		unit: a.axis.unit,
		genuine: a.genuine,
		classes: a.classes,
		models,
		classSpectra,
		spectra,
		coomans: { genuine: a.genuine, suspect: nearest, points: coomans, cCritGenuine: a.genuine ? a.models[a.genuine].cCrit : 1, cCritSuspect: nearest ? a.models[nearest].cCrit : 1 },
		meta
	};
}
export type Evidence = NonNullable<Awaited<ReturnType<typeof evidenceFor>>>;

/** Everything the lot page shows, in one call (the bench times this). */
export async function lotPageData(idOrInternal: string | number) {
	const lot = await lots.get(idOrInternal);
	return { lot, evidence: await evidenceFor(lot) };
}
