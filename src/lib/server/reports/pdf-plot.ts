// A printed scatter plot for the reports (pdfkit): linear or log axes (log when the data span more than two decades,
// ticks at whole decades written 0.1, 1, 10, 100 and thinned so no two labels overlap), series told apart by shape as
// well as colour, guide lines, and a legend naming every series and line. Points beyond the axes are counted in a note.
import { decadeTicks, formatDecade, keepApart, preferLogAxes } from '../../layout/log-axes';
import { printable } from './pdf-fonts';

type Doc = PDFKit.PDFDocument;
export type Shape = 'dot' | 'circle' | 'triangle' | 'diamond' | 'square';

export interface Series {
	label: string;
	points: { x: number; y: number }[];
	shape: Shape;
	color: string;
}
export interface Guide {
	label: string;
	points: { x: number; y: number }[];
	color: string;
	dash?: boolean;
}
export interface ScatterSpec {
	xLabel: string;
	yLabel: string;
	/** Drawn in order: the last series lies on top. */
	series: Series[];
	guides: Guide[];
	/** Values that must stay inside the axes (e.g. the limits), besides the points. */
	include?: { x?: number[]; y?: number[] };
	/** Largest axis end, as a multiple of the largest `include` value (linear axes only); points beyond are counted, not drawn. */
	linearCap?: number;
}

const MUTED = '#5b6770';
const LINE = '#c9d1d6';
const FLOOR = 1e-4;

function niceStep(span: number, target = 5) {
	const raw = span / target;
	const mag = 10 ** Math.floor(Math.log10(raw));
	const f = raw / mag;
	return (f < 1.5 ? 1 : f < 3.5 ? 2 : f < 7.5 ? 5 : 10) * mag;
}
const fmtLinear = (v: number, step: number) => v.toFixed(Math.max(0, -Math.floor(Math.log10(step) + 1e-9)));

export function mark(doc: Doc, shape: Shape, x: number, y: number, color: string, r = 2.4) {
	doc.save().lineWidth(0.8).fillColor(color).strokeColor(color);
	if (shape === 'dot') doc.circle(x, y, r * 0.6).fill();
	else if (shape === 'circle') doc.circle(x, y, r).stroke();
	else if (shape === 'triangle') doc.polygon([x, y - r], [x + r, y + r * 0.85], [x - r, y + r * 0.85]).fill();
	else if (shape === 'diamond') doc.polygon([x, y - r], [x + r, y], [x, y + r], [x - r, y]).fill();
	else doc.rect(x - r * 0.85, y - r * 0.85, r * 1.7, r * 1.7).fill();
	doc.restore();
}

