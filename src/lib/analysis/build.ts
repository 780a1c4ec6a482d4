import { AnalysisError } from './errors';
import { defaultAxis, resampleOnto, restrictAxisToWindows, type AxisUnit } from './axis';
import { fitRowSteps, formatRecipe, maxGapOf, parseRecipe, rangesOf, rowSteps, scalingMode, segmentsOf } from './preprocess/recipe';
import { AUTOSCALE_FLOOR, fitScaling, type ScalingMode } from './preprocess/scaling';
import { gramRows, pca, residualMoments } from './pca';
import { subtractComponents } from './projection';
import { crossValidate, foldLayout, smallestFold, suggestComponents } from './crossval';
import { t2LimitNew, t2LimitTraining } from './limits/hotelling';
import { speBox, speJacksonMudholkar, speMoments, SPE_METHODS, type SpeMethod } from './limits/spe';
import { cCritical, cOutlier, ddStatistic, estimateDof, type DofEstimator } from './limits/ddsimca';
import { sealArtefact } from './integrity';
import { chi2Inv, sampleQuantile } from './quantiles';
import { alphaRefusal } from './alpha-bounds';
import { ENGINE_VERSION, SCHEMA_VERSION, type DistanceSet, type ModelArtefact, type ModelJson } from './artefact';
import { labelPath } from './tree';
import { buildSplits, type NodeOptions } from './tree-build';
import { BUILD_DEFAULTS } from './defaults';

export interface SpectrumInput {
	id: string;
	axis: ArrayLike<number>;
	values: ArrayLike<number>;
	unit: AxisUnit;
}

export interface TrainingSpectrum extends SpectrumInput {
	className?: string | null;
	group?: string | null;
}

export interface BuildProgress {
	stage: 'preprocess' | 'family' | 'class' | 'node' | 'limits' | 'done';
	model: string;
	fold?: number;
	folds?: number;
	done: number;
	total: number;
	message: string;
}

export interface BuildOptions {
	recipe?: string;
	components?: number | 'auto';
	familyComponents?: number | 'auto';
	maxComponents?: number;
	alpha?: number;
	familyAlpha?: number;
	gamma?: number;
	limits?: 'cv' | 'training';
	folds?: number;
	speLimit?: SpeMethod;
	/** Contiguous variable blocks left out in the ekf PRESS (default 100; p gives one variable at a time). */
	variableBlocks?: number;
	/** DD-SIMCA degrees-of-freedom estimator; default 'moments'. */
	estimator?: DofEstimator;
	genuine?: string;
	/** Per-node options of a model tree, keyed by node path ("diluted", "genuine"); see tree-build.ts. */
	nodes?: Record<string, NodeOptions>;
	axis?: { from: number; to: number; unit: AxisUnit; step?: number };
	meta?: Record<string, string>;
	onProgress?: (p: BuildProgress) => void;
}

/** The parsimony rule offered beside the 1 % rule: smallest A within 5 % of the minimum PRESS (docs/methods.md §8). */
export const PARSIMONY_TOLERANCE = 0.05;
/** Below this many degrees of freedom (N_h or N_q) the version page and report warn (issue 12 §4). */
export const LOW_DOF = 3;
const QUANTILE_PROBS = [0.5, 0.75, 0.9, 0.95, 0.99];

/** Observed quantiles of x/x₀·N (R type 7) against the fitted χ²(N) quantiles at the same probabilities. */
function distanceQuantiles(x: number[], x0: number, N: number): { observed: number[]; fitted: number[] } {
	const scaled = x.map((v) => (x0 > 0 ? (N * v) / x0 : 0));
	return { observed: QUANTILE_PROBS.map((q) => sampleQuantile(scaled, q)), fitted: QUANTILE_PROBS.map((q) => chi2Inv(q, N)) };
}

/** Training-size rule: a model with A components needs at least max(10, A + 3) objects. */
export function minimumTrainingSize(A: number): number {
	return Math.max(10, A + 3);
}

function checkProbability(name: string, x: number): void {
	if (!(typeof x === 'number' && x > 0 && x < 1)) throw new AnalysisError('bad-option', `${name} must be in (0, 1), got ${x}`);
}

