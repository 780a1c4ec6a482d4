import { ddStatistic } from './limits/ddsimca';

export interface ModelStats {
	scores: number[];
	/** Hotelling T² = Σ t_a²/λ_a. */
	t2: number;
	/** SPE = Σ e_j², preprocessed units. */
	spe: number;
	/** DD-SIMCA score distance h; equal to T² (same λ, n − 1 scaling). */
	h: number;
	/** DD-SIMCA orthogonal distance v; equal to SPE. */
	v: number;
	/** c = N_h·h/h₀ + N_q·v/v₀. */
	c: number;
	t2Limit: number;
	speLimit: number;
	cCrit: number;
	cOutlier: number;
	accepted: boolean;
	contributions?: { t2: number[]; spe: number[] };
}

/** Everything one PCA model needs per spectrum, as typed arrays, built once per artefact. */
export interface ProjectionModel {
	name: string;
	kind: 'family' | 'genuine' | 'suspect';
	A: number;
	p: number;
	mean: Float64Array;
	/** 1/scale, so the per-spectrum path multiplies. */
	invScale: Float64Array;
	/** A×p. */
	loadings: Float64Array;
	invLambda: Float64Array;
	h0: number;
	v0: number;
	nh: number;
	nq: number;
	t2Limit: number;
	speLimit: number;
	cCrit: number;
	cOutlier: number;
	/** Scratch buffers reused across calls (screening is synchronous). */
	z: Float64Array;
	t: Float64Array;
}

export function makeProjectionModel(m: Omit<ProjectionModel, 'z' | 't' | 'invScale' | 'invLambda' | 'p'> & { scale: ArrayLike<number>; eigenvalues: ArrayLike<number> }): ProjectionModel {
	const p = m.mean.length;
	const invScale = new Float64Array(p);
	for (let j = 0; j < p; j++) invScale[j] = 1 / m.scale[j];
	const invLambda = new Float64Array(m.A);
	for (let a = 0; a < m.A; a++) invLambda[a] = 1 / m.eigenvalues[a];
	return {
		name: m.name,
		kind: m.kind,
		A: m.A,
		p,
		mean: m.mean,
		invScale,
		loadings: m.loadings,
		invLambda,
		h0: m.h0,
		v0: m.v0,
		nh: m.nh,
		nq: m.nq,
		t2Limit: m.t2Limit,
		speLimit: m.speLimit,
		cCrit: m.cCrit,
		cOutlier: m.cOutlier,
		z: new Float64Array(p),
		t: new Float64Array(m.A)
	};
}

/**
 * Projects one row-preprocessed spectrum: z = (x − mean)/scale, t = Pᵀz, T² = Σ t²/λ,
 * SPE = ‖z − Pt‖². SPE is taken as ‖z‖² − Σt² (P orthonormal) unless that loses digits.
 */
export function project(m: ProjectionModel, x: ArrayLike<number>, options: { contributions?: boolean } = {}): ModelStats {
	const { A, p, mean, invScale, loadings, invLambda, z, t } = m;
	let zz = 0;
	for (let j = 0; j < p; j++) {
		const v = (x[j] - mean[j]) * invScale[j];
		z[j] = v;
		zz += v * v;
	}
	let t2 = 0;
	let tt = 0;
	for (let a = 0; a < A; a++) {
		const base = a * p;
		let s0 = 0;
		let s1 = 0;
		let j = 0;
		for (; j + 1 < p; j += 2) {
			s0 += loadings[base + j] * z[j];
			s1 += loadings[base + j + 1] * z[j + 1];
		}
		if (j < p) s0 += loadings[base + j] * z[j];
		const s = s0 + s1;
		t[a] = s;
		tt += s * s;
		t2 += s * s * invLambda[a];
	}
	let spe = zz - tt;
	let e: Float64Array | null = null;
	// rounding in ‖z‖² − Σt² is about 10⁻¹⁶‖z‖², i.e. ≤ 10⁻⁹ relative while SPE ≥ 10⁻⁶‖z‖²; below that, compute e explicitly
	if (options.contributions || !(spe >= 1e-6 * zz)) {
		e = Float64Array.from(z);
		for (let a = 0; a < A; a++) {
			const base = a * p;
			const ta = t[a];
			for (let j = 0; j < p; j++) e[j] -= ta * loadings[base + j];
		}
		spe = 0;
		for (let j = 0; j < p; j++) spe += e[j] * e[j];
	}
	const c = ddStatistic(t2, spe, m);
	const stats: ModelStats = {
		scores: Array.from(t),
		t2,
		spe,
		h: t2,
		v: spe,
		c,
		t2Limit: m.t2Limit,
		speLimit: m.speLimit,
		cCrit: m.cCrit,
		cOutlier: m.cOutlier,
		accepted: c <= m.cCrit
	};
	if (options.contributions && e) {
		// T²: c_j = z_j Σ_a (t_a/λ_a) p_aj (Westerhuis et al. 2000); SPE: c_j = e_j² (Miller et al. 1998)
		const ct2 = new Array<number>(p).fill(0);
		for (let a = 0; a < A; a++) {
			const w = t[a] * invLambda[a];
			const base = a * p;
			for (let j = 0; j < p; j++) ct2[j] += w * loadings[base + j];
		}
		for (let j = 0; j < p; j++) ct2[j] *= z[j];
		stats.contributions = { t2: ct2, spe: Array.from(e, (v) => v * v) };
	}
	return stats;
}