/** Draws the plot with its top-left corner at (x, y); returns the height used (plot, axes, legend and note). */
export function scatterPlot(doc: Doc, spec: ScatterSpec, at: { x: number; y: number; width: number; height: number }): number {
	const box = { x: at.x + 40, y: at.y + 4, w: at.width - 48, h: at.height };
	const xs = [...spec.series.flatMap((s) => s.points.map((p) => p.x)), ...(spec.include?.x ?? [])];
	const ys = [...spec.series.flatMap((s) => s.points.map((p) => p.y)), ...(spec.include?.y ?? [])];
	const log = preferLogAxes(xs) || preferLogAxes(ys);

	type Axis = { lo: number; hi: number; ticks: number[]; label: (v: number) => string; to: (v: number) => number };
	const axis = (values: number[], include: number[] = [], size: number, flip: boolean): Axis => {
		const pos = (t: number) => (flip ? box.y + box.h - t * size : box.x + t * size);
		if (log) {
			const positive = values.filter((v) => Number.isFinite(v) && v > 0);
			const lo = Math.max(FLOOR, Math.min(...positive, ...include.filter((v) => v > 0)));
			const hi = Math.max(...positive, ...include, lo * 10);
			const ticks = decadeTicks(lo, hi);
			const a = Math.log10(ticks[0]);
			const b = Math.log10(ticks[ticks.length - 1]);
			return { lo: ticks[0], hi: ticks[ticks.length - 1], ticks, label: formatDecade, to: (v) => pos((Math.log10(Math.max(v, ticks[0])) - a) / (b - a)) };
		}
		const cap = spec.linearCap ? Math.max(...include, 0) * spec.linearCap : Infinity;
		const top = Math.max(...values.filter((v) => Number.isFinite(v) && v <= cap), ...include, 1e-9) * 1.05;
		const step = niceStep(top);
		const hi = Math.ceil(top / step) * step;
		const ticks = Array.from({ length: Math.round(hi / step) + 1 }, (_, i) => i * step);
		return { lo: 0, hi, ticks, label: (v) => fmtLinear(v, step), to: (v) => pos(Math.max(0, v) / hi) };
	};
	const ax = axis(xs, spec.include?.x, box.w, false);
	const ay = axis(ys, spec.include?.y, box.h, true);
	const inside = (p: { x: number; y: number }) => p.x <= ax.hi && p.y <= ay.hi;

	doc.save();
	doc.rect(box.x, box.y, box.w, box.h).lineWidth(0.6).strokeColor(LINE).stroke();
	doc.rect(box.x, box.y, box.w, box.h).clip();
	for (const g of spec.guides) {
		const pts = g.points.filter((p) => Number.isFinite(p.x) && Number.isFinite(p.y) && (!log || (p.x > 0 && p.y > 0)));
		if (pts.length < 2) continue;
		doc.moveTo(ax.to(pts[0].x), ay.to(pts[0].y));
		for (const p of pts.slice(1)) doc.lineTo(ax.to(p.x), ay.to(p.y));
		doc.lineWidth(0.9).strokeColor(g.color);
		if (g.dash) doc.dash(3, { space: 2 });
		doc.stroke().undash();
	}
	doc.restore();
	let beyond = 0;
	for (const s of spec.series)
		for (const p of s.points) {
			if (!inside(p)) {
				beyond++;
				continue;
			}
			mark(doc, s.shape, ax.to(p.x), ay.to(p.y), s.color);
		}

	// Tick labels, thinned so that none overlap.
	doc.font('body').fontSize(7).fillColor(MUTED);
	const xl = ax.ticks.map(ax.label);
	const keepX = keepApart(
		ax.ticks.map((t) => ax.to(t)),
		xl.map((l) => doc.widthOfString(l)),
		4
	);
	ax.ticks.forEach((t, i) => {
		doc.save().moveTo(ax.to(t), box.y + box.h).lineTo(ax.to(t), box.y + box.h + 2).lineWidth(0.5).strokeColor(MUTED).stroke().restore();
		if (keepX[i]) doc.text(xl[i], ax.to(t) - 20, box.y + box.h + 3, { width: 40, align: 'center', lineBreak: false });
	});
	const yl = ay.ticks.map(ay.label);
	const lh = doc.currentLineHeight();
	const keepY = keepApart(
		ay.ticks.map((t) => -ay.to(t)),
		yl.map(() => lh),
		1
	);
	ay.ticks.forEach((t, i) => {
		doc.save().moveTo(box.x - 2, ay.to(t)).lineTo(box.x, ay.to(t)).lineWidth(0.5).strokeColor(MUTED).stroke().restore();
		if (keepY[i]) doc.text(yl[i], box.x - 38, ay.to(t) - lh / 2, { width: 34, align: 'right', lineBreak: false });
	});
	doc.text(printable(`${spec.xLabel}${log ? ' (log)' : ''}`), box.x, box.y + box.h + 13, { width: box.w, align: 'center', lineBreak: false });
	doc.save().rotate(-90, { origin: [at.x + 4, box.y + box.h / 2] });
	doc.text(printable(`${spec.yLabel}${log ? ' (log)' : ''}`), at.x + 4 - box.h / 2, box.y + box.h / 2 - 4, { width: box.h, align: 'center', lineBreak: false });
	doc.restore();

	// Legend: every series and every line, by name.
	let y = box.y + box.h + 26;
	let x = box.x;
	const entry = (w: number) => {
		if (x + w > box.x + box.w) {
			x = box.x;
			y += 11;
		}
	};
	doc.font('body').fontSize(7.5).fillColor('#1c2a33');
	for (const s of spec.series) {
		const text = printable(`${s.label} (${s.points.length})`);
		const w = 10 + doc.widthOfString(text) + 12;
		entry(w);
		mark(doc, s.shape, x + 3, y + 4, s.color);
		doc.fillColor('#1c2a33').text(text, x + 9, y, { lineBreak: false });
		x += w;
	}
	for (const g of spec.guides) {
		const text = printable(g.label);
		const w = 18 + doc.widthOfString(text) + 12;
		entry(w);
		doc.save().moveTo(x, y + 4).lineTo(x + 14, y + 4).lineWidth(0.9).strokeColor(g.color);
		if (g.dash) doc.dash(3, { space: 2 });
		doc.stroke().undash().restore();
		doc.fillColor('#1c2a33').text(text, x + 17, y, { lineBreak: false });
		x += w;
	}
	y += 12;
	if (beyond) {
		doc.fillColor(MUTED).text(printable(`${beyond} point${beyond === 1 ? '' : 's'} beyond the axes (not drawn).`), box.x, y, { width: box.w });
		y += 11;
	}
	return y - at.y;
}
