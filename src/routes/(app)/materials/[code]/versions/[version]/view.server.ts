// The version page's data, shaped for the browser: model summaries, decimated spectra, one page of the training table.
import { treeOf, walkTree } from '$lib/analysis';
import * as versions from '$lib/server/services/model-versions';
import type { ModelArtefact, ModelJson } from '$lib/analysis';

const MAX_PLOT_POINTS = 150;

function decimate<T>(values: T[], step: number): T[] {
	return step <= 1 ? values : values.filter((_, i) => i % step === 0);
}

function modelView(m: ModelJson) {
	return {
		name: m.name,
		kind: m.kind,
		n: m.n,
		components: m.components,
		componentsRule: m.componentsRule,
		suggested: m.suggestedComponents,
		eigenvalues: m.eigenvalues,
		explained: m.explainedVariance,
		// cvPress[0] is A = 0; the curve starts at A = 1
		cvPress: m.cvPress.slice(1),
		loadings: m.loadings,
		h0: m.h0,
		v0: m.v0,
		nh: m.nh,
		nq: m.nq,
		cCrit: m.cCrit,
		cOutlier: m.cOutlier,
		alpha: m.alpha,
		t2Limit: m.limits.t2Limit,
		cvFalseRejectRate: m.cvFalseRejectRate,
		trainingFalseRejectRate: m.trainingFalseRejectRate,
		limitsFrom: m.limitsFrom,
		folds: m.folds,
		foldsGrouped: m.foldsGrouped,
		parsimonious: m.parsimoniousComponents ?? null,
		variableBlocks: m.variableBlocks ?? null,
		warnings: m.warnings ?? [],
		distanceFit: m.distanceFit ?? null,
		training: m.training
	};
}

export async function versionView(versionId: number, query: URLSearchParams) {
	const data = await versions.pageData(versionId);
	const a = data.artefact as ModelArtefact | null;
	const step = a ? Math.max(1, Math.ceil(a.axis.x.length / MAX_PLOT_POINTS)) : 1;
	const sort = query.get('sort') ?? 'id';
	const filter = query.get('show') ?? 'training';
	const page = Math.max(1, Number(query.get('page') ?? 1) || 1);
	const pageSize = 25;
	const [col, dir] = sort.split(':');
	const key = (r: (typeof data.rows)[number]) =>
		col === 'label' ? r.label : col === 'supplier' ? (r.supplier ?? '') : col === 'lot' ? (r.supplierLot ?? '') : col === 'status' ? String(r.membership?.included ?? 'x') : col === 'c' ? (data.projections[String(r.id)]?.models[r.label]?.c ?? Infinity) : r.id;
	const shown = data.rows.filter((r) => (filter === 'excluded' ? r.membership && !r.membership.included : filter === 'all' ? true : filter === 'held-out' ? r.role !== 'training' : r.role === 'training'));
	shown.sort((x, y) => {
		const kx = key(x);
		const ky = key(y);
		const c = typeof kx === 'number' && typeof ky === 'number' ? kx - ky : String(kx).localeCompare(String(ky));
		return (dir === 'desc' ? -c : c) || x.id - y.id;
	});
	const tableRows = shown.slice((page - 1) * pageSize, page * pageSize).map((r) => {
		const p = data.projections[String(r.id)];
		return { ...r, verdict: p?.verdict ?? null, profile: p?.profile ?? null, ownC: p?.models[r.label]?.c ?? null, ownCrit: a?.models[r.label]?.cCrit ?? null };
	});
	const spectra = data.overview ? Object.entries(data.overview.spectra).map(([id, values]) => ({ id, values })) : [];
	return {
		spectra,
		// the model tree, walked generically (any depth): one row per node with its training count and how it splits
		tree: a
			? walkTree(treeOf(a)).map((n) => ({
					path: n.path,
					name: n.name,
					kind: n.kind,
					n: n.n,
					decidedBy: n.decidedBy,
					components: n.model ? n.model.components : null,
					split: n.split
				}))
			: [],
		version: data.version,
		versions: data.versions,
		meta: data.meta,
		projections: data.projections,
		model: a
			? {
					axis: a.axis.x,
					unit: a.axis.unit,
					recipe: a.recipe,
					genuine: a.genuine,
					classes: a.classes,
					models: [modelView(a.family), ...a.classes.map((c) => modelView(a.models[c]))],
					classSpectra: Object.fromEntries(Object.entries(a.classSpectra).map(([k, v]) => [k, { n: v.n, mean: decimate(v.mean, step), sd: decimate(v.sd, step) }])),
					plotAxis: data.overview?.axis ?? decimate(a.axis.x, step)
				}
			: null,
		table: { rows: tableRows, total: shown.length, page, pageSize, sort, show: filter },
		counts: {
			training: data.rows.filter((r) => r.role === 'training').length,
			excluded: data.rows.filter((r) => r.membership && !r.membership.included).length,
			heldOut: data.rows.filter((r) => r.role !== 'training').length
		}
	};
}
