// Shared pieces of the evidence plots: group colours AND shapes (never colour alone), exports, and metadata grouping.
import { toCsv } from '$lib/csv';
import { decadeTicks, formatDecade, isDecade, preferLogAxes } from '$lib/layout/log-axes';

/** Colour-blind-safe palette (Okabe–Ito order), paired with a distinct point shape per group. */
export const PALETTE = ['#0072B2', '#D55E00', '#009E73', '#CC79A7', '#E69F00', '#56B4E9', '#000000', '#8C6D31', '#7F3C8D', '#3969AC'];
export const SHAPES = ['circle', 'triangle', 'rect', 'rectRot', 'crossRot', 'star', 'rectRounded', 'cross', 'line', 'dash'] as const;
export type Shape = (typeof SHAPES)[number];

/** Metadata per id (spectrum or scan), e.g. { class: 'genuine', supplier: 'NORDVIK', instrument: 'NIR-DOCK-1', lot: 'L-17', date: '2025-03-02' }. */
export type PointMeta = Record<string, Record<string, string | null | undefined>>;

export const DEFAULT_COLOR_KEYS = ['class', 'supplier', 'instrument', 'lot', 'date'];

export function colorKeysFor(meta: PointMeta, preferred: string[] = DEFAULT_COLOR_KEYS): string[] {
	const present = new Set<string>();
	for (const m of Object.values(meta)) for (const [k, v] of Object.entries(m)) if (v != null && v !== '') present.add(k);
	return preferred.filter((k) => present.has(k));
}

export interface Group<T> {
	key: string;
	color: string;
	shape: Shape;
	items: T[];
}

/** Splits items by one metadata field; the order is stable (sorted labels, "no <field>" for missing last), every group named. */
export function groupBy<T extends { id: string }>(items: T[], meta: PointMeta, key: string | null | undefined): Group<T>[] {
	const buckets = new Map<string, T[]>();
	const missing = `no ${key}`;
	for (const item of items) {
		const label = key ? String(meta[item.id]?.[key] ?? '') || missing : 'all';
		if (!buckets.has(label)) buckets.set(label, []);
		buckets.get(label)!.push(item);
	}
	const labels = [...buckets.keys()].sort((a, b) => (a === missing ? 1 : b === missing ? -1 : a.localeCompare(b)));
	return labels.map((label, i) => ({ key: label, color: PALETTE[i % PALETTE.length], shape: SHAPES[i % SHAPES.length], items: buckets.get(label)! }));
}

export function downloadUrl(url: string, fileName: string) {
	const a = document.createElement('a');
	a.href = url;
	a.download = fileName;
	document.body.appendChild(a);
	a.click();
	a.remove();
}

/** The plotted data, one row per point or per axis value, through papaparse so quoting is right. */
export function downloadCsv(rows: Record<string, unknown>[], fileName: string) {
	const blob = new Blob([toCsv(rows)], { type: 'text/csv;charset=utf-8' });
	const url = URL.createObjectURL(blob);
	downloadUrl(url, fileName);
	setTimeout(() => URL.revokeObjectURL(url), 1000);
}

export const fileSafe = (s: string) => s.replace(/[^A-Za-z0-9._-]+/g, '-').replace(/^-|-$/g, '') || 'plot';

/** n points of the curve N_h·x + N_q·y = c in the first quadrant (x = h/h0, y = v/v0); geometric spacing on log axes. */
export function boundaryCurve(c: number, nh: number, nq: number, log = false, n = 80): { x: number; y: number }[] {
	if (!(c > 0) || !(nh > 0) || !(nq > 0)) return [];
	const xMax = c / nh;
	const out: { x: number; y: number }[] = [];
	for (let i = 0; i <= n; i++) {
		const x = log ? xMax * Math.pow(10, -4 + (4 * i) / n) : (xMax * i) / n;
		const y = (c - nh * x) / nq;
		if (log && y <= 0) {
			out.push({ x: xMax * 0.9999, y: (c - nh * xMax * 0.9999) / nq });
			break;
		}
		out.push({ x, y: Math.max(y, 0) });
	}
	return out;
}

export const fmt = (v: number | null | undefined, digits = 3) => (v == null || !Number.isFinite(v) ? '—' : Math.abs(v) >= 1000 || (Math.abs(v) < 0.001 && v !== 0) ? v.toExponential(2) : v.toFixed(digits));

interface Selected {
	has(id: string): boolean;
	readonly size: number;
}
type Ctx = { raw?: unknown };
const rawId = (ctx: Ctx) => (ctx.raw as { id?: string } | undefined)?.id ?? '';

/**
 * Scatter datasets, one per group, each with its own colour and shape. Selected ids grow and get a dark ring;
 * while something is selected, the rest fade, so the brushed points stand out in every plot.
 * `front`: ids drawn above everything else (the lot's own scans over a training cloud, however large the selection),
 * never faded. Chart.js draws the lowest `order` last; a group's front points get a dataset of their own that shares
 * its legend entry.
 */
