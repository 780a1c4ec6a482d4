import { pca, residualMoments } from '../../../src/lib/analysis/pca';
import { makeProjectionModel, project } from '../../../src/lib/analysis/projection';
import { cCritical, cOutlier, dofMoments } from '../../../src/lib/analysis/limits/ddsimca';
import { t2LimitNew, t2LimitTraining } from '../../../src/lib/analysis/limits/hotelling';
import { speBox, speJacksonMudholkar, speMoments } from '../../../src/lib/analysis/limits/spe';
import { decide } from '../../../src/lib/analysis/classify';

export type Inputs = Record<string, string>;

const nums = (s: string) => s.trim().split(/\s+/).map(Number);

/** Recomputes the worked example of docs/methods.md from its inputs with the engine's own functions. */
export function computeWorkedExample(inp: Inputs): Record<string, number | string> {
	const X = inp.X.split(';').map(nums);
	const n = X.length;
	const p = X[0].length;
	const A = Number(inp.A);
	const alpha = Number(inp.alpha);
	const gamma = Number(inp.gamma);
	const mean = Array.from({ length: p }, (_, j) => X.reduce((s, r) => s + r[j], 0) / n);
	const Z = new Float64Array(n * p);
	X.forEach((r, i) => r.forEach((v, j) => (Z[i * p + j] = v - mean[j])));
	const fit = pca({ data: Z, rows: n, cols: p }, Math.min(n - 1, p));
	const th = residualMoments(fit, A);
	const h = nums(inp.h_cv);
	const v = nums(inp.v_cv);
	const hp = dofMoments(h);
	const vp = dofMoments(v);
	const dof = hp.dof + vp.dof;
	const cCrit = cCritical(dof, alpha);
	const model = makeProjectionModel({
		name: 'example',
		kind: 'genuine',
		A,
		mean: Float64Array.from(mean),
		scale: new Array(p).fill(1),
		loadings: fit.loadings.slice(0, A * p),
		eigenvalues: fit.eigenvalues,
		h0: hp.x0,
		v0: vp.x0,
		nh: hp.dof,
		nq: vp.dof,
		t2Limit: t2LimitNew(n, A, alpha),
		speLimit: speMoments(v, alpha),
		cCrit,
		cOutlier: cOutlier(dof, gamma, h.length)
	});
	const s = project(model, nums(inp.x_new));
	const out: Record<string, number | string> = {};
	mean.forEach((m, j) => (out[`mean_${j + 1}`] = m));
	Array.from(fit.eigenvalues).forEach((l, a) => (out[`lambda_${a + 1}`] = l));
	out.explained_1 = fit.eigenvalues[0] / fit.totalVariance;
	for (let j = 0; j < p; j++) out[`p1_${j + 1}`] = fit.loadings[j];
	out.theta_1 = th.theta1;
	out.theta_2 = th.theta2;
	out.theta_3 = th.theta3;
	out.t1_new = s.scores[0];
	out.T2_new = s.t2;
	out.SPE_new = s.spe;
	out.T2_limit_F = t2LimitNew(n, A, alpha);
	out.T2_limit_Beta = t2LimitTraining(n, A, alpha);
	out.SPE_limit_JM = speJacksonMudholkar(th.theta1, th.theta2, th.theta3, alpha);
	out.SPE_limit_Box = speBox(th.theta1, th.theta2, alpha);
	out.h0 = hp.x0;
	out.Nh = hp.dof;
	out.v0 = vp.x0;
	out.Nq = vp.dof;
	out.c_new = s.c;
	out.c_crit = cCrit;
	out.c_out = cOutlier(dof, gamma, h.length);
	out.accepted = s.accepted ? 'yes' : 'no';
	out.verdict = decide({ accepted: true, c: 0, cCrit: 1 }, [{ name: 'example', kind: 'genuine', stats: s }]).verdict;
	out.T2_limit_F_n30_k3 = t2LimitNew(30, 3, 0.05);
	out.T2_limit_Beta_n30_k3 = t2LimitTraining(30, 3, 0.05);
	return out;
}

/** Reads the ```worked-example block: "key = value" lines, inputs above "---", expected below. */
export function parseWorkedExample(markdown: string): { inputs: Inputs; expected: Record<string, string> } {
	const m = /```worked-example\n([\s\S]*?)```/.exec(markdown);
	if (!m) throw new Error('docs/methods.md has no ```worked-example block');
	const [top, bottom] = m[1].split(/^---$/m);
	const kv = (text: string) =>
		Object.fromEntries(
			text
				.split('\n')
				.map((l) => l.replace(/#.*$/, '').trim())
				.filter(Boolean)
				.map((l) => {
					const i = l.indexOf('=');
					return [l.slice(0, i).trim(), l.slice(i + 1).trim()];
				})
		);
	return { inputs: kv(top), expected: kv(bottom ?? '') };
}
