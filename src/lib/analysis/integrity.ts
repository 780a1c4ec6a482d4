// Artefact integrity: the artefact carries the SHA-256 of its own canonical content (without that field), and every
// quantity that follows from other stored quantities is recomputed on load and must agree. A hand edit (c_crit set to
// 1e9, a limit widened, a scale zeroed) is refused before any spectrum is screened.
import { createHash } from 'node:crypto';
import canonicalize from 'canonicalize';
import { AnalysisError } from './errors';
import { alphaRefusal } from './alpha-bounds';
import { cCritical, cOutlier, estimateDof } from './limits/ddsimca';
import { t2LimitNew, t2LimitTraining } from './limits/hotelling';
import { speBox, speJacksonMudholkar, speMoments } from './limits/spe';
import type { ModelArtefact, ModelJson } from './artefact';

/** Deep copy with non-finite numbers as null (JSON has no NaN/Infinity) and typed arrays as arrays. */
export function plain(value: unknown): unknown {
	if (typeof value === 'number') return Number.isFinite(value) ? value : null;
	if (ArrayBuffer.isView(value)) return Array.from(value as unknown as ArrayLike<number>, (x) => (Number.isFinite(x) ? x : null));
	if (Array.isArray(value)) return value.map(plain);
	if (value && typeof value === 'object') {
		const out: Record<string, unknown> = {};
		for (const [k, v] of Object.entries(value)) if (v !== undefined) out[k] = plain(v);
		return out;
	}
	return value;
}

/** RFC 8785 canonical JSON (key order and number form fixed): the same content always gives the same bytes. */
export function canonicalJson(value: unknown): string {
	const text = canonicalize(plain(value));
	if (text === undefined) throw new AnalysisError('bad-artefact', 'artefact cannot be serialised');
	return text;
}

/** SHA-256 (hex) of the canonical JSON of the artefact without its `integrity` field. */
export function artefactDigest(artefact: object): string {
	const { integrity: _omit, ...content } = artefact as Record<string, unknown>;
	return createHash('sha256').update(canonicalJson(content)).digest('hex');
}

/** The artefact with its integrity field set (a new object; the input is not changed). */
export function sealArtefact<T extends object>(artefact: T): T & { integrity: string } {
	return { ...artefact, integrity: artefactDigest(artefact) };
}

const fail = (code: string, msg: string): never => {
	throw new AnalysisError(code, `model artefact: ${msg}`);
};

/** Refuses an artefact whose integrity field is missing or does not match its content. */
export function verifyIntegrity(raw: object): void {
	const stored = (raw as { integrity?: unknown }).integrity;
	if (typeof stored !== 'string' || !/^[0-9a-f]{64}$/.test(stored))
		fail('artefact-integrity', 'integrity field missing or not a SHA-256 hex digest: the artefact cannot be shown to be the one that was built; rebuild it');
	const actual = artefactDigest(raw);
	if (actual !== stored)
		fail(
			'artefact-integrity',
			`integrity check failed: the SHA-256 of its content is ${actual.slice(0, 16)}…, its integrity field says ${(stored as string).slice(0, 16)}…; the artefact was changed after it was built and is refused`
		);
}

// Recomputation in the same engine from the same stored doubles gives the same doubles; the tolerance only absorbs
// summation-order differences (θ₁ against the trace) and nothing a hand edit could hide in.
const REL = 1e-9;
const close = (a: number, b: number, rel = REL) => a === b || Math.abs(a - b) <= rel * Math.max(Math.abs(a), Math.abs(b), Number.MIN_VALUE);

