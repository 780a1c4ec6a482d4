// Point labels laid out without overlap, for plots printed where nothing can be hovered (the certificate's distance
// plot). Pure and deterministic: the same points give the same layout, so a certificate stays a function of its content.
//
// Greedy placement on rings: each label first tries the eight places touching its own point (no leader line); when all
// of them collide, it tries rings further out in 48 directions and is joined to its point by a leader line. A place
// is taken only when the label stays inside the bounds, overlaps no label placed before it, covers no labelled point's
// marker, and its leader crosses no placed label (and no placed leader crosses it). The most crowded points are placed
// first, so they get the near places. A label that finds no place is returned in `unplaced`, never drawn on top of another:
// the caller lists it in words.
//
// Coordinates are page units with y growing downwards (PDF and canvas alike); a label's x, y is its top-left corner.

export interface LabelRequest {
	id: string;
	/** The point the label names. */
	x: number;
	y: number;
	width: number;
	height: number;
}

export interface Bounds {
	left: number;
	top: number;
	right: number;
	bottom: number;
}

export interface LayoutOptions {
	/** Radius of a point's marker: no label may cover any labelled point within it (default 4). */
	markerRadius?: number;
	/** Free space between a label and any other label or marker (default 1.5). */
	gap?: number;
	/** Unlabelled points a label should rather not cover (e.g. a training cloud): preferred against, never forbidden. */
	avoid?: { x: number; y: number }[];
	/** Distance between rings tried for leader-line labels (default: the tallest label's height). */
	ringStep?: number;
}

export interface PlacedLabel {
	id: string;
	x: number;
	y: number;
	width: number;
	height: number;
	anchorX: number;
	anchorY: number;
	/** Present when the label sits away from its point: the segment from the marker's edge to the label's nearest edge. */
	leader: { x1: number; y1: number; x2: number; y2: number } | null;
}

export interface LabelLayout {
	placed: PlacedLabel[];
	/** Ids that found no free place inside the bounds (in input order). */
	unplaced: string[];
}

interface Rect {
	x: number;
	y: number;
	width: number;
	height: number;
}

const finite = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);

function check(requests: LabelRequest[], bounds: Bounds, options: LayoutOptions) {
	if (!Array.isArray(requests)) throw new TypeError('label layout: requests must be an array');
	if (![bounds?.left, bounds?.top, bounds?.right, bounds?.bottom].every(finite)) throw new TypeError('label layout: bounds must be four finite numbers');
	if (!(bounds.right > bounds.left && bounds.bottom > bounds.top)) throw new RangeError('label layout: bounds must have right > left and bottom > top');
	const ids = new Set<string>();
	requests.forEach((r, i) => {
		if (typeof r?.id !== 'string' || r.id === '') throw new TypeError(`label layout: request ${i} has no id`);
		if (ids.has(r.id)) throw new RangeError(`label layout: id "${r.id}" appears twice`);
		ids.add(r.id);
		if (![r.x, r.y].every(finite)) throw new TypeError(`label layout: point "${r.id}" is not finite`);
		if (!finite(r.width) || !finite(r.height) || r.width <= 0 || r.height <= 0) throw new RangeError(`label layout: label "${r.id}" needs a positive width and height`);
	});
	for (const [name, v] of [
		['markerRadius', options.markerRadius],
		['gap', options.gap],
		['ringStep', options.ringStep]
	] as const)
		if (v !== undefined && (!finite(v) || v < 0 || (name === 'ringStep' && v === 0))) throw new RangeError(`label layout: ${name} must be a ${name === 'ringStep' ? 'positive' : 'non-negative'} number`);
	for (const p of options.avoid ?? []) if (!finite(p?.x) || !finite(p?.y)) throw new TypeError('label layout: every point to avoid needs finite x and y');
}

/** Rectangles overlap (touching edges do not count), each grown by `pad` on every side. */
export function rectsOverlap(a: Rect, b: Rect, pad = 0): boolean {
	return a.x - pad < b.x + b.width && b.x - pad < a.x + a.width && a.y - pad < b.y + b.height && b.y - pad < a.y + a.height;
}

/** The circle (cx, cy, r) reaches into the rectangle. */
export function circleHitsRect(cx: number, cy: number, r: number, rect: Rect): boolean {
	const nx = Math.max(rect.x, Math.min(cx, rect.x + rect.width));
	const ny = Math.max(rect.y, Math.min(cy, rect.y + rect.height));
	return (cx - nx) ** 2 + (cy - ny) ** 2 < r * r;
}

/** The segment crosses the rectangle's inside (Liang–Barsky clipping). */
export function segmentHitsRect(x1: number, y1: number, x2: number, y2: number, rect: Rect): boolean {
	const dx = x2 - x1;
	const dy = y2 - y1;
	let t0 = 0;
	let t1 = 1;
	const sides: [number, number][] = [
		[-dx, x1 - rect.x],
		[dx, rect.x + rect.width - x1],
		[-dy, y1 - rect.y],
		[dy, rect.y + rect.height - y1]
	];
	for (const [p, q] of sides) {
		if (p === 0) {
			if (q <= 0) return false;
			continue;
		}
		const t = q / p;
		if (p < 0) t0 = Math.max(t0, t);
		else t1 = Math.min(t1, t);
		if (t0 >= t1) return false;
	}
	return t1 - t0 > 1e-9;
}

