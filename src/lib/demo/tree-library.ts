// A three-level lactose library for model-tree demonstrations and tests (invented data, never evidence):
// genuine from two approved sites, diluted with starch or with talc, and an anhydrous substitute.
import type { AxisUnit } from '../spectra/types';
import { createRng } from './prng';
import { lotState, sampleState, spectrumOf, type Kind } from './scenario';

export interface TreeLibraryRow {
	id: string;
	/** Label path, e.g. "diluted/starch". */
	className: string;
	kind: Kind;
	group: string;
	role: 'training' | 'test' | 'challenge';
	axis: Float64Array;
	unit: AxisUnit;
	values: Float64Array;
}

export const TREE_CLASSES: { label: string; kind: Kind }[] = [
	{ label: 'genuine/site-a', kind: 'lactose' },
	{ label: 'genuine/site-b', kind: 'lactose-site-b' },
	{ label: 'diluted/starch', kind: 'lactose-starch' },
	{ label: 'diluted/talc', kind: 'lactose-talc' },
	{ label: 'substituted', kind: 'lactose-anhydrous' }
];

/**
 * `lots` supplier lots of `perLot` spectra per class; the last spectrum of every lot is a test spectrum.
 * Challenge rows (role "challenge") hold microcrystalline cellulose (a different material).
 */
export function treeLibrary(options: { seed?: number; lots?: number; perLot?: number; step?: number } = {}): TreeLibraryRow[] {
	const { seed = 1306, lots = 3, perLot = 6, step = 8 } = options;
	const rng = createRng(seed);
	const n = Math.round((2500 - 1100) / step) + 1;
	const axis = Float64Array.from({ length: n }, (_, i) => 1100 + i * step);
	const rows: TreeLibraryRow[] = [];
	const add = (label: string, kind: Kind, role: (k: number) => TreeLibraryRow['role'], lotCount: number) => {
		for (let l = 0; l < lotCount; l++) {
			const ls = lotState(rng);
			for (let k = 0; k < perLot; k++) {
				const values = spectrumOf(kind, axis, sampleState(ls, rng), 'NIR-BENCH-1', rng, 1e-6);
				rows.push({ id: `${label.replaceAll('/', '-')}-${l + 1}-${k + 1}`, className: label, kind, group: `${label}#${l + 1}`, role: role(k), axis, unit: 'nm', values });
			}
		}
	};
	for (const c of TREE_CLASSES) add(c.label, c.kind, (k) => (k === perLot - 1 ? 'test' : 'training'), lots);
	add('mcc', 'mcc', () => 'challenge', 1);
	return rows;
}