interface ModelConfig {
	name: string;
	kind: ModelJson['kind'];
	components: number | 'auto';
	maxComponents?: number;
	alpha: number;
	gamma: number;
	limits: 'cv' | 'training';
	folds: number;
	speLimit: SpeMethod;
	estimator: DofEstimator;
	mode: ScalingMode;
	variableBlocks?: number;
	progress: (fold: number, folds: number) => void;
	/** How errors name the model (default: family model / class "name"). */
	label?: string;
}

function fitModel(rows: Float64Array[], ids: string[], groups: (string | null | undefined)[] | null, cfg: ModelConfig): ModelJson {
	const n = rows.length;
	const p = rows[0].length;
	const label = cfg.label ?? (cfg.kind === 'family' ? 'family model' : `class "${cfg.name}"`);
	const fixed = cfg.components === 'auto' ? null : cfg.components;
	if (fixed !== null && !(Number.isInteger(fixed) && fixed >= 1))
		throw new AnalysisError('bad-components', `components must be a positive integer or "auto", got ${String(cfg.components)}`);
	const need = minimumTrainingSize(fixed ?? 1);
	if (n < need) throw new AnalysisError('too-few', `${label} has ${n} training spectra, needs at least ${need} (max(10, A + 3))`);
	// identical spectra have nothing to model; say so instead of failing later on a zero-variance component
	let spread = 0;
	let size = 0;
	for (let j = 0; j < p; j++) {
		let lo = rows[0][j];
		let hi = lo;
		for (let i = 1; i < n; i++) {
			const v = rows[i][j];
			if (v < lo) lo = v;
			else if (v > hi) hi = v;
		}
		spread = Math.max(spread, hi - lo);
		size = Math.max(size, Math.abs(lo), Math.abs(hi));
	}
	if (!(spread > 1e-12 * size))
		throw new AnalysisError('identical-spectra', `${label}: its ${n} training spectra are identical after preprocessing; a model needs training spectra that differ`);
	let layout: ReturnType<typeof foldLayout>;
	try {
		layout = foldLayout(n, cfg.folds, groups);
	} catch (e) {
		const lots = groups ? [...new Set(groups.filter((g) => g !== null && g !== undefined && g !== ''))] : [];
		if (e instanceof AnalysisError && e.code === 'bad-folds' && groups && lots.length === 1 && groups.every((g) => g === lots[0]))
			throw new AnalysisError(
				'single-group',
				`${label}: all ${n} training spectra come from one supplier lot ("${lots[0]}"); grouped cross-validation leaves out whole lots and needs at least 2 — add spectra of another lot to ${label}, or build without grouping`
			);
		throw e;
	}
	const cap = Math.min(n - 3, p - 1, smallestFold(layout, n) - 1);
	if (fixed !== null && fixed > cap)
		throw new AnalysisError('bad-components', `${label}: ${fixed} components need more data (at most ${cap} with ${n} spectra, ${p} points, ${layout.K} folds)`);
	let Amax = Math.min(cfg.maxComponents ?? 15, cap);
	if (fixed !== null) Amax = Math.max(Amax, fixed);
	if (Amax < 1) throw new AnalysisError('too-few', `${label}: not enough data for even one component`);

	const sc = fitScaling(rows, cfg.mode);
	const Z = new Float64Array(n * p);
	for (let i = 0; i < n; i++) {
		const x = rows[i];
		for (let j = 0; j < p; j++) Z[i * p + j] = (x[j] - sc.mean[j]) / sc.scale[j];
	}
	const Zm = { data: Z, rows: n, cols: p };
	const gram = n <= p ? gramRows(Zm) : null;
	let full: ReturnType<typeof pca>;
	try {
		full = pca(Zm, Amax, { gram: gram ?? undefined });
	} catch (e) {
		if (e instanceof AnalysisError && e.code === 'rank-deficient')
			throw new AnalysisError('rank-deficient', `${label}: ${e.message}; the training spectra span fewer independent directions than the component count, so fix fewer components (maxComponents) or add spectra that differ`);
		throw e;
	}
	const cv = crossValidate(rows, Zm, gram, cfg.mode, layout, Amax, cfg.progress, cfg.variableBlocks);
	const suggested = suggestComponents(cv.press);
	const parsimonious = suggestComponents(cv.press, PARSIMONY_TOLERANCE);
	const A = fixed ?? suggested;
	const warnings: string[] = [];
	if (sc.floor && sc.floor.count > 0)
		warnings.push(
			`${label}: ${sc.floor.count} variable${sc.floor.count === 1 ? ' has' : 's have'} a training s.d. below the autoscale floor (${AUTOSCALE_FLOOR} × the median s.d. = ${sc.floor.value.toPrecision(3)}); ${sc.floor.count === 1 ? 'it is' : 'they are'} divided by the floor instead of ${sc.floor.count === 1 ? 'its' : 'their'} own s.d.`
		);
	if (fixed === null && suggested === Amax)
		warnings.push(
			`${label}: the suggested component count equals the cap (${Amax}): PRESS still falls there, so the count may be fitting noise; the parsimony rule (smallest A within ${PARSIMONY_TOLERANCE * 100} % of the minimum PRESS) gives ${parsimonious}; consider fixing A`
		);
	const W = Amax + 1;

	const fitted: DistanceSet = { h: [], v: [], c: [] };
	const cvd: DistanceSet = { h: [], v: [], c: [] };
	const scores: number[][] = [];
	const e = new Float64Array(p);
	for (let i = 0; i < n; i++) {
		let h = 0;
		e.set(Z.subarray(i * p, (i + 1) * p));
		for (let a = 0; a < A; a++) {
			const t = full.scores[i * Amax + a];
			h += (t * t) / full.eigenvalues[a];
		}
		subtractComponents(e, full.loadings, full.scores, i * Amax, A, p);
		let v = 0;
		for (let j = 0; j < p; j++) v += e[j] * e[j];
		fitted.h.push(h);
		fitted.v.push(v);
		cvd.h.push(cv.h[i * W + A]);
		cvd.v.push(cv.v[i * W + A]);
		scores.push(Array.from({ length: Math.min(3, Amax) }, (_, a) => full.scores[i * Amax + a]));
	}
	// training-fit distances are too small for new samples, so limits come from CV distances by default
	const basis = cfg.limits === 'cv' ? cvd : fitted;
	const hp = estimateDof(basis.h, cfg.estimator);
	const vp = estimateDof(basis.v, cfg.estimator);
	const par = { h0: hp.x0, v0: vp.x0, nh: hp.dof, nq: vp.dof };
	const dof = par.nh + par.nq;
	for (const [name, N] of [['N_h', par.nh], ['N_q', par.nq]] as const)
		if (N < LOW_DOF)
			warnings.push(`${label}: ${name} = ${N} (below ${LOW_DOF}): a heavy-tailed distance distribution widens the acceptance area; compare the observed distance quantiles with the fitted χ²`);
	const distanceFit = {
		p: QUANTILE_PROBS,
		h: distanceQuantiles(basis.h, par.h0, par.nh),
		v: distanceQuantiles(basis.v, par.v0, par.nq)
	};
	const cCrit = cCritical(dof, cfg.alpha);
	const cOut = cOutlier(dof, cfg.gamma, n);
	let cvRejected = 0;
	let fitRejected = 0;
	for (let i = 0; i < n; i++) {
		const cf = ddStatistic(fitted.h[i], fitted.v[i], par);
		const cc = ddStatistic(cvd.h[i], cvd.v[i], par);
		fitted.c.push(cf);
		cvd.c.push(cc);
		if (cf > cCrit) fitRejected++;
		if (cc > cCrit) cvRejected++;
	}
	const th = residualMoments(full, A);
	const speAll = {
		'jackson-mudholkar': speJacksonMudholkar(th.theta1, th.theta2, th.theta3, cfg.alpha),
		box: speBox(th.theta1, th.theta2, cfg.alpha),
		moments: speMoments(basis.v, cfg.alpha)
	};
	const eigenvalues = Array.from(full.eigenvalues);
	const explainedVariance = eigenvalues.map((l) => l / full.totalVariance);
	let cum = 0;
	const cumulative = explainedVariance.map((x) => (cum += x));
	return {
		name: cfg.name,
		kind: cfg.kind,
		n,
		components: A,
		componentsRule: fixed === null ? 'auto' : 'fixed',
		maxComponents: Amax,
		eigenvalues,
		explainedVariance,
		cumulative,
		totalVariance: full.totalVariance,
		scaling: cfg.mode,
		mean: Array.from(sc.mean),
		scale: Array.from(sc.scale),
		loadings: Array.from({ length: A }, (_, a) => Array.from(full.loadings.subarray(a * p, (a + 1) * p))),
		alpha: cfg.alpha,
		gamma: cfg.gamma,
		limitsFrom: cfg.limits,
		estimator: cfg.estimator,
		h0: par.h0,
		v0: par.v0,
		nh: par.nh,
		nq: par.nq,
		cCrit,
		cOutlier: cOut,
		limits: {
			t2Limit: t2LimitNew(n, A, cfg.alpha),
			t2LimitTraining: t2LimitTraining(n, A, cfg.alpha),
			speLimit: speAll[cfg.speLimit],
			speMethod: cfg.speLimit,
			spe: { ...speAll, 'jackson-mudholkar': Number.isFinite(speAll['jackson-mudholkar']) ? speAll['jackson-mudholkar'] : null },
			theta: [th.theta1, th.theta2, th.theta3]
		},
		cvPress: Array.from(cv.press),
		cvPressElementwise: Array.from(cv.pressElementwise),
		variableBlocks: cv.variableBlocks,
		suggestedComponents: suggested,
		parsimoniousComponents: parsimonious,
		warnings,
		distanceFit,
		folds: layout.K,
		foldsGrouped: layout.grouped,
		cvFalseRejectRate: cvRejected / n,
		trainingFalseRejectRate: fitRejected / n,
		training: { ids, fitted, cv: cvd, scores }
	};
}

