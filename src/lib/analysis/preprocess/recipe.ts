import { AnalysisError } from '../errors';
import { snv } from './snv';
import { msc, mscReference } from './msc';
import { detrend, detrendBasis } from './detrend';
import { savgol, savgolPlan, checkSavgol, type SavgolPlan } from './savgol';
import type { ScalingMode } from './scaling';

export type RecipeStep =
	| { op: 'range'; from: number; to: number }
	| { op: 'gaps'; maxGap: number }
	| { op: 'snv' }
	| { op: 'msc' }
	| { op: 'savgol'; window: number; polyorder: number; deriv: number }
	| { op: 'detrend'; order: number }
	| { op: 'center' }
	| { op: 'autoscale' };

export type RowStep = Extract<RecipeStep, { op: 'snv' | 'msc' | 'savgol' | 'detrend' }>;

/** What fitting a row step on the training set produced (only MSC needs anything). */
export interface FittedRowStep {
	op: RowStep['op'];
	reference?: number[];
}

const ARITY: Record<RecipeStep['op'], [number, number]> = {
	range: [2, 2],
	gaps: [1, 1],
	snv: [0, 0],
	msc: [0, 0],
	savgol: [1, 3],
	detrend: [0, 1],
	center: [0, 0],
	autoscale: [0, 0]
};

function isOp(name: string): name is RecipeStep['op'] {
	return Object.prototype.hasOwnProperty.call(ARITY, name);
}

/**
 * Parses our recipe syntax: steps separated by commas, e.g. "gaps(3),snv,savgol(11,2,1),center".
 * Axis steps (range, gaps) come first, then row steps in order, then at most one column step last.
 * Several `range` windows may be given (e.g. "range(1100,1880),range(2050,2450),snv,savgol(11,2,1),center"): the
 * model axis keeps the points inside any window, in axis order; windows may not overlap. Every row step then sees
 * only those points; Savitzky–Golay is computed within each window and never across the gap between two windows
 * (docs/methods.md §3).
 * "none" (or an empty text) is the empty recipe: no preprocessing, uncentred PCA.
 */
export function parseRecipe(text: string): RecipeStep[] {
	const src = (text ?? '').trim();
	if (src === '' || src.toLowerCase() === 'none') return [];
	const tokens: string[] = [];
	let depth = 0;
	let cur = '';
	for (const ch of src) {
		if (ch === '(') depth++;
		if (ch === ')') depth--;
		if (depth < 0) throw new AnalysisError('bad-recipe', `recipe "${src}": unbalanced ")"`);
		if (ch === ',' && depth === 0) {
			tokens.push(cur);
			cur = '';
		} else cur += ch;
	}
	if (depth !== 0) throw new AnalysisError('bad-recipe', `recipe "${src}": unbalanced "("`);
	tokens.push(cur);
	const steps: RecipeStep[] = [];
	for (const raw of tokens) {
		const tok = raw.trim();
		const m = /^([a-zA-Z]+)\s*(?:\(([^()]*)\))?$/.exec(tok);
		if (!m) throw new AnalysisError('bad-recipe', `recipe "${src}": cannot read step "${tok}"`);
		const name = m[1].toLowerCase();
		if (!isOp(name)) throw new AnalysisError('bad-recipe', `recipe "${src}": unknown step "${m[1]}" (known: ${Object.keys(ARITY).join(', ')})`);
		const args = m[2] === undefined || m[2].trim() === '' ? [] : m[2].split(',').map((a) => Number(a.trim()));
		const [lo, hi] = ARITY[name];
		if (args.length < lo || args.length > hi)
			throw new AnalysisError('bad-recipe', `recipe "${src}": ${name} takes ${lo === hi ? lo : `${lo} to ${hi}`} argument${hi === 1 ? '' : 's'}, got ${args.length}`);
		if (args.some((a) => !Number.isFinite(a))) throw new AnalysisError('bad-recipe', `recipe "${src}": ${name} has a non-numeric argument`);
		steps.push(makeStep(name, args));
	}
	validateRecipe(steps);
	return steps;
}

