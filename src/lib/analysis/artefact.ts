import { AnalysisError } from './errors';
import { canonicalJson, checkDerived, verifyIntegrity } from './integrity';
import { isAxisUnit, type ModelAxis } from './axis';
import { parseRecipe, type FittedRowStep } from './preprocess/recipe';
import type { ScalingMode } from './preprocess/scaling';
import type { SpeMethod } from './limits/spe';
import type { DofEstimator } from './limits/ddsimca';
import type { PlsdaModel } from './plsda';
import type { KnnModel } from './knn';

/**
 * 2: the artefact carries `integrity` (SHA-256 of its canonical content without that field).
 * 3: model trees (`splits` below level 1). Version 2 artefacts still load and screen as two-level trees.
 */
export const SCHEMA_VERSION = 3;
export const SUPPORTED_SCHEMA_VERSIONS = [1, 2, 3] as const;
export const ENGINE_VERSION = '1.0.0';

export interface DistanceSet {
	h: number[];
	v: number[];
	c: number[];
}

export interface ModelJson {
	name: string;
	kind: 'family' | 'genuine' | 'suspect';
	/** Training objects. */
	n: number;
	/** Components used (A). */
	components: number;
	/** How A was set: 'auto' (ekf PRESS rule) or 'fixed'. */
	componentsRule: 'auto' | 'fixed';
	maxComponents: number;
	/** λ_1..λ_Amax (all computed), n − 1 divisor. */
	eigenvalues: number[];
	/** λ_a / total variance, a = 1..Amax. */
	explainedVariance: number[];
	cumulative: number[];
	totalVariance: number;
	scaling: ScalingMode;
	mean: number[];
	scale: number[];
	/** A rows of p loadings. */
	loadings: number[][];
	alpha: number;
	gamma: number;
	/** Which training distances the DD-SIMCA and moment SPE limits came from. */
	limitsFrom: 'cv' | 'training';
	estimator: DofEstimator;
	h0: number;
	v0: number;
	nh: number;
	nq: number;
	cCrit: number;
	cOutlier: number;
	limits: {
		t2Limit: number;
		t2LimitTraining: number;
		speLimit: number;
		speMethod: SpeMethod;
		spe: { 'jackson-mudholkar': number | null; box: number; moments: number };
		theta: [number, number, number];
	};
	/** ekf PRESS for A = 0..Amax. */
	cvPress: number[];
	suggestedComponents: number;
	/** ekf PRESS with one variable left out at a time (optimistic on dense spectra; for comparison). */
	cvPressElementwise?: number[];
	/** Contiguous variable blocks left out in `cvPress`. */
	variableBlocks?: number;
	/** Smallest A within 5 % of the minimum PRESS (the parsimony rule offered beside the 1 % rule). */
	parsimoniousComponents?: number;
	/** Guards that a chemometrician should read: A at the cap, N_h or N_q below 3, … */
	warnings?: string[];
	/** Observed quantiles of N·x/x₀ of the limit-setting distances against the fitted χ²(N) quantiles. */
	distanceFit?: { p: number[]; h: { observed: number[]; fitted: number[] }; v: { observed: number[]; fitted: number[] } };
	folds: number;
	foldsGrouped: boolean;
	/** Share of training objects whose cross-validated c exceeds c_crit (compare with alpha). */
	cvFalseRejectRate: number;
	/** Same with the fitted (training) distances. */
	trainingFalseRejectRate: number;
	training: {
		ids: string[];
		fitted: DistanceSet;
		cv: DistanceSet;
		/** First (up to) three scores of each training object. */
		scores: number[][];
	};
}

export type SplitMethod = 'one-class' | 'plsda' | 'knn';

/** How a node below level 1 decides among its children (see tree.ts). */
export interface SplitJson {
	/** The node being split, from level 1 down, e.g. ["diluted"]. */
	path: string[];
	method: SplitMethod;
	/** The split's own recipe (row steps and column step; a range step picks a window of the artefact axis). */
	recipe: string;
	/** [start, end) indices of the artefact axis the recipe works on. */
	window: [number, number];
	preprocess: { fitted: FittedRowStep[] };
	children: string[];
	/** One-class: one DD-SIMCA model per child. */
	models: Record<string, ModelJson>;
	/** Discriminant: the classifier, trained on the node's spectra after the recipe and its column scaling. */
	classifier: PlsdaModel | KnnModel | null;
	/** Discriminant: column scaling (training mean, scale) applied before the classifier. */
	scaling: { mode: ScalingMode; mean: number[]; scale: number[] } | null;
	classSpectra: Record<string, { n: number; mean: number[]; sd: number[] }>;
}

