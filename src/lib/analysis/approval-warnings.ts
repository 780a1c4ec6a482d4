// What a QA signer should read before approving a model version (issue 17 item 6): the engine's own guards, sorted
// into the kinds people ask about, and a cross-validated false-reject rate that is high for its α. Pure: the server
// passes each model's stored figures and the material's acceptance criteria.
//
// Sources of the thresholds, none new here:
// - "components at the cap" and "low N" are the engine's build warnings (src/lib/analysis/build.ts): the suggested A
//   equals the cap, and N_h or N_q below 3 (issue 12 §4);
// - "high false-reject rate" compares the cross-validated rate with the factor·α part of the acceptance bound
//   (acceptance.ts, default 2α, common practice) and says whether the binomial allowance for n still covers it, so
//   the signer sees a rate that is high but allowed by chance at small n, not only the unmet criterion.
import { cvFrrBound } from './acceptance';
import { AnalysisError } from './errors';

export type ApprovalWarningKind = 'components-at-cap' | 'low-degrees-of-freedom' | 'high-false-reject-rate' | 'other';

export interface ApprovalWarning {
	kind: ApprovalWarningKind;
	model: string;
	text: string;
}

export interface ModelForWarnings {
	name: string;
	n: number;
	alpha: number;
	cvFalseRejectRate: number;
	/** The engine's warnings as stored with the version's figures. */
	warnings?: readonly string[];
}

export interface FalseRejectCriteria {
	cvFrrFactor: number;
	cvFrrQuantile: number;
}

const pct = (x: number) => `${(x * 100).toFixed(1)} %`;

function kindOf(text: string): ApprovalWarningKind {
	if (/equals the cap/.test(text)) return 'components-at-cap';
	if (/\bN_[hq]\b/.test(text)) return 'low-degrees-of-freedom';
	return 'other';
}

/** The warnings for a version's models, in model order: engine guards first, then the false-reject check. */
export function approvalWarnings(models: readonly ModelForWarnings[], criteria: FalseRejectCriteria): ApprovalWarning[] {
	if (!Array.isArray(models)) throw new AnalysisError('bad-input', 'models must be an array');
	const { cvFrrFactor, cvFrrQuantile } = criteria ?? ({} as FalseRejectCriteria);
	if (!(cvFrrFactor >= 1) || !(cvFrrQuantile > 0 && cvFrrQuantile < 1)) throw new AnalysisError('bad-criteria', `cvFrrFactor must be at least 1 and cvFrrQuantile in (0, 1), got ${cvFrrFactor} and ${cvFrrQuantile}`);
	const out: ApprovalWarning[] = [];
	for (const m of models) {
		if (!m || typeof m.name !== 'string') throw new AnalysisError('bad-input', 'each model needs a name');
		if (!(Number.isInteger(m.n) && m.n > 0)) throw new AnalysisError('bad-input', `model "${m.name}": n must be a positive whole number, got ${m.n}`);
		if (!(m.alpha > 0 && m.alpha < 1)) throw new AnalysisError('bad-input', `model "${m.name}": α must be in (0, 1), got ${m.alpha}`);
		if (!(m.cvFalseRejectRate >= 0 && m.cvFalseRejectRate <= 1)) throw new AnalysisError('bad-input', `model "${m.name}": the false-reject rate must be in [0, 1], got ${m.cvFalseRejectRate}`);
		for (const w of m.warnings ?? []) out.push({ kind: kindOf(w), model: m.name, text: w });
		// Compare counts, as the acceptance criterion does: k rejected of n against factor·α·n.
		const rejected = Math.round(m.cvFalseRejectRate * m.n);
		if (rejected > Math.floor(cvFrrFactor * m.alpha * m.n + 1e-9)) {
			const bound = cvFrrBound(m.n, m.alpha, cvFrrFactor, cvFrrQuantile);
			const allowed = rejected <= Math.floor(bound * m.n + 1e-9);
			out.push({
				kind: 'high-false-reject-rate',
				model: m.name,
				text: `cross-validated false-reject rate ${pct(m.cvFalseRejectRate)} (${rejected} of ${m.n}) is above ${cvFrrFactor}α = ${pct(cvFrrFactor * m.alpha)}; ${
					allowed ? `with n = ${m.n} the binomial allowance (${pct(bound)}) still covers it, so it may be chance` : `it exceeds the acceptance bound ${pct(bound)}`
				}`
			});
		}
	}
	return out;
}