/** Leader from the edge of the marker to the nearest point of the label box. */
function leaderFor(ax: number, ay: number, rect: Rect, markerRadius: number) {
	const nx = Math.max(rect.x, Math.min(ax, rect.x + rect.width));
	const ny = Math.max(rect.y, Math.min(ay, rect.y + rect.height));
	const len = Math.hypot(nx - ax, ny - ay);
	const k = len > 0 ? Math.min(markerRadius, len) / len : 0;
	return { x1: ax + (nx - ax) * k, y1: ay + (ny - ay) * k, x2: nx, y2: ny };
}

// Directions tried on the outer rings: fine enough to thread a leader between the labels that already ring a cluster.
const DIRECTIONS = 48;

// Eight places touching the point, right first (the way a reader expects a label), then above, left, below.
const NEAR: [number, number][] = [
	[1, 0],
	[1, -1],
	[0, -1],
	[-1, -1],
	[-1, 0],
	[-1, 1],
	[0, 1],
	[1, 1]
];

export function layoutLabels(requests: LabelRequest[], bounds: Bounds, options: LayoutOptions = {}): LabelLayout {
	check(requests, bounds, options);
	const markerRadius = options.markerRadius ?? 4;
	const gap = options.gap ?? 1.5;
	const avoid = options.avoid ?? [];
	const ringStep = options.ringStep ?? Math.max(...requests.map((r) => r.height), 1);
	const maxReach = Math.hypot(bounds.right - bounds.left, bounds.bottom - bounds.top);

	// Crowded points first: count the other labelled points within two label heights.
	const crowd = requests.map((r) => requests.filter((o) => o !== r && Math.hypot(o.x - r.x, o.y - r.y) < 2 * ringStep + 2 * markerRadius).length);
	const order = requests.map((_, i) => i).sort((a, b) => crowd[b] - crowd[a] || requests[a].x - requests[b].x || requests[a].y - requests[b].y || a - b);

	const placed: PlacedLabel[] = [];
	const placedById = new Map<string, PlacedLabel>();
	const inside = (r: Rect) => r.x >= bounds.left && r.y >= bounds.top && r.x + r.width <= bounds.right && r.y + r.height <= bounds.bottom;

	const legal = (rect: Rect, leader: PlacedLabel['leader']) => {
		if (!inside(rect)) return false;
		for (const p of placed) {
			if (rectsOverlap(rect, p, gap)) return false;
			if (p.leader && segmentHitsRect(p.leader.x1, p.leader.y1, p.leader.x2, p.leader.y2, rect)) return false;
			if (leader && segmentHitsRect(leader.x1, leader.y1, leader.x2, leader.y2, p)) return false;
		}
		for (const q of requests) if (circleHitsRect(q.x, q.y, markerRadius + gap, rect)) return false;
		return true;
	};
	const covered = (rect: Rect) => avoid.reduce((n, p) => n + (circleHitsRect(p.x, p.y, 1.5, rect) ? 1 : 0), 0);

	for (const i of order) {
		const r = requests[i];
		let best: { rect: Rect; leader: PlacedLabel['leader']; cost: number } | null = null;
		// Ring 0: touching the marker. Rings 1, 2, …: further out, joined by a leader line.
		for (let ring = 0; !best; ring++) {
			const reach = markerRadius + gap + ring * ringStep;
			if (reach > maxReach) break;
			const directions: [number, number][] =
				ring === 0
					? NEAR
					: Array.from({ length: DIRECTIONS }, (_, k) => {
							const a = (2 * k * Math.PI) / DIRECTIONS;
							return [Math.round(Math.cos(a) * 1e9) / 1e9, Math.round(-Math.sin(a) * 1e9) / 1e9] as [number, number];
						});
			for (const [dx, dy] of directions) {
				// The label's near edge sits `reach` away from the point along the direction.
				const cx = r.x + dx * (reach + r.width / 2);
				const cy = r.y + dy * (reach + r.height / 2);
				const rect = { x: cx - r.width / 2, y: cy - r.height / 2, width: r.width, height: r.height };
				const leader = ring === 0 ? null : leaderFor(r.x, r.y, rect, markerRadius);
				if (!legal(rect, leader)) continue;
				const cost = covered(rect);
				if (!best || cost < best.cost) best = { rect, leader, cost };
				if (cost === 0) break;
			}
		}
		if (!best) continue;
		const label: PlacedLabel = { id: r.id, ...best.rect, anchorX: r.x, anchorY: r.y, leader: best.leader };
		placed.push(label);
		placedById.set(r.id, label);
	}
	return {
		placed: requests.filter((r) => placedById.has(r.id)).map((r) => placedById.get(r.id)!),
		unplaced: requests.filter((r) => !placedById.has(r.id)).map((r) => r.id)
	};
}