export interface ModelArtefact {
	schemaVersion: number;
	engineVersion: string;
	meta: Record<string, string>;
	axis: ModelAxis;
	recipe: string;
	preprocess: { fitted: FittedRowStep[] };
	genuine: string | null;
	classes: string[];
	options: { alpha: number; familyAlpha: number; gamma: number; limits: 'cv' | 'training'; folds: number; speLimit: SpeMethod; estimator: DofEstimator };
	family: ModelJson;
	models: Record<string, ModelJson>;
	/** Mean and s.d. (n − 1) of each class's resampled, un-preprocessed spectra on the model axis. */
	classSpectra: Record<string, { n: number; mean: number[]; sd: number[] }>;
	/** SHA-256 (hex) of the RFC 8785 canonical JSON of everything else; set by buildModel, checked on every load. */
	integrity?: string;
	/** schemaVersion 3: splits below level 1, parents before children (absent before). */
	splits?: SplitJson[];
}

/** Canonical JSON (RFC 8785 key order and number form): the same artefact always gives the same bytes. */
export function serializeArtefact(a: ModelArtefact): string {
	return canonicalJson(a);
}

const fail = (msg: string): never => {
	throw new AnalysisError('bad-artefact', `model artefact: ${msg}`);
};

function num(x: unknown, where: string, allowNull = false): number {
	if (x === null && allowNull) return Number.NaN;
	if (typeof x !== 'number' || !Number.isFinite(x)) return fail(`${where} must be a finite number`);
	return x;
}

function numArray(x: unknown, where: string, length?: number, allowNull = false): number[] {
	if (!Array.isArray(x)) return fail(`${where} must be an array`);
	if (length !== undefined && x.length !== length) fail(`${where} has ${x.length} values, expected ${length}`);
	return x.map((v, i) => num(v, `${where}[${i}]`, allowNull));
}

function checkModel(m: unknown, where: string, p: number): ModelJson {
	if (!m || typeof m !== 'object') return fail(`${where} is missing`);
	const o = m as Record<string, unknown>;
	if (typeof o.name !== 'string') fail(`${where}.name must be a string`);
	if (o.kind !== 'family' && o.kind !== 'genuine' && o.kind !== 'suspect') fail(`${where}.kind must be family, genuine or suspect`);
	const A = num(o.components, `${where}.components`);
	if (!Number.isInteger(A) || A < 1 || A > p) fail(`${where}.components must be an integer in 1..${p}`);
	numArray(o.mean, `${where}.mean`, p);
	const scale = numArray(o.scale, `${where}.scale`, p);
	if (scale.some((s) => !(s > 0))) fail(`${where}.scale must be positive`);
	const ev = numArray(o.eigenvalues, `${where}.eigenvalues`);
	if (ev.length < A || ev.slice(0, A).some((l) => !(l > 0))) fail(`${where}.eigenvalues must hold ${A} positive values`);
	if (!Array.isArray(o.loadings) || o.loadings.length !== A) fail(`${where}.loadings must have ${A} rows`);
	(o.loadings as unknown[]).forEach((row, a) => numArray(row, `${where}.loadings[${a}]`, p));
	for (const k of ['h0', 'v0', 'nh', 'nq', 'cCrit', 'cOutlier', 'alpha'] as const) num(o[k], `${where}.${k}`);
	if (!o.limits || typeof o.limits !== 'object') fail(`${where}.limits is missing`);
	const lim = o.limits as Record<string, unknown>;
	num(lim.t2Limit, `${where}.limits.t2Limit`);
	num(lim.speLimit, `${where}.limits.speLimit`, true);
	return m as ModelJson;
}

/** Parses and validates an artefact; throws AnalysisError naming the first problem. */
export function parseArtefact(text: string): ModelArtefact {
	let raw: unknown;
	try {
		raw = JSON.parse(text);
	} catch (e) {
		return fail(`not valid JSON (${(e as Error).message})`);
	}
	return validateArtefact(raw);
}

export function validateArtefact(raw: unknown): ModelArtefact {
	if (!raw || typeof raw !== 'object' || Array.isArray(raw)) return fail('must be a JSON object');
	const o = raw as Record<string, unknown>;
	if (!(SUPPORTED_SCHEMA_VERSIONS as readonly unknown[]).includes(o.schemaVersion))
		fail(`schemaVersion ${String(o.schemaVersion)} is not supported (this engine reads ${SUPPORTED_SCHEMA_VERSIONS.join(' and ')})`);
	const axis = o.axis as Record<string, unknown> | undefined;
	if (!axis || typeof axis !== 'object') fail('axis is missing');
	if (!isAxisUnit(axis!.unit)) fail('axis.unit must be nm, cm-1 or um');
	const x = numArray(axis!.x, 'axis.x');
	const p = x.length;
	if (p < 2 || num(axis!.points, 'axis.points') !== p) fail('axis.points must equal the length of axis.x (≥ 2)');
	for (let i = 1; i < p; i++) if (!(x[i] > x[i - 1])) fail('axis.x must be strictly ascending');
	if (typeof o.recipe !== 'string') fail('recipe must be a string');
	try {
		parseRecipe(o.recipe as string);
	} catch (e) {
		fail(`recipe: ${(e as Error).message}`);
	}
	const pre = o.preprocess as { fitted?: unknown } | undefined;
	if (!pre || !Array.isArray(pre.fitted)) fail('preprocess.fitted must be an array');
	checkModel(o.family, 'family', p);
	if (!Array.isArray(o.classes) || o.classes.some((c) => typeof c !== 'string')) fail('classes must be an array of names');
	const models = (o.models ?? {}) as Record<string, unknown>;
	for (const c of o.classes as string[]) checkModel(models[c], `models["${c}"]`, p);
	if (o.genuine !== null && !(o.classes as string[]).includes(o.genuine as string)) fail(`genuine class "${String(o.genuine)}" is not among the classes`);
	if ((o.classes as string[]).length > 0 && o.genuine === null) fail('a class model set needs a genuine class');
	if (typeof o.meta !== 'object' || o.meta === null) fail('meta must be an object');
	if ((o.schemaVersion === 1 || o.schemaVersion === 2) && o.splits !== undefined) fail('splits need schemaVersion 3');
	if (o.splits !== undefined) checkSplits(o.splits, o.classes as string[], p);
	// after the shape (so a broken file names what is broken): the content hash, then every derivable quantity
	// Version 1 predates the integrity field; it still screens as a two-level tree, guarded by the recomputation of
	// every derivable quantity below (a hand-set c_crit is refused) and, on the server, by the recorded SHA-256.
	if (o.schemaVersion !== 1) verifyIntegrity(o);
	checkDerived(raw as ModelArtefact);
	return raw as ModelArtefact;
}