export function scatterDatasets<T extends { id: string; x: number; y: number }>(groups: Group<T>[], selection: Selected, front?: ReadonlySet<string>) {
	const dataset = (g: Group<T>, items: T[], isFront: boolean, shadow: boolean) => ({
		type: 'scatter' as const,
		label: g.key,
		data: items,
		order: isFront ? 0 : 1,
		/** A front half whose group also has points behind: hidden from the legend, toggled with its group. */
		legendShadow: shadow,
		pointStyle: g.shape,
		pointRadius: (ctx: Ctx) => (selection.has(rawId(ctx)) ? 8 : isFront ? 5.5 : 4.5),
		pointHoverRadius: 9,
		pointBorderWidth: (ctx: Ctx) => (selection.has(rawId(ctx)) ? 3 : isFront ? 1.6 : 1.2),
		borderColor: (ctx: Ctx) => (selection.has(rawId(ctx)) ? '#1c2a33' : isFront ? '#1c2a33' : g.color),
		backgroundColor: (ctx: Ctx) => (isFront ? g.color + 'ee' : selection.size && !selection.has(rawId(ctx)) ? g.color + '33' : g.color + 'aa')
	});
	return groups.flatMap((g) => {
		if (!front?.size) return [dataset(g, g.items, false, false)];
		const ahead = g.items.filter((p) => front.has(p.id));
		const behind = g.items.filter((p) => !front.has(p.id));
		if (!ahead.length) return [dataset(g, behind, false, false)];
		if (!behind.length) return [dataset(g, ahead, true, false)];
		return [dataset(g, behind, false, false), dataset(g, ahead, true, true)];
	});
}

/** Legend options for plots with front points: one entry per group, and a click shows or hides the whole group. */
export const groupedLegend = {
	position: 'bottom' as const,
	labels: { filter: (item: { datasetIndex?: number }, data: { datasets: { legendShadow?: boolean }[] }) => !data.datasets[item.datasetIndex ?? -1]?.legendShadow },
	onClick: (_e: unknown, item: { text: string }, legend: { chart: { data: { datasets: { label?: string }[] }; isDatasetVisible(i: number): boolean; setDatasetVisibility(i: number, v: boolean): void; update(): void } }) => {
		const { chart } = legend;
		const indices = chart.data.datasets.map((d, i) => (d.label === item.text ? i : -1)).filter((i) => i >= 0);
		const visible = indices.some((i) => chart.isDatasetVisible(i));
		for (const i of indices) chart.setDatasetVisibility(i, !visible);
		chart.update();
	}
};

/** Does this data call for log axes by default (more than two decades)? */
export const wantsLog = (values: number[]) => preferLogAxes(values);

/**
 * A log axis for Chart.js with ticks at whole decades only, written 0.1, 1, 10, 100 (Chart.js's own log ticks put
 * 2…9 between them and write "100.000" in some locales); Chart.js's autoSkip then drops labels that would overlap.
 * Within a single decade the axis keeps Chart.js's ticks, written with `fmt`.
 */
export function logAxis(title: string) {
	return {
		type: 'logarithmic' as const,
		title: { display: true, text: title },
		afterBuildTicks: (scale: { min: number; max: number; ticks: { value: number }[] }) => {
			if (!(scale.min > 0 && scale.max > scale.min)) return;
			const decades = decadeTicks(scale.min, scale.max).filter((v) => v >= scale.min * (1 - 1e-9) && v <= scale.max * (1 + 1e-9));
			if (decades.length >= 2) scale.ticks = decades.map((value) => ({ value }));
		},
		ticks: {
			autoSkip: true,
			autoSkipPadding: 10,
			maxRotation: 0,
			callback: (value: number | string) => {
				const v = Number(value);
				return isDecade(v) ? formatDecade(v) : fmt(v, 2);
			}
		}
	};
}

/** A boundary or guide drawn as a line without points, excluded from brushing. */
export function guideLine(label: string, data: { x: number; y: number }[], color: string, dash: number[] = []) {
	return { type: 'line' as const, label, data, borderColor: color, borderDash: dash, borderWidth: 2, pointRadius: 0, pointHitRadius: 0, fill: false, tension: 0, parsing: false as const };
}

export function pointTooltip(meta: PointMeta, describe: (raw: { id: string; x: number; y: number }) => string) {
	return {
		callbacks: {
			label: (item: { raw: unknown; dataset: { type?: string; label?: string } }) => {
				const raw = item.raw as { id?: string; x: number; y: number };
				if (!raw?.id) return item.dataset.label ?? '';
				const m = meta[raw.id] ?? {};
				const tags = Object.entries(m)
					.filter(([, v]) => v)
					.map(([k, v]) => `${k}: ${v}`)
					.join(' · ');
				return `${raw.id} — ${describe(raw as { id: string; x: number; y: number })}${tags ? ` (${tags})` : ''}`;
			}
		}
	};
}

/** Decimals an axis needs to name each of its points apart: none for a 2 nm grid, one for 0.5 nm, at most 4. */
export function axisDecimals(axis: ArrayLike<number>): number {
	let step = Infinity;
	for (let i = 1; i < axis.length; i++) {
		const d = Math.abs(axis[i] - axis[i - 1]);
		if (d > 0 && d < step) step = d;
	}
	if (!Number.isFinite(step)) return 0;
	for (let k = 0; k <= 4; k++) if (step * 10 ** k >= 0.999) return k;
	return 4;
}

/** An axis position in the axis's own precision ("1758", never "1.76e+3"). */
export const fmtAxis = (x: number, decimals: number) => (Number.isFinite(x) ? x.toFixed(decimals) : '—');
