// Model versions: what the validation report prints beyond the public version: the exclusions frozen with it (with
// their reasons) and the distance and Coomans plots of its genuine class model, training and held-out spectra.
import type { ModelArtefact } from '../../../analysis';
import { pageData } from './page';
import { EXCLUSION_LABELS } from './schema';

export interface ReportPoint {
	id: string;
	role: string;
	x: number;
	y: number;
}

export interface ReportExtras {
	exclusions: { entryId: number; label: string; sample: string | null; category: string; reason: string }[];
	/** DD-SIMCA distances of one class model: x = h/h0, y = v/v0; the limits are N_h·x + N_q·y = c. */
	distance: { model: string; nh: number; nq: number; cCrit: number; cOutlier: number | null; distances: 'cross-validated' | 'fitted'; points: ReportPoint[] } | null;
	/** c / c_crit under two class models. */
	coomans: { x: string; y: string; points: ReportPoint[] } | null;
}

export async function reportExtras(versionId: number): Promise<ReportExtras> {
	const data = await pageData(versionId);
	const exclusions = data.rows
		.filter((r) => r.membership && !r.membership.included)
		.map((r) => ({
			entryId: r.id,
			label: r.label,
			sample: r.sampleId ?? r.fileName ?? null,
			category: r.membership!.category ? EXCLUSION_LABELS[r.membership!.category] : 'not recorded',
			reason: r.membership!.reason ?? ''
		}));
	const a = data.artefact as ModelArtefact | null;
	if (!a) return { exclusions, distance: null, coomans: null };
	const name = a.genuine ?? a.classes[0];
	const m = name ? a.models[name] : null;
	let distance: ReportExtras['distance'] = null;
	if (m && name) {
		const cv = m.limitsFrom === 'cv';
		const set = cv ? m.training.cv : m.training.fitted;
		const inTraining = new Set(m.training.ids);
		const points: ReportPoint[] = m.training.ids.map((id, i) => ({ id, role: 'training', x: set.h[i] / m.h0, y: set.v[i] / m.v0 }));
		for (const [id, p] of Object.entries(data.projections)) {
			const s = p.models[name];
			if (s && !inTraining.has(id) && p.role !== 'training') points.push({ id, role: p.role, x: s.h / m.h0, y: s.v / m.v0 });
		}
		distance = { model: name, nh: m.nh, nq: m.nq, cCrit: m.cCrit, cOutlier: m.cOutlier ?? null, distances: cv ? 'cross-validated' : 'fitted', points };
	}
	const other = a.classes.find((c) => c !== name);
	let coomans: ReportExtras['coomans'] = null;
	if (name && other && a.models[other]) {
		const cx = a.models[name].cCrit;
		const cy = a.models[other].cCrit;
		const points = Object.entries(data.projections)
			.filter(([, p]) => p.models[name] && p.models[other])
			.map(([id, p]) => ({ id, role: p.role, x: p.models[name].c / cx, y: p.models[other].c / cy }));
		coomans = { x: name, y: other, points };
	}
	return { exclusions, distance, coomans };
}
