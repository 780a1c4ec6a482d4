// Acceptance criteria of a model version: what its validation must show, on spectra it never saw, before QA may
// approve it (issue 12 §1). Pure: the server gathers the verdicts, lots and rates and calls evaluateAcceptance.
//
// The criteria put into numbers the validation characteristics of USP <1039> (chemometrics: a model is validated on
// an independent set, including samples it must reject) and the specificity of ICH Q2(R2) (the procedure tells the
// analyte from closely related materials); the default counts and rates are common practice, not taken from either.
import { AnalysisError } from './errors';
import { clopperPearson, type Interval } from './metrics';
import { binomialInv } from './quantiles';

export interface AcceptanceCriteria {
	/** Test spectra of the genuine class from supplier lots that have no spectrum in training. */
	genuineTestMin: number;
	/** …from at least this many such lots. */
	genuineTestLotsMin: number;
	/** Test or challenge spectra per known suspect profile. */
	perSuspectMin: number;
	/** Challenge spectra of other materials or unseen adulterants (labels that are not a class of the material). */
	challengeMin: number;
	/** Verdict-level specificity of genuine: share of challenge and suspect spectra NOT called genuine. */
	specificityMin: number;
	/** Verdict-level sensitivity of genuine: share of genuine test spectra called genuine. */
	sensitivityMin: number;
	/** CV false-reject rate bound of each model: max(factor·α, Binomial(n, α) quantile at `cvFrrQuantile` / n). */
	cvFrrFactor: number;
	cvFrrQuantile: number;
	/** Months from approval to the review-by date. */
	reviewMonths: number;
}

/** Defaults (common practice, issue 12 §1). */
export const DEFAULT_CRITERIA: AcceptanceCriteria = Object.freeze({
	genuineTestMin: 10,
	genuineTestLotsMin: 3,
	perSuspectMin: 5,
	challengeMin: 5,
	specificityMin: 1,
	sensitivityMin: 0.9,
	cvFrrFactor: 2,
	cvFrrQuantile: 0.95,
	reviewMonths: 12
});

export interface ValidationItem {
	/** The spectrum's label: a class of the material, or something else (a challenge of another material). */
	label: string;
	role: 'test' | 'challenge';
	supplierLot: string | null;
	verdict: string;
	profile: string | null;
}

export interface AcceptanceInput {
	genuine: string;
	suspects: string[];
	items: ValidationItem[];
	/** Supplier lots of the version's included training spectra. */
	trainingLots: string[];
	models: { name: string; alpha: number; n: number; cvFalseRejectRate: number }[];
}

export interface CriterionResult {
	key: string;
	/** The criterion in words. */
	label: string;
	met: boolean;
	/** What was observed, with its numbers. */
	observed: string;
	required: string;
	/** Clopper–Pearson 95 % interval where the criterion is a proportion. */
	interval?: Interval;
}

export interface AcceptanceResult {
	met: boolean;
	criteria: CriterionResult[];
	unmet: string[];
}

const pct = (x: number) => `${(x * 100).toFixed(1)} %`;

/** Validates criteria values (as edited by a chemometrician); throws naming the first bad one. */
export function checkCriteria(c: AcceptanceCriteria): AcceptanceCriteria {
	const int = (k: keyof AcceptanceCriteria, min: number, max: number) => {
		const v = c[k];
		if (!(Number.isInteger(v) && v >= min && v <= max)) throw new AnalysisError('bad-criteria', `${k} must be a whole number from ${min} to ${max}, got ${v}`);
	};
	const frac = (k: keyof AcceptanceCriteria, min: number, max: number) => {
		const v = c[k];
		if (!(typeof v === 'number' && v >= min && v <= max)) throw new AnalysisError('bad-criteria', `${k} must be between ${min} and ${max}, got ${v}`);
	};
	int('genuineTestMin', 1, 1000);
	int('genuineTestLotsMin', 1, 100);
	int('perSuspectMin', 1, 1000);
	int('challengeMin', 1, 1000);
	frac('specificityMin', 0.9, 1);
	frac('sensitivityMin', 0.5, 1);
	frac('cvFrrFactor', 1, 5);
	frac('cvFrrQuantile', 0.5, 0.999);
	int('reviewMonths', 1, 36);
	return c;
}

/** The CV false-reject bound of a model with n training objects at α: max(factor·α, q_{Binomial(n, α)}(level)/n). */
export function cvFrrBound(n: number, alpha: number, factor: number, level: number): number {
	return Math.max(factor * alpha, binomialInv(level, n, alpha) / n);
}