/** Builds the family model and one class model per class from labelled training spectra. */
export function buildModel(training: TrainingSpectrum[], options: BuildOptions = {}): ModelArtefact {
	const {
		recipe = BUILD_DEFAULTS.recipe,
		components = BUILD_DEFAULTS.components,
		familyComponents = BUILD_DEFAULTS.familyComponents,
		maxComponents,
		alpha = BUILD_DEFAULTS.alpha,
		familyAlpha = BUILD_DEFAULTS.familyAlpha,
		gamma = BUILD_DEFAULTS.gamma,
		limits = BUILD_DEFAULTS.limits,
		folds = BUILD_DEFAULTS.folds,
		speLimit = BUILD_DEFAULTS.speLimit,
		estimator = 'moments',
		meta = {},
		onProgress
	} = options;
	checkProbability('alpha', alpha);
	checkProbability('familyAlpha', familyAlpha);
	for (const [kind, a] of [['class', alpha], ['family', familyAlpha]] as const) {
		const refusal = alphaRefusal(kind, a);
		if (refusal) throw new AnalysisError('bad-alpha', refusal);
	}
	checkProbability('gamma', gamma);
	if (limits !== 'cv' && limits !== 'training') throw new AnalysisError('bad-option', `limits must be "cv" or "training", got ${String(limits)}`);
	if (!SPE_METHODS.includes(speLimit)) throw new AnalysisError('bad-option', `speLimit must be one of ${SPE_METHODS.join(', ')}, got ${String(speLimit)}`);
	if (estimator !== 'moments' && estimator !== 'robust') throw new AnalysisError('bad-option', `estimator must be "moments" or "robust", got ${String(estimator)}`);
	if (maxComponents !== undefined && !(Number.isInteger(maxComponents) && maxComponents >= 1))
		throw new AnalysisError('bad-option', `maxComponents must be a positive integer, got ${maxComponents}`);
	if (!Array.isArray(training) || training.length === 0) throw new AnalysisError('no-training', 'no training spectra');

	const ids = training.map((s) => String(s.id));
	const seen = new Set<string>();
	for (const id of ids) {
		if (seen.has(id)) throw new AnalysisError('duplicate-id', `training spectrum id "${id}" occurs more than once`);
		seen.add(id);
	}
	const steps = parseRecipe(recipe);
	let axis = defaultAxis(training, options.axis);
	const windows = rangesOf(steps);
	axis = restrictAxisToWindows(axis, windows);
	const maxGap = maxGapOf(steps);
	// Savitzky–Golay assumes equal spacing; on a non-uniform axis it would silently use the mean spacing (issue 12 §3).
	// Refused at build time (stored artefacts keep loading as they were built): declare a step so the grid is uniform.
	// With several windows each window is checked on its own (the gap between two windows is not a spacing).
	for (const [a, b] of steps.some((st) => st.op === 'savgol') ? segmentsOf(windows, axis.x) : []) {
		if (b - a <= 2) continue;
		const mean = (axis.x[b - 1] - axis.x[a]) / (b - a - 1);
		let lo = Infinity;
		let hi = -Infinity;
		for (let i = a + 1; i < b; i++) {
			const d = axis.x[i] - axis.x[i - 1];
			if (d < lo) lo = d;
			if (d > hi) hi = d;
		}
		if (hi - lo > 0.01 * mean)
			throw new AnalysisError(
				'non-uniform-axis',
				`savgol needs a uniformly spaced axis, but the model axis spacing varies from ${Number(lo.toPrecision(4))} to ${Number(hi.toPrecision(4))} ${axis.unit}: give the axis a step (the build then resamples onto a uniform grid) or leave savgol out`
			);
	}
	const report = (p: Omit<BuildProgress, 'done' | 'total'>, done: number, total: number) => onProgress?.({ ...p, done, total });

	const fullLabels = training.map((s) => (s.className === null || s.className === undefined || s.className === '' ? null : String(s.className)));
	// a label path "diluted/starch" puts the spectrum in level-1 class "diluted" and its child "starch"
	const paths = fullLabels.map((l) => (l === null ? null : labelPath(l)));
	const labels = paths.map((p) => (p === null ? null : p[0]));
	const unlabelled = labels.filter((l) => l === null).length;
	if (unlabelled > 0 && unlabelled < labels.length)
		throw new AnalysisError('missing-class', `${unlabelled} training spectra have no class (first: "${ids[labels.indexOf(null)]}"); label every spectrum or none`);
	const classes: string[] = [];
	for (const l of labels) if (l !== null && !classes.includes(l)) classes.push(l);
	let genuine: string | null = null;
	if (classes.length > 0) {
		if (options.genuine !== undefined) {
			if (!classes.includes(options.genuine)) throw new AnalysisError('bad-genuine', `genuine class "${options.genuine}" is not among the classes (${classes.join(', ')})`);
			genuine = options.genuine;
		} else if (classes.includes('genuine')) genuine = 'genuine';
		else if (classes.length === 1) genuine = classes[0];
		else throw new AnalysisError('bad-genuine', `several classes (${classes.join(', ')}) and none is named "genuine": name the genuine class`);
	}
	if (classes.length === 0 && components !== 'auto')
		throw new AnalysisError(
			'bad-option',
			`components (${String(components)}) sets the class models, but the training spectra have no classes; for a family-only model set familyComponents (--family-components) instead`
		);
	const fixedA = components === 'auto' ? 1 : components;
	for (const c of classes) {
		const count = labels.filter((l) => l === c).length;
		const need = minimumTrainingSize(typeof fixedA === 'number' ? fixedA : 1);
		if (count < need) throw new AnalysisError('too-few', `class "${c}" has ${count} training spectra, needs at least ${need} (max(10, A + 3))`);
	}

	const deep = paths.some((p) => p !== null && p.length > 1);
	const total = 2 + 1 + classes.length + (deep ? 1 : 0);
	report({ stage: 'preprocess', model: '', message: `resampling ${training.length} spectra onto ${axis.points} points` }, 0, total);
	const resampled = training.map((s, i) => {
		const r = resampleOnto(s, axis, { maxGap });
		if (!r.ok) throw new AnalysisError(r.code, `training spectrum "${ids[i]}": ${r.reason}`);
		return r.values;
	});
	const rowFit = fitRowSteps(rowSteps(steps), resampled, axis.x, ids, windows);
	for (let i = 0; i < rowFit.rows.length; i++) {
		const r = rowFit.rows[i];
		for (let j = 0; j < r.length; j++)
			if (!Number.isFinite(r[j])) throw new AnalysisError('non-finite', `training spectrum "${ids[i]}" is not finite after preprocessing at point ${j}`);
	}
	const mode = scalingMode(steps);
	const groups = training.map((s) => s.group ?? null);
	const hasGroups = groups.some((g) => g !== null && g !== '');
	const base = { maxComponents, gamma, limits, folds, speLimit, estimator, mode, variableBlocks: options.variableBlocks };

	report({ stage: 'family', model: 'family', message: 'family model' }, 1, total);
	const family = fitModel(rowFit.rows, ids, hasGroups ? groups : null, {
		...base,
		name: 'family',
		kind: 'family',
		components: familyComponents,
		alpha: familyAlpha,
		progress: (fold, nf) => report({ stage: 'family', model: 'family', fold, folds: nf, message: `family model, fold ${fold}/${nf}` }, 1, total)
	});
	const models: Record<string, ModelJson> = {};
	const classSpectra: ModelArtefact['classSpectra'] = {};
	classes.forEach((c, k) => {
		const idx = labels.flatMap((l, i) => (l === c ? [i] : []));
		report({ stage: 'class', model: c, message: `class model "${c}"` }, 2 + k, total);
		models[c] = fitModel(
			idx.map((i) => rowFit.rows[i]),
			idx.map((i) => ids[i]),
			hasGroups ? idx.map((i) => groups[i]) : null,
			{
				...base,
				name: c,
				kind: c === genuine ? 'genuine' : 'suspect',
				components,
				alpha,
				progress: (fold, nf) => report({ stage: 'class', model: c, fold, folds: nf, message: `class model "${c}", fold ${fold}/${nf}` }, 2 + k, total)
			}
		);
		const p = axis.points;
		const mean = new Float64Array(p);
		const sd = new Float64Array(p);
		for (const i of idx) for (let j = 0; j < p; j++) mean[j] += resampled[i][j];
		for (let j = 0; j < p; j++) mean[j] /= idx.length;
		for (const i of idx) for (let j = 0; j < p; j++) sd[j] += (resampled[i][j] - mean[j]) ** 2;
		for (let j = 0; j < p; j++) sd[j] = Math.sqrt(sd[j] / (idx.length - 1));
		classSpectra[c] = { n: idx.length, mean: Array.from(mean), sd: Array.from(sd) };
	});
	const splits = deep
		? buildSplits({
				paths: paths as string[][],
				resampled,
				axisX: axis.x,
				ids,
				groups: hasGroups ? groups : null,
				genuine,
				nodes: options.nodes ?? {},
				rootRecipe: formatRecipe(steps.filter((s) => s.op !== 'range' && s.op !== 'gaps')),
				components,
				folds,
				onNode: (key) => report({ stage: 'node', model: key, message: `node "${key}"` }, total - 1, total),
				fit: (rows, nodeIds, nodeGroups, cfg) =>
					fitModel(rows, nodeIds, nodeGroups, {
						...base,
						...cfg,
						alpha,
						progress: (fold, nf) => report({ stage: 'node', model: cfg.name, fold, folds: nf, message: `${cfg.label}, fold ${fold}/${nf}` }, total - 1, total)
					})
			})
		: [];
	if (!deep && options.nodes && Object.keys(options.nodes).length > 0)
		throw new AnalysisError('bad-node', `node options (${Object.keys(options.nodes).join(', ')}) need label paths such as "diluted/starch"`);
	report({ stage: 'done', model: '', message: 'model built' }, total, total);
	const sortedMeta: Record<string, string> = {};
	for (const k of Object.keys(meta).sort()) sortedMeta[k] = String(meta[k]);
	return sealArtefact({
		schemaVersion: SCHEMA_VERSION,
		engineVersion: ENGINE_VERSION,
		meta: sortedMeta,
		axis,
		recipe: formatRecipe(steps),
		preprocess: { fitted: rowFit.fitted },
		genuine,
		classes,
		options: { alpha, familyAlpha, gamma, limits, folds, speLimit, estimator },
		family,
		models,
		classSpectra,
		splits
	});
}
