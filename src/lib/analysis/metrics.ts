import { AnalysisError } from './errors';
import { betaInv } from './quantiles';
import { screen, prepareArtefact, type ScreenResult } from './screen';
import type { ModelArtefact } from './artefact';
import type { SpectrumInput } from './build';

export interface Interval {
	estimate: number;
	lower: number;
	upper: number;
}

/**
 * Clopper–Pearson exact interval for x successes in n trials:
 * [B_{α/2}(x, n−x+1), B_{1−α/2}(x+1, n−x)], with 0 and 1 at the ends. Beta quantiles from jstat.
 */
export function clopperPearson(x: number, n: number, level = 0.95): Interval {
	if (!(Number.isInteger(x) && Number.isInteger(n) && n >= 0 && x >= 0 && x <= n)) throw new AnalysisError('bad-argument', `need 0 ≤ x ≤ n integers, got x = ${x}, n = ${n}`);
	if (n === 0) return { estimate: Number.NaN, lower: 0, upper: 1 };
	const a = 1 - level;
	return {
		estimate: x / n,
		lower: x === 0 ? 0 : betaInv(a / 2, x, n - x + 1),
		upper: x === n ? 1 : betaInv(1 - a / 2, x + 1, n - x)
	};
}

/** Matthews correlation coefficient; 0 when a margin is empty (common practice). */
export function mcc(tp: number, tn: number, fp: number, fn: number): number {
	const d = Math.sqrt((tp + fp) * (tp + fn) * (tn + fp) * (tn + fn));
	return d === 0 ? 0 : (tp * tn - fp * fn) / d;
}

export interface ClassPerformance {
	className: string;
	tp: number;
	fn: number;
	tn: number;
	fp: number;
	sensitivity: Interval;
	specificity: Interval;
	/** Specificity against each alien group (another class, or "alien" for objects of no class). */
	specificityBy: Record<string, Interval>;
	efficiency: number;
	mcc: number;
}

/**
 * Verdict-level performance of one class: what the user sees. An object is "called" class q when its verdict names
 * q (`genuine` for the genuine class, `suspect:<q>` for a suspect profile). A genuine object whose verdict is
 * `suspect` is therefore not a true positive for genuine, although the genuine class model may have accepted it.
 */
export interface VerdictPerformance {
	className: string;
	tp: number;
	fn: number;
	tn: number;
	fp: number;
	sensitivity: Interval;
	specificity: Interval;
}

export interface ValidationReport {
	classes: string[];
	/** Column labels: the K classes, then "several", then "none". */
	columns: string[];
	/** K×(K+2): row = expected class, column = the single accepting class model, several, or none. */
	confusion: number[][];
	/** Same columns for test objects of no class (aliens). */
	alienRow: number[];
	/** Class-model level: a class model accepts (with the family model), whatever the final verdict. */
	perClass: ClassPerformance[];
	/** Verdict level: the class the verdict names (see VerdictPerformance). */
	verdictLevel: VerdictPerformance[];
	/** Verdict counts, for the report. */
	verdicts: Record<string, number>;
	results: (ScreenResult & { expected: string | null })[];
}

/**
 * Screens a labelled test/challenge set. A class model "accepts" an object when the family model
 * and that class model both accept it (an unusable spectrum is accepted by none).
 */
export function evaluate(artefact: ModelArtefact, tests: (SpectrumInput & { expected: string | null })[]): ValidationReport {
	const prep = prepareArtefact(artefact);
	const K = artefact.classes;
	const col = (name: string) => K.indexOf(name);
	const confusion = K.map(() => new Array<number>(K.length + 2).fill(0));
	const alienRow = new Array<number>(K.length + 2).fill(0);
	const verdicts: Record<string, number> = {};
	const results: ValidationReport['results'] = [];
	const acceptSets: string[][] = [];
	// an expected label path ("diluted/starch") is scored at level 1 here; tree-validation.ts scores the deeper levels
	const topOf = (e: string | null) => (e === null ? null : e.split('/')[0]);
	tests = tests.map((t) => ({ ...t, levelOne: t.expected, expected: topOf(t.expected) }));
	for (const t of tests) {
		const r = screen(prep, t);
		const expected = t.expected !== null && K.includes(t.expected) ? t.expected : null;
		results.push({ ...r, expected: (t as { levelOne?: string | null }).levelOne ?? t.expected });
		const key = r.verdict === 'suspect' ? `suspect:${r.profile}` : r.verdict;
		verdicts[key] = (verdicts[key] ?? 0) + 1;
		const acc = r.family?.accepted ? K.filter((c) => r.classes[c]?.accepted) : [];
		acceptSets.push(acc);
		const c = acc.length === 0 ? K.length + 1 : acc.length > 1 ? K.length : col(acc[0]);
		(expected === null ? alienRow : confusion[col(expected)])[c]++;
	}
	const perClass = K.map((cls): ClassPerformance => {
		let tp = 0;
		let fn = 0;
		let tn = 0;
		let fp = 0;
		const by: Record<string, [number, number]> = {};
		tests.forEach((t, i) => {
			const accepted = acceptSets[i].includes(cls);
			const exp = t.expected !== null && K.includes(t.expected) ? t.expected : 'alien';
			if (exp === cls) accepted ? tp++ : fn++;
			else {
				accepted ? fp++ : tn++;
				by[exp] ??= [0, 0];
				by[exp][0] += accepted ? 0 : 1;
				by[exp][1]++;
			}
		});
		const sens = clopperPearson(tp, tp + fn);
		const spec = clopperPearson(tn, tn + fp);
		const specificityBy: Record<string, Interval> = {};
		for (const k of Object.keys(by).sort()) specificityBy[k] = clopperPearson(by[k][0], by[k][1]);
		return {
			className: cls,
			tp,
			fn,
			tn,
			fp,
			sensitivity: sens,
			specificity: spec,
			specificityBy,
			efficiency: Math.sqrt(sens.estimate * spec.estimate),
			mcc: mcc(tp, tn, fp, fn)
		};
	});
	const called = (r: ScreenResult): string | null => (r.verdict === 'genuine' ? artefact.genuine : r.verdict === 'suspect' ? r.profile : null);
	const verdictLevel = K.map((cls): VerdictPerformance => {
		let tp = 0;
		let fn = 0;
		let tn = 0;
		let fp = 0;
		results.forEach((r) => {
			const exp = topOf(r.expected) !== null && K.includes(topOf(r.expected)!) ? topOf(r.expected) : null;
			const hit = called(r) === cls;
			if (exp === cls) hit ? tp++ : fn++;
			else hit ? fp++ : tn++;
		});
		return { className: cls, tp, fn, tn, fp, sensitivity: clopperPearson(tp, tp + fn), specificity: clopperPearson(tn, tn + fp) };
	});
	return { classes: [...K], columns: [...K, 'several', 'none'], confusion, alienRow, perClass, verdictLevel, verdicts, results };
}