/**
 * Tree rules: every split refines a node that exists (a level-1 class or a child of an earlier split);
 * a node is split once; a discriminant split sits only on a node that a one-class model accepted
 * (level-1 nodes always are), because a closed-set classifier cannot say "none of these".
 */
function checkSplits(raw: unknown, classes: string[], p: number): void {
	if (!Array.isArray(raw)) fail('splits must be an array');
	const methodOf = new Map<string, string>();
	const childrenOf = new Map<string, string[]>([['', classes]]);
	(raw as unknown[]).forEach((sRaw, i) => {
		const where = `splits[${i}]`;
		if (!sRaw || typeof sRaw !== 'object') fail(`${where} must be an object`);
		const s = sRaw as Record<string, unknown>;
		if (!Array.isArray(s.path) || s.path.length === 0 || s.path.some((x) => typeof x !== 'string' || x === '')) fail(`${where}.path must be a non-empty list of names`);
		const path = s.path as string[];
		const key = path.join('/');
		const parentKey = path.slice(0, -1).join('/');
		if (!childrenOf.get(parentKey)?.includes(path[path.length - 1])) fail(`${where}: node "${key}" is not a child of an earlier node`);
		if (methodOf.has(key)) fail(`${where}: node "${key}" is split twice`);
		if (s.method !== 'one-class' && s.method !== 'plsda' && s.method !== 'knn') fail(`${where}.method must be one-class, plsda or knn`);
		if (s.method !== 'one-class' && path.length > 1 && methodOf.get(parentKey) !== 'one-class')
			fail(`${where}: a discriminant split needs a node accepted by a one-class model, but "${key}" is chosen by a ${methodOf.get(parentKey)} split`);
		methodOf.set(key, s.method as string);
		if (typeof s.recipe !== 'string') fail(`${where}.recipe must be a string`);
		const w = numArray(s.window, `${where}.window`, 2);
		if (!(Number.isInteger(w[0]) && Number.isInteger(w[1]) && w[0] >= 0 && w[1] <= p && w[1] - w[0] >= 2)) fail(`${where}.window must be [start, end) within the axis, at least 2 points`);
		const pw = w[1] - w[0];
		if (!Array.isArray(s.children) || s.children.length === 0 || s.children.some((c) => typeof c !== 'string' || c === '')) fail(`${where}.children must be a non-empty list of names`);
		const children = s.children as string[];
		if (new Set(children).size !== children.length) fail(`${where}.children has duplicates`);
		childrenOf.set(key, children);
		const pre = s.preprocess as { fitted?: unknown } | undefined;
		if (!pre || !Array.isArray(pre.fitted)) fail(`${where}.preprocess.fitted must be an array`);
		if (s.method === 'one-class') {
			const models = (s.models ?? {}) as Record<string, unknown>;
			for (const c of children) checkModel(models[c], `${where}.models["${c}"]`, pw);
		} else {
			const cl = s.classifier as Record<string, unknown> | null;
			if (!cl || cl.method !== s.method) fail(`${where}.classifier must be a ${String(s.method)} model`);
			if (children.length < 2) fail(`${where}: a discriminant split needs at least two children`);
			const sc = s.scaling as Record<string, unknown> | null;
			if (!sc) fail(`${where}.scaling is missing`);
			numArray(sc!.mean, `${where}.scaling.mean`, pw);
			numArray(sc!.scale, `${where}.scaling.scale`, pw);
			const cls = cl!.classes;
			if (!Array.isArray(cls) || [...cls].sort().join('\u0000') !== [...children].sort().join('\u0000')) fail(`${where}.classifier classes must be the children`);
		}
	});
}

/** True when the artefact carries an integrity field (schemaVersion 2 and later); version 1 is only re-derived. */
export function isSealed(artefact: { schemaVersion: number }): boolean {
	return artefact.schemaVersion >= 2;
}
