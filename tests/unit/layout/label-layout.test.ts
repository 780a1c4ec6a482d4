// Label layout for printed plots: properties that must hold for any input (fast-check), plus the cases a certificate
// meets. The segment test is Liang–Barsky parametric clipping: Y.-D. Liang and B. A. Barsky, "A new concept and method
// for line clipping", ACM Transactions on Graphics 3(1), 1984, 1–22 (from memory); its expected answers below are worked
// by hand from the figures in each case.
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { circleHitsRect, layoutLabels, rectsOverlap, segmentHitsRect, type LabelRequest } from '../../../src/lib/layout/label-layout';

const bounds = { left: 0, top: 0, right: 300, bottom: 200 };
const req = (id: string, x: number, y: number, width = 10, height = 7): LabelRequest => ({ id, x, y, width, height });

describe('geometry helpers', () => {
	it('rectangles: overlap, touching, apart', () => {
		expect(rectsOverlap({ x: 0, y: 0, width: 10, height: 10 }, { x: 5, y: 5, width: 10, height: 10 })).toBe(true);
		expect(rectsOverlap({ x: 0, y: 0, width: 10, height: 10 }, { x: 10, y: 0, width: 10, height: 10 })).toBe(false); // shared edge only
		expect(rectsOverlap({ x: 0, y: 0, width: 10, height: 10 }, { x: 11, y: 0, width: 10, height: 10 }, 1.5)).toBe(true); // within the gap
	});
	it('circle against rectangle: the nearest point decides (corner case at distance √2)', () => {
		const r = { x: 0, y: 0, width: 10, height: 10 };
		expect(circleHitsRect(11, 11, 1.5, r)).toBe(true); // corner at √2 ≈ 1.414 < 1.5
		expect(circleHitsRect(11, 11, 1.4, r)).toBe(false);
		expect(circleHitsRect(5, 5, 0.1, r)).toBe(true); // centre inside
	});
	it('segment against rectangle (Liang–Barsky): through, beside, ending on the edge', () => {
		const r = { x: 10, y: 10, width: 10, height: 10 };
		expect(segmentHitsRect(0, 15, 30, 15, r)).toBe(true);
		expect(segmentHitsRect(0, 0, 30, 5, r)).toBe(false);
		expect(segmentHitsRect(0, 15, 10, 15, r)).toBe(false); // stops at the left edge
		expect(segmentHitsRect(0, 0, 30, 30, r)).toBe(true); // the diagonal
	});
});

describe('layoutLabels', () => {
	it('puts a lone label right of its point, touching it, without a leader', () => {
		const { placed, unplaced } = layoutLabels([req('7', 100, 100)], bounds, { markerRadius: 4, gap: 1.5 });
		expect(unplaced).toEqual([]);
		expect(placed[0]).toMatchObject({ id: '7', x: 105.5, y: 96.5, leader: null, anchorX: 100, anchorY: 100 });
	});

	it('keeps a label inside the plot: a point at the right edge is labelled on its left', () => {
		const { placed } = layoutLabels([req('3', 298, 100)], bounds);
		expect(placed[0].x + placed[0].width).toBeLessThanOrEqual(300);
		expect(placed[0].x + placed[0].width).toBeLessThanOrEqual(298);
	});

	it('separates eleven labels on one spot, the ones that do not fit near it with leader lines', () => {
		const points = Array.from({ length: 11 }, (_, i) => req(String(i + 1), 150 + (i % 3) * 0.5, 100 + (i % 2) * 0.5, 12, 7));
		const { placed, unplaced } = layoutLabels(points, bounds);
		expect(unplaced).toEqual([]);
		for (let i = 0; i < placed.length; i++) for (let j = i + 1; j < placed.length; j++) expect(rectsOverlap(placed[i], placed[j])).toBe(false);
		expect(placed.filter((p) => p.leader).length).toBeGreaterThan(0);
		expect(placed.filter((p) => !p.leader).length).toBeGreaterThan(0);
	});

	it('prefers a place that covers no training point', () => {
		// Right of the point sits a training cloud; the label goes elsewhere but stays next to its point.
		const avoid = Array.from({ length: 20 }, (_, i) => ({ x: 106 + (i % 5) * 2, y: 97 + Math.floor(i / 5) * 2 }));
		const { placed } = layoutLabels([req('4', 100, 100)], bounds, { avoid });
		expect(placed[0].leader).toBeNull();
		expect(avoid.some((p) => circleHitsRect(p.x, p.y, 1.5, placed[0]))).toBe(false);
	});

	it('returns a label that cannot fit as unplaced instead of overprinting', () => {
		const tiny = { left: 0, top: 0, right: 30, bottom: 12 };
		const { placed, unplaced } = layoutLabels([req('1', 10, 6, 12, 7), req('2', 11, 6, 12, 7), req('3', 12, 6, 12, 7)], tiny);
		expect(unplaced.length).toBeGreaterThan(0);
		expect(placed.length + unplaced.length).toBe(3);
		for (let i = 0; i < placed.length; i++) for (let j = i + 1; j < placed.length; j++) expect(rectsOverlap(placed[i], placed[j])).toBe(false);
	});

	it('is deterministic: the same points give the same layout', () => {
		const points = Array.from({ length: 9 }, (_, i) => req(`c${i}`, 140 + i, 90 + ((i * 7) % 5), 14, 7));
		expect(layoutLabels(points, bounds)).toEqual(layoutLabels(points, bounds));
	});

	it('refuses bad input with a message naming the problem', () => {
		expect(() => layoutLabels([req('a', 1, 1), req('a', 2, 2)], bounds)).toThrow(/"a" appears twice/);
		expect(() => layoutLabels([req('a', Number.NaN, 1)], bounds)).toThrow(/point "a" is not finite/);
		expect(() => layoutLabels([req('a', 1, 1, 0, 7)], bounds)).toThrow(/positive width and height/);
		expect(() => layoutLabels([], { left: 10, top: 0, right: 5, bottom: 10 })).toThrow(/right > left/);
		expect(() => layoutLabels([], bounds, { markerRadius: -1 })).toThrow(/markerRadius/);
	});

	it('for any points: labels inside the bounds, never overlapping each other or any labelled marker, leaders crossing no label', () => {
		const point = fc.record({ x: fc.double({ min: 0, max: 300, noNaN: true }), y: fc.double({ min: 0, max: 200, noNaN: true }), w: fc.integer({ min: 4, max: 30 }) });
		fc.assert(
			fc.property(fc.array(point, { maxLength: 25 }), (pts) => {
				const requests = pts.map((p, i) => req(String(i + 1), p.x, p.y, p.w, 7));
				const { placed, unplaced } = layoutLabels(requests, bounds, { markerRadius: 3, gap: 1 });
				expect(placed.length + unplaced.length).toBe(requests.length);
				for (const a of placed) {
					expect(a.x).toBeGreaterThanOrEqual(0);
					expect(a.y).toBeGreaterThanOrEqual(0);
					expect(a.x + a.width).toBeLessThanOrEqual(300 + 1e-9);
					expect(a.y + a.height).toBeLessThanOrEqual(200 + 1e-9);
					for (const q of requests) expect(circleHitsRect(q.x, q.y, 3, a)).toBe(false);
					for (const b of placed) {
						if (a === b) continue;
						expect(rectsOverlap(a, b)).toBe(false);
						if (a.leader) expect(segmentHitsRect(a.leader.x1, a.leader.y1, a.leader.x2, a.leader.y2, b)).toBe(false);
					}
				}
			}),
			{ numRuns: 60, seed: 17 }
		);
	});
});
