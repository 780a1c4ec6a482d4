// Supplier drift: a lot-by-lot individuals chart judged against the supplier's own history (docs/methods.md §16).
//
// Each lot is judged against limits estimated ONLY from the accepted, in-control lots received before it (since the
// baseline start), so no lot is ever judged against itself:
// - the history is the accepted lots (identity met, not rejected) that raised no signal, the first `maxBaseline` of
//   them (Montgomery recommends 20–25 preliminary samples; we freeze the limits once 20 are in, from memory);
// - fewer than `minBaseline` (5) history lots → the lot is plotted but not judged ("collecting history");
// - σ̂ = MR̄/1.128 over the history lots in received order; limits centre ± 3σ̂ (./control-chart.ts);
// - the Western Electric rules 1–4 are applied to the judged lot and the lots before it in the same segment.
import { individualsLimits, westernElectric, type IndividualsLimits, type RuleHit } from './control-chart';
import { AnalysisError } from './errors';

export interface DriftLotInput {
	value: number;
	/** Identity met and not rejected: may join the history. */
	accepted: boolean;
}

export interface DriftLotResult {
	/** Limits the lot was judged against; null while collecting history. */
	limits: IndividualsLimits | null;
	signal: RuleHit | null;
	/** Every rule the lot completed (the signal is the lowest). */
	rules: RuleHit[];
	inBaseline: boolean;
}

export interface DriftSeries {
	lots: DriftLotResult[];
	/** The limits a next lot would be judged against (null while collecting). */
	current: IndividualsLimits | null;
	state: 'collecting' | 'in-control' | 'signal';
	baselineCount: number;
}

export const DRIFT_DEFAULTS = { minBaseline: 5, maxBaseline: 20 } as const;

export function driftSeries(lots: readonly DriftLotInput[], options: { minBaseline?: number; maxBaseline?: number } = {}): DriftSeries {
	const minBaseline = options.minBaseline ?? DRIFT_DEFAULTS.minBaseline;
	const maxBaseline = options.maxBaseline ?? DRIFT_DEFAULTS.maxBaseline;
	if (!Number.isInteger(minBaseline) || minBaseline < 2) throw new AnalysisError('drift-input', 'the history needs at least 2 lots (a moving range)');
	if (!Number.isInteger(maxBaseline) || maxBaseline < minBaseline) throw new AnalysisError('drift-input', 'maxBaseline must be ≥ minBaseline');
	if (!Array.isArray(lots)) throw new AnalysisError('drift-input', 'lots must be an array');
	lots.forEach((l, i) => {
		if (!l || typeof l.value !== 'number' || !Number.isFinite(l.value)) throw new AnalysisError('drift-input', `lot ${i + 1} has no finite statistic`);
	});
	const baseline: number[] = [];
	const values: number[] = [];
	const out: DriftLotResult[] = [];
	let anySignal = false;
	const limitsNow = () => (baseline.length >= minBaseline ? individualsLimits(baseline) : null);
	for (const lot of lots) {
		const limits = limitsNow();
		values.push(lot.value);
		const rules = limits ? westernElectric(values, limits) : [];
		const signal = rules[0] ?? null;
		if (signal) anySignal = true;
		const inBaseline = !signal && lot.accepted && baseline.length < maxBaseline;
		if (inBaseline) baseline.push(lot.value);
		out.push({ limits, signal, rules, inBaseline });
	}
	const current = limitsNow();
	return { lots: out, current, state: !current ? 'collecting' : anySignal ? 'signal' : 'in-control', baselineCount: baseline.length };
}