function checkModelDerived(m: ModelJson, where: string, kind: 'class' | 'family'): void {
	const bad = (what: string, stored: number | null, expected: number) =>
		fail('artefact-derived', `${where}.${what} is ${stored} but recomputes to ${expected} from the stored data: the artefact is inconsistent and is refused`);
	const refusal = alphaRefusal(kind, m.alpha);
	if (refusal) fail('bad-alpha', `${where}: ${refusal}`);
	if (!(m.gamma > 0 && m.gamma < 1)) fail('artefact-derived', `${where}.gamma must be in (0, 1)`);
	for (const k of ['h0', 'v0'] as const) if (!(m[k] > 0)) fail('artefact-derived', `${where}.${k} must be positive, got ${m[k]}`);
	for (const k of ['nh', 'nq'] as const) if (!(Number.isInteger(m[k]) && m[k] >= 1)) fail('artefact-derived', `${where}.${k} must be a whole number ≥ 1, got ${m[k]}`);
	if (m.scale.some((s) => !(s > 0))) fail('artefact-derived', `${where}.scale must be positive`);
	if (m.eigenvalues.slice(0, m.components).some((l) => !(l > 0))) fail('artefact-derived', `${where}.eigenvalues (λ) must be positive`);
	const tr = m.training;
	if (!tr || !tr.cv || !tr.fitted) return fail('artefact-derived', `${where}.training distances are missing, so the limits cannot be checked`);
	const basis = m.limitsFrom === 'cv' ? tr.cv : m.limitsFrom === 'training' ? tr.fitted : fail('artefact-derived', `${where}.limitsFrom must be cv or training`);
	if (basis.h.length !== m.n || basis.v.length !== m.n) fail('artefact-derived', `${where}: ${basis.h.length} stored distances for n = ${m.n} training objects`);
	// DD-SIMCA scales and degrees of freedom from the stored training distances (Pomerantsev 2008; Pomerantsev & Rodionova 2014)
	const hp = estimateDof(basis.h, m.estimator);
	const vp = estimateDof(basis.v, m.estimator);
	if (!close(m.h0, hp.x0)) bad('h0', m.h0, hp.x0);
	if (!close(m.v0, vp.x0)) bad('v0', m.v0, vp.x0);
	if (m.nh !== hp.dof) bad('nh', m.nh, hp.dof);
	if (m.nq !== vp.dof) bad('nq', m.nq, vp.dof);
	const cc = cCritical(m.nh + m.nq, m.alpha);
	if (!close(m.cCrit, cc)) bad('cCrit', m.cCrit, cc);
	const co = cOutlier(m.nh + m.nq, m.gamma, m.n);
	if (!close(m.cOutlier, co)) bad('cOutlier', m.cOutlier, co);
	// Hotelling T² limits (NIST/SEMATECH §6.5.4.3; Tracy, Young & Mason 1992)
	const L = m.limits;
	const t2 = t2LimitNew(m.n, m.components, m.alpha);
	if (!close(L.t2Limit, t2)) bad('limits.t2Limit', L.t2Limit, t2);
	const t2t = t2LimitTraining(m.n, m.components, m.alpha);
	if (!close(L.t2LimitTraining, t2t)) bad('limits.t2LimitTraining', L.t2LimitTraining, t2t);
	// SPE: θ₁ is the residual trace, so it must equal the total variance minus the first A eigenvalues; θ₂ = Σλ² over the
	// residual eigenvalues is at least the sum over the stored ones beyond A and at most θ₁².
	const [t1, t2r, t3] = L.theta;
	let explained = 0;
	for (let a = 0; a < m.components; a++) explained += m.eigenvalues[a];
	const expectT1 = Math.max(m.totalVariance - explained, 0);
	if (Math.abs(t1 - expectT1) > 1e-7 * m.totalVariance) bad('limits.theta[0]', t1, expectT1);
	let stored2 = 0;
	for (let a = m.components; a < m.eigenvalues.length; a++) stored2 += m.eigenvalues[a] ** 2;
	if (t2r < stored2 * (1 - 1e-7) || t2r > t1 * t1 * (1 + 1e-7)) fail('artefact-derived', `${where}.limits.theta[1] = ${t2r} is outside [Σλ², θ₁²] of the stored eigenvalues`);
	const jm = speJacksonMudholkar(t1, t2r, t3, m.alpha);
	const box = speBox(t1, t2r, m.alpha);
	const mom = speMoments(basis.v, m.alpha);
	const spe = L.spe;
	if (Number.isFinite(jm) ? !(spe['jackson-mudholkar'] !== null && close(spe['jackson-mudholkar'], jm)) : spe['jackson-mudholkar'] !== null)
		bad('limits.spe.jackson-mudholkar', spe['jackson-mudholkar'], jm);
	if (!close(spe.box, box)) bad('limits.spe.box', spe.box, box);
	if (!close(spe.moments, mom)) bad('limits.spe.moments', spe.moments, mom);
	const chosen = L.speMethod === 'jackson-mudholkar' ? spe['jackson-mudholkar'] : L.speMethod === 'box' ? spe.box : L.speMethod === 'moments' ? spe.moments : fail('artefact-derived', `${where}.limits.speMethod is unknown`);
	const norm = (x: number | null) => (x === null || !Number.isFinite(x) ? null : x);
	if (norm(L.speLimit) !== norm(chosen)) bad('limits.speLimit', L.speLimit, chosen ?? Number.NaN);
}

/** Recomputes every derivable limit of every model and refuses the first mismatch. */
export function checkDerived(a: ModelArtefact): void {
	checkModelDerived(a.family, 'family', 'family');
	for (const c of a.classes) checkModelDerived(a.models[c], `models["${c}"]`, 'class');
	// model trees: every one-class model of every split is checked like the level-1 ones
	(a.splits ?? []).forEach((s, i) => {
		if (s.method === 'one-class') for (const c of s.children) checkModelDerived(s.models[c], `splits[${i}].models["${c}"]`, 'class');
	});
}