function makeStep(name: RecipeStep['op'], a: number[]): RecipeStep {
	switch (name) {
		case 'range':
			return { op: 'range', from: Math.min(a[0], a[1]), to: Math.max(a[0], a[1]) };
		case 'gaps':
			if (!Number.isInteger(a[0]) || a[0] < 1) throw new AnalysisError('bad-recipe', `gaps(n) needs a positive integer, got ${a[0]}`);
			return { op: 'gaps', maxGap: a[0] };
		case 'savgol': {
			const s = { op: 'savgol' as const, window: a[0], polyorder: a[1] ?? 2, deriv: a[2] ?? 0 };
			checkSavgol(s);
			return s;
		}
		case 'detrend': {
			const order = a[0] ?? 2;
			if (!Number.isInteger(order) || order < 0) throw new AnalysisError('bad-recipe', `detrend order must be a non-negative integer, got ${order}`);
			return { op: 'detrend', order };
		}
		default:
			return { op: name } as RecipeStep;
	}
}

const KIND = (s: RecipeStep): 0 | 1 | 2 => (s.op === 'range' || s.op === 'gaps' ? 0 : s.op === 'center' || s.op === 'autoscale' ? 2 : 1);

export function validateRecipe(steps: RecipeStep[]): void {
	let last = 0;
	let columns = 0;
	const seen = new Set<string>();
	for (const s of steps) {
		const k = KIND(s);
		if (k < last) throw new AnalysisError('bad-recipe', `recipe step "${formatStep(s)}" is out of order: axis steps (range, gaps) first, then row steps, then one column step (center or autoscale) last`);
		if (k === 0 && s.op !== 'range' && seen.has(s.op)) throw new AnalysisError('bad-recipe', `recipe has "${s.op}" twice`);
		if (k === 2 && ++columns > 1) throw new AnalysisError('bad-recipe', 'recipe has more than one column step (center, autoscale)');
		seen.add(s.op);
		last = k;
	}
	const windows = rangesOf(steps);
	for (let i = 1; i < windows.length; i++) {
		const a = windows[i - 1];
		const b = windows[i];
		if (b.from <= a.to) throw new AnalysisError('bad-recipe', `recipe windows range(${a.from},${a.to}) and range(${b.from},${b.to}) overlap: give windows that do not touch`);
	}
}

function formatStep(s: RecipeStep): string {
	switch (s.op) {
		case 'range':
			return `range(${s.from},${s.to})`;
		case 'gaps':
			return `gaps(${s.maxGap})`;
		case 'savgol':
			return `savgol(${s.window},${s.polyorder},${s.deriv})`;
		case 'detrend':
			return `detrend(${s.order})`;
		default:
			return s.op;
	}
}

/** Canonical text of a recipe; parseRecipe(formatRecipe(s)) equals s. */
export function formatRecipe(steps: RecipeStep[]): string {
	return steps.length === 0 ? 'none' : steps.map(formatStep).join(',');
}

export function rowSteps(steps: RecipeStep[]): RowStep[] {
	return steps.filter((s): s is RowStep => KIND(s) === 1);
}

export function scalingMode(steps: RecipeStep[]): ScalingMode {
	const c = steps.find((s) => KIND(s) === 2);
	return c ? (c.op as ScalingMode) : 'none';
}

export function maxGapOf(steps: RecipeStep[]): number {
	const g = steps.find((s) => s.op === 'gaps');
	return g && g.op === 'gaps' ? g.maxGap : 0;
}

export interface Window {
	from: number;
	to: number;
}

/** The recipe's range windows, ordered by their start (empty: the whole axis). */
export function rangesOf(steps: RecipeStep[]): Window[] {
	return steps.flatMap((s) => (s.op === 'range' ? [{ from: s.from, to: s.to }] : [])).sort((a, b) => a.from - b.from);
}