export function evaluateAcceptance(input: AcceptanceInput, criteria: AcceptanceCriteria = DEFAULT_CRITERIA): AcceptanceResult {
	const c = checkCriteria(criteria);
	const out: CriterionResult[] = [];
	const trainingLots = new Set(input.trainingLots.filter(Boolean));
	const classes = new Set([input.genuine, ...input.suspects]);

	// 1. genuine test spectra from lots not in training
	const genuineTests = input.items.filter((i) => i.label === input.genuine && i.role === 'test');
	const unseen = genuineTests.filter((i) => i.supplierLot && !trainingLots.has(i.supplierLot));
	const unseenLots = new Set(unseen.map((i) => i.supplierLot));
	out.push({
		key: 'genuine-test-set',
		label: `at least ${c.genuineTestMin} test spectra of the genuine class from at least ${c.genuineTestLotsMin} supplier lots not in training`,
		met: unseen.length >= c.genuineTestMin && unseenLots.size >= c.genuineTestLotsMin,
		observed: `${unseen.length} spectra from ${unseenLots.size} lots not in training (${genuineTests.length} genuine test spectra in all)`,
		required: `≥ ${c.genuineTestMin} spectra, ≥ ${c.genuineTestLotsMin} lots`
	});

	// 2. per suspect profile
	for (const s of input.suspects) {
		const n = input.items.filter((i) => i.label === s).length;
		out.push({ key: `suspect-set:${s}`, label: `at least ${c.perSuspectMin} test or challenge spectra of suspect profile "${s}"`, met: n >= c.perSuspectMin, observed: `${n} spectra`, required: `≥ ${c.perSuspectMin}` });
	}

	// 3. challenge spectra of other materials / unseen adulterants
	const aliens = input.items.filter((i) => i.role === 'challenge' && !classes.has(i.label));
	out.push({
		key: 'challenge-set',
		label: `at least ${c.challengeMin} challenge spectra of other materials or unseen adulterants`,
		met: aliens.length >= c.challengeMin,
		observed: `${aliens.length} spectra${aliens.length ? ` (${[...new Set(aliens.map((a) => a.label))].join(', ')})` : ''}`,
		required: `≥ ${c.challengeMin}`
	});

	// 4. verdict-level specificity: no challenge or suspect spectrum called genuine
	const mustReject = input.items.filter((i) => i.label !== input.genuine);
	const rejected = mustReject.filter((i) => i.verdict !== 'genuine').length;
	const spec = clopperPearson(rejected, mustReject.length);
	out.push({
		key: 'specificity',
		label: `verdict-level specificity of genuine at least ${pct(c.specificityMin)} (challenge and suspect spectra never called genuine)`,
		met: mustReject.length > 0 && rejected / mustReject.length >= c.specificityMin,
		observed:
			mustReject.length === 0
				? 'no challenge or suspect spectra'
				: `${rejected} of ${mustReject.length} not called genuine = ${pct(rejected / mustReject.length)} (95 % CI ${pct(spec.lower)}–${pct(spec.upper)})`,
		required: `≥ ${pct(c.specificityMin)}`,
		interval: spec
	});

	// 5. verdict-level sensitivity of genuine
	const called = genuineTests.filter((i) => i.verdict === 'genuine').length;
	const sens = clopperPearson(called, genuineTests.length);
	out.push({
		key: 'sensitivity',
		label: `verdict-level sensitivity of genuine at least ${pct(c.sensitivityMin)}`,
		met: genuineTests.length > 0 && called / genuineTests.length >= c.sensitivityMin,
		observed:
			genuineTests.length === 0
				? 'no genuine test spectra'
				: `${called} of ${genuineTests.length} called genuine = ${pct(called / genuineTests.length)}, Clopper–Pearson 95 % lower bound ${pct(sens.lower)}`,
		required: `≥ ${pct(c.sensitivityMin)}`,
		interval: sens
	});

	// 6. CV false-reject rate of every model
	for (const m of input.models) {
		const bound = cvFrrBound(m.n, m.alpha, c.cvFrrFactor, c.cvFrrQuantile);
		out.push({
			key: `cv-frr:${m.name}`,
			label: `cross-validated false-reject rate of model "${m.name}" at most max(${c.cvFrrFactor}α, Binomial(n, α) ${c.cvFrrQuantile * 100}th percentile / n)`,
			// compare counts, not rounded rates: k rejected of n against the bound
			met: Math.round(m.cvFalseRejectRate * m.n) <= Math.floor(bound * m.n + 1e-9),
			observed: `${pct(m.cvFalseRejectRate)} (${Math.round(m.cvFalseRejectRate * m.n)} of ${m.n}) at α = ${m.alpha}`,
			required: `≤ ${pct(bound)}`
		});
	}
	const unmet = out.filter((r) => !r.met).map((r) => `${r.label}: ${r.observed} (needs ${r.required})`);
	return { met: unmet.length === 0, criteria: out, unmet };
}