/**
 * The contiguous runs [start, end) of axis points that lie in the same window, in axis order. With no window or one
 * window the whole axis is one run. A point outside every window (never on a model axis built from these windows)
 * starts its own run, so a step never reaches across it either.
 */
export function segmentsOf(windows: Window[], x: ArrayLike<number>): [number, number][] {
	const n = x.length;
	if (windows.length <= 1 || n === 0) return [[0, n]];
	const tol = (w: Window) => 1e-9 * Math.max(1, Math.abs(w.to - w.from));
	const which = (v: number) => windows.findIndex((w) => v >= w.from - tol(w) && v <= w.to + tol(w));
	const out: [number, number][] = [];
	let start = 0;
	let current = which(x[0]);
	for (let i = 1; i < n; i++) {
		const w = which(x[i]);
		if (w !== current || w === -1) {
			out.push([start, i]);
			start = i;
			current = w;
		}
	}
	out.push([start, n]);
	return out;
}

/** Row steps ready to run on one spectrum: everything that depends only on the axis is precomputed. */
export interface RowPipeline {
	apply(x: Float64Array): Float64Array;
}

type Stage = (x: Float64Array) => Float64Array;

function stageFor(step: RowStep, fitted: FittedRowStep | undefined, axis: ArrayLike<number>, segments: [number, number][] = [[0, axis.length]]): Stage {
	switch (step.op) {
		case 'snv':
			return snv;
		case 'msc': {
			const ref = fitted?.reference;
			if (!ref || ref.length !== axis.length) throw new AnalysisError('bad-artefact', 'MSC step has no reference spectrum of the model axis length');
			const r = Float64Array.from(ref);
			return (x) => msc(x, r);
		}
		case 'detrend': {
			const basis = detrendBasis(axis, step.order);
			return (x) => detrend(x, basis);
		}
		case 'savgol': {
			if (segments.length <= 1) {
				const plan: SavgolPlan = savgolPlan(step, axis);
				return (x) => savgol(x, plan);
			}
			// one plan per window: the filter never spans the gap between two windows
			const plans = segments.map(([a, b]) => {
				const xs = Array.prototype.slice.call(axis, a, b) as number[];
				if (xs.length < step.window)
					throw new AnalysisError('bad-recipe', `savgol window ${step.window} is longer than the ${xs.length}-point window ${xs[0]}–${xs[xs.length - 1]} of the model axis (savgol never spans the gap between windows)`);
				return savgolPlan(step, xs);
			});
			return (x) => {
				const out = new Float64Array(x.length);
				segments.forEach(([a, b], k) => out.set(savgol(x.subarray(a, b), plans[k]), a));
				return out;
			};
		}
	}
}

export function rowPipeline(steps: RowStep[], fitted: FittedRowStep[], axis: ArrayLike<number>, windows: Window[] = []): RowPipeline {
	const segments = segmentsOf(windows, axis);
	const stages = steps.map((s, i) => stageFor(s, fitted[i], axis, segments));
	return {
		apply(x) {
			let y = x;
			for (const f of stages) y = f(y);
			return y;
		}
	};
}

/** Fits the row steps on the training rows in order (MSC takes the mean at its position) and applies them. */
export function fitRowSteps(
	steps: RowStep[],
	rows: Float64Array[],
	axis: ArrayLike<number>,
	ids?: string[],
	windows: Window[] = []
): { fitted: FittedRowStep[]; rows: Float64Array[] } {
	const fitted: FittedRowStep[] = [];
	const segments = segmentsOf(windows, axis);
	let cur = rows;
	for (const step of steps) {
		const f: FittedRowStep = { op: step.op };
		if (step.op === 'msc') f.reference = Array.from(mscReference(cur));
		const stage = stageFor(step, f, axis, segments);
		cur = cur.map((r, i) => {
			try {
				return stage(r);
			} catch (e) {
				if (e instanceof AnalysisError && ids) throw new AnalysisError(e.code, `training spectrum "${ids[i]}": ${e.message}`);
				throw e;
			}
		});
		fitted.push(f);
	}
	return { fitted, rows: cur };
}
