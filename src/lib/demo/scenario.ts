// The invented demo scenario: materials, suppliers, instruments, reference libraries and lot scans,
// generated from our band models with lot-to-lot and within-lot variation, scatter, offset and noise.
// Invented data for demonstrations; it is not evidence that any method works.
import type { AxisUnit } from '../spectra/types';
import { addBands, NIR, RAMAN } from './bands';
import { writeCsvMatrix } from './csv-writer';
import { writeJcampAffn, writeJcampDifDup, type JcampSpectrum } from './jcamp-writer';
import { createRng, type Rng } from './prng';

export const COMPANY = 'Quarrymoor Pharmaceuticals (demo)';
export const DEFAULT_SEED = 20250304;

export interface DemoSupplier {
	code: string;
	name: string;
	status: 'qualified' | 'on-watch' | 'blocked';
}

export interface DemoInstrument {
	code: string;
	name: string;
	technique: 'NIR' | 'Raman';
	unit: AxisUnit;
	serial: string;
}

export interface DemoClass {
	material: string;
	code: string;
	kind: 'genuine' | 'suspect';
	description: string;
}

export interface DemoMaterial {
	code: string;
	name: string;
	technique: 'NIR' | 'Raman';
	unit: AxisUnit;
	yUnit: string;
	axis: Float64Array;
	classes: DemoClass[];
	/** Challenge classes used only to test a model (never modelled). */
	challenges: { code: string; description: string }[];
}

export interface DemoLibraryRow {
	id: string;
	material: string;
	class: string;
	supplier: string;
	supplierLot: string;
	instrument: string;
	role: 'training' | 'test' | 'challenge';
	axis: Float64Array;
	unit: AxisUnit;
	/** On the written precision (1e-6 for NIR, 1e-5 for Raman), identical to the CSV text. */
	values: Float64Array;
}

export interface DemoFile {
	name: string;
	bytes: Uint8Array;
}

export interface DemoLotFile extends DemoFile {
	container: number;
	/** What the container really holds: a class code, "talc-cut", "MCC", or the genuine class of a corrupt file. */
	truth: string;
	/** True for the deliberately truncated file. */
	corrupt: boolean;
	instrument: string;
	acquiredAt: string;
	encoding: 'AFFN' | 'DIFDUP';
	axis: Float64Array;
	values: Float64Array;
}

export interface DemoLot {
	lotKey: string;
	material: string;
	supplier: string;
	supplierLot: string;
	instrument: string;
	description: string;
	files: DemoLotFile[];
}

export interface DemoScenario {
	company: string;
	seed: number;
	materials: DemoMaterial[];
	classes: DemoClass[];
	suppliers: DemoSupplier[];
	instruments: DemoInstrument[];
	library: DemoLibraryRow[];
	/** One CSV matrix per material: id, class, supplier, supplier_lot, instrument, role, then the axis. */
	libraryFiles: (DemoFile & { material: string })[];
	/**
	 * The model-tree demo's extra lactose rows (label paths: a second approved site, a second diluted sub-profile),
	 * uploaded after version 1 is approved, so version 1 and the lots it screens are unchanged; see TREE_ROWS.
	 */
	treeRows: DemoLibraryRow[];
	treeFiles: (DemoFile & { material: string })[];
	lots: DemoLot[];
}

export const SUPPLIERS: DemoSupplier[] = [
	{ code: 'NORDVIK', name: 'Nordvik Excipients', status: 'qualified' },
	{ code: 'PALMERA', name: 'Palmera Trading', status: 'on-watch' },
	{ code: 'GRISEDALE', name: 'Grisedale Fine Chemicals', status: 'qualified' },
	{ code: 'ZEPHYRA', name: 'Zephyra Brokers', status: 'blocked' }
];

export const INSTRUMENTS: DemoInstrument[] = [
	{ code: 'NIR-DOCK-1', name: 'Handheld NIR at the goods-in dock', technique: 'NIR', unit: 'nm', serial: 'QM-HN-0042' },
	{ code: 'NIR-BENCH-1', name: 'Benchtop NIR in the QC laboratory', technique: 'NIR', unit: 'nm', serial: 'QM-BN-0007' },
	{ code: 'RAMAN-1', name: 'Raman probe', technique: 'Raman', unit: 'cm-1', serial: 'QM-RP-0013' }
];

const PREFIX: Record<string, string> = { NORDVIK: 'NVX', PALMERA: 'PT', GRISEDALE: 'GFC', ZEPHYRA: 'ZB' };

function uniformAxis(from: number, to: number, step: number): Float64Array {
	const n = Math.round((to - from) / step) + 1;
	return Float64Array.from({ length: n }, (_, i) => from + i * step);
}

// What a sample is made of; each kind maps to a band recipe below.
export type Kind = 'lactose' | 'lactose-site-b' | 'lactose-anhydrous' | 'lactose-starch' | 'lactose-cellulose' | 'lactose-talc' | 'lactose-talc-fine' | 'mcc' | 'powdered-cellulose' | 'citric-anhydrous' | 'citric-monohydrate';

/** Physical state shared by a supplier lot (particle size, moisture, ...), varied a little per sample. */
interface State {
	mult: number;
	offset: number;
	slope: number;
	moisture: number;
	crystal: number;
	shift: number;
	width: number;
}

export function lotState(rng: Rng): State {
	return {
		mult: rng.gauss(1, 0.06),
		offset: rng.gauss(0.25, 0.03),
		slope: rng.gauss(0.08, 0.02),
		moisture: Math.max(0.3, rng.gauss(1, 0.22)),
		crystal: rng.gauss(1, 0.025),
		shift: rng.gauss(0, 0.35),
		width: rng.gauss(1, 0.015)
	};
}

export function sampleState(lot: State, rng: Rng): State {
	return {
		mult: lot.mult * rng.gauss(1, 0.015),
		offset: lot.offset + rng.gauss(0, 0.008),
		slope: lot.slope + rng.gauss(0, 0.004),
		moisture: Math.max(0.2, lot.moisture * rng.gauss(1, 0.06)),
		crystal: lot.crystal * rng.gauss(1, 0.008),
		shift: lot.shift + rng.gauss(0, 0.08),
		width: lot.width * rng.gauss(1, 0.004)
	};
}

// Instrument differences: a small wavelength offset, baseline and noise level.
export const INSTRUMENT_EFFECT: Record<string, { shift: number; offset: number; noise: number }> = {
	'NIR-DOCK-1': { shift: 0.3, offset: 0.012, noise: 1.5e-4 },
	'NIR-BENCH-1': { shift: 0, offset: 0, noise: 6e-5 },
	'RAMAN-1': { shift: 0, offset: 0, noise: 4e-3 },
	// A second dock instrument (monitoring demo): its wavelength scale sits a little further off than NIR-DOCK-1's.
	'NIR-DOCK-2': { shift: 0.6, offset: 0.018, noise: 1.6e-4 }
};

export function nirPure(kind: Kind, axis: Float64Array, s: State, shift: number): Float64Array {
	const out = new Float64Array(axis.length);
	const lactose = (scale: number) => {
		addBands(out, axis, NIR.lactose, scale, shift, s.width);
		addBands(out, axis, NIR.crystalWater, scale * s.crystal, shift, s.width);
		addBands(out, axis, NIR.moisture, scale * s.moisture, shift, s.width);
	};
	switch (kind) {
		case 'lactose':
			lactose(1);
			break;
		case 'lactose-site-b':
			// The second approved site's process: slightly less crystal water and a weak amorphous shoulder.
			lactose(1);
			addBands(out, axis, NIR.crystalWater, -0.12 * s.crystal, shift, s.width);
			addBands(out, axis, [{ center: 2268, fwhm: 60, height: 0.02 }], 1, shift, s.width);
			break;
		case 'lactose-anhydrous':
			// A substituted anhydrous grade: crystal water nearly gone, drier, a small β-lactose band.
			addBands(out, axis, NIR.lactose, 1, shift, s.width);
			addBands(out, axis, NIR.crystalWater, 0.25 * s.crystal, shift, s.width);
			addBands(out, axis, NIR.moisture, 0.45 * s.moisture, shift, s.width);
			addBands(out, axis, [{ center: 2112, fwhm: 40, height: 0.015 }], 1, shift, s.width);
			break;
		case 'lactose-starch':
			lactose(0.8);
			addBands(out, axis, NIR.starch, 0.2, shift, s.width);
			break;
		case 'lactose-cellulose':
			// Diluted with about 20 % powdered cellulose: a second diluted sub-profile beside starch (the model-tree demo).
			lactose(0.8);
			addBands(out, axis, NIR.powderedCellulose, 0.2, shift, s.width);
			break;
		case 'lactose-talc':
			lactose(0.75);
			addBands(out, axis, NIR.talc, 0.25, shift, s.width);
			break;
		case 'lactose-talc-fine':
			lactose(0.75);
			addBands(out, axis, NIR.talcFine, 0.25, shift, s.width);
			break;
		case 'mcc':
			addBands(out, axis, NIR.cellulose, 1, shift, s.width);
			addBands(out, axis, NIR.moisture, 0.6 * s.moisture, shift, s.width);
			break;
		case 'powdered-cellulose':
			addBands(out, axis, NIR.powderedCellulose, 1, shift, s.width);
			addBands(out, axis, NIR.moisture, 0.6 * s.moisture, shift, s.width);
			break;
		default:
			throw new Error(`not an NIR kind: ${kind}`);
	}
	return out;
}

export function spectrumOf(kind: Kind, axis: Float64Array, s: State, instrument: string, rng: Rng, quantum: number): Float64Array {
	const eff = INSTRUMENT_EFFECT[instrument];
	const n = axis.length;
	const lo = axis[0];
	const span = axis[n - 1] - lo;
	const out = new Float64Array(n);
	if (kind === 'citric-anhydrous' || kind === 'citric-monohydrate') {
		// Raman: laser/focus gain, a fluorescence background, noise.
		const bands = new Float64Array(n);
		addBands(bands, axis, kind === 'citric-anhydrous' ? RAMAN.citricAnhydrous : RAMAN.citricMonohydrate, 1, s.shift * 2, s.width);
		for (let i = 0; i < n; i++) {
			const t = (axis[i] - lo) / span;
			const fluor = 0.4 * s.offset + 0.5 * s.slope * t + 0.06 * s.moisture * t * t;
			out[i] = Math.round((s.mult * bands[i] + fluor + eff.noise * rng.normal()) / quantum) * quantum;
		}
		return out;
	}
	const pure = nirPure(kind, axis, s, s.shift + eff.shift);
	for (let i = 0; i < n; i++) {
		const t = (axis[i] - lo) / span;
		const y = s.offset + eff.offset + s.slope * t + s.mult * pure[i] + eff.noise * rng.normal();
		out[i] = Math.round(y / quantum) * quantum;
	}
	return out;
}

interface LotSpec {
	supplier: string;
	count: number;
}

interface ClassSpec {
	code: string;
	kind: Kind;
	lots: LotSpec[];
	challenge?: boolean;
}

interface MaterialSpec {
	code: string;
	name: string;
	technique: 'NIR' | 'Raman';
	instruments: string[];
	classes: (ClassSpec & { description: string; genuine?: boolean })[];
}

const spread = (supplier: string, ...counts: number[]): LotSpec[] => counts.map((count) => ({ supplier, count }));

const MATERIALS: MaterialSpec[] = [
	{
		code: 'LAC-200',
		name: 'Lactose monohydrate 200 mesh',
		technique: 'NIR',
		instruments: ['NIR-BENCH-1', 'NIR-DOCK-1'],
		classes: [
			{ code: 'genuine', kind: 'lactose', genuine: true, description: 'Lactose monohydrate 200 mesh as specified', lots: [...spread('NORDVIK', 14, 14, 13), ...spread('GRISEDALE', 13, 13), ...spread('PALMERA', 13)] },
			{ code: 'diluted-starch', kind: 'lactose-starch', description: 'About 20 % maize starch blended in', lots: [...spread('PALMERA', 8, 8, 8), ...spread('ZEPHYRA', 8, 8)] },
			{ code: 'anhydrous-grade', kind: 'lactose-anhydrous', description: 'Anhydrous lactose substituted for the monohydrate (water bands at 1450/1930 nm much weaker)', lots: [...spread('GRISEDALE', 8, 8, 8), ...spread('NORDVIK', 8, 8)] },
			{ code: 'talc-cut', kind: 'lactose-talc', challenge: true, description: 'About 25 % talc (unseen adulterant, for challenge tests only)', lots: spread('ZEPHYRA', 5, 5) },
			{ code: 'not-lactose', kind: 'mcc', challenge: true, description: 'Microcrystalline cellulose (wrong material)', lots: spread('GRISEDALE', 5, 5) }
		]
	},
	{
		code: 'MCC-100',
		name: 'Microcrystalline cellulose, 100 µm grade',
		technique: 'NIR',
		instruments: ['NIR-BENCH-1', 'NIR-DOCK-1'],
		classes: [
			{ code: 'genuine', kind: 'mcc', genuine: true, description: 'Microcrystalline cellulose 100 µm as specified', lots: [...spread('GRISEDALE', 14, 14, 13), ...spread('NORDVIK', 13, 13, 13)] },
			{ code: 'powdered-cellulose', kind: 'powdered-cellulose', description: 'Powdered cellulose substituted for MCC', lots: [...spread('PALMERA', 8, 8, 8), ...spread('ZEPHYRA', 8, 8)] }
		]
	},
	{
		code: 'CIT-ANH',
		name: 'Citric acid anhydrous',
		technique: 'Raman',
		instruments: ['RAMAN-1'],
		classes: [
			{ code: 'genuine', kind: 'citric-anhydrous', genuine: true, description: 'Citric acid anhydrous as specified', lots: [...spread('NORDVIK', 14, 14, 13), ...spread('GRISEDALE', 13, 13, 13)] },
			{ code: 'monohydrate-grade', kind: 'citric-monohydrate', description: 'Citric acid monohydrate substituted for the anhydrous grade', lots: [...spread('PALMERA', 8, 8, 8), ...spread('ZEPHYRA', 8, 8)] }
		]
	}
];

/**
 * Held-out validation spectra (issue 12 acceptance criteria): for every material, 3 later genuine deliveries of 4
 * spectra each, none of them in training (role test, lots `…-26Hn`); for the materials whose library had no
 * challenge of another material, 6 challenge spectra of one.
 */
const HELD_OUT_CHALLENGES: Record<string, { code: string; kind: Kind | 'citric-filler'; description: string }[]> = {
	'MCC-100': [{ code: 'not-mcc', kind: 'lactose', description: 'Lactose monohydrate (wrong material, challenge only)' }],
	'CIT-ANH': [{ code: 'filler-cut', kind: 'citric-filler', description: 'About 30 % of an inorganic filler blended in (unseen adulterant, challenge only)' }]
};

function heldOut(m: MaterialSpec, axis: Float64Array, unit: AxisUnit, quantum: number, hold: Rng): DemoLibraryRow[] {
	const rows: DemoLibraryRow[] = [];
	const genuine = m.classes.find((c) => c.genuine)!;
	const suppliers = [...new Set(genuine.lots.map((l) => l.supplier))];
	for (let lot = 0; lot < 3; lot++) {
		const supplier = suppliers[lot % suppliers.length];
		const supplierLot = `${PREFIX[supplier]}-26H${lot + 1}`;
		const ls = lotState(hold);
		for (let i = 0; i < 4; i++) {
			const instrument = m.instruments[(lot * 4 + i) % m.instruments.length];
			const values = spectrumOf(genuine.kind, axis, sampleState(ls, hold), instrument, hold, quantum);
			rows.push({ id: `${m.code}-genuine-h${String(lot * 4 + i + 1).padStart(2, '0')}`, material: m.code, class: genuine.code, supplier, supplierLot, instrument, role: 'test', axis, unit, values });
		}
	}
	for (const c of HELD_OUT_CHALLENGES[m.code] ?? []) {
		const supplier = 'ZEPHYRA';
		const supplierLot = `${PREFIX[supplier]}-26C1`;
		const ls = lotState(hold);
		for (let i = 0; i < 6; i++) {
			const instrument = m.instruments[i % m.instruments.length];
			const st = sampleState(ls, hold);
			const values =
				c.kind === 'citric-filler'
					? fillerCut(axis, st, instrument, hold, quantum)
					: spectrumOf(c.kind, axis, st, instrument, hold, quantum);
			rows.push({ id: `${m.code}-${c.code}-${String(i + 1).padStart(3, '0')}`, material: m.code, class: c.code, supplier, supplierLot, instrument, role: 'challenge', axis, unit, values });
		}
	}
	return rows;
}

/** Raman challenge: citric acid anhydrous at 70 % with a filler's strong band near 1001 cm⁻¹ and one near 620 cm⁻¹. */
function fillerCut(axis: Float64Array, s: State, instrument: string, rng: Rng, quantum: number): Float64Array {
	const base = spectrumOf('citric-anhydrous', axis, s, instrument, rng, quantum);
	const extra = new Float64Array(axis.length);
	addBands(extra, axis, [{ center: 1001, fwhm: 9, height: 0.55, shape: 'lorentz' }, { center: 620, fwhm: 14, height: 0.2, shape: 'lorentz' }], s.mult, s.shift * 2, s.width);
	for (let i = 0; i < base.length; i++) base[i] = Math.round((0.7 * base[i] + extra[i]) / quantum) * quantum;
	return base;
}

/**
 * The model-tree demo (issue 13 §5): extra LAC-200 rows with label paths, a second approved site of the genuine
 * material and a second diluted sub-profile. The existing genuine and diluted-starch rows stay as they are (their
 * spectra and labels): the demo's tree version places them at genuine › site-a and diluted › starch by its edited tree.
 * Talc stays an unseen adulterant (the talc lot must keep reading unknown), so the second diluent is cellulose.
 */
export const TREE_ROWS: { label: string; code: string; kind: Kind; suppliers: string[]; description: string }[] = [
	{ label: 'genuine/site-b', code: 'site-b', kind: 'lactose-site-b', suppliers: ['GRISEDALE', 'NORDVIK'], description: "Lactose monohydrate from the genuine material's second approved manufacturing site" },
	{ label: 'suspect/diluted/cellulose', code: 'diluted-cellulose', kind: 'lactose-cellulose', suppliers: ['PALMERA', 'ZEPHYRA'], description: 'About 20 % powdered cellulose blended in' }
];

/** 5 supplier lots of 6 spectra per label; every fourth spectrum tests (as in the library): 23 training, 7 test. */
function treeRowsOf(m: MaterialSpec, axis: Float64Array, unit: AxisUnit, quantum: number, branch: Rng): DemoLibraryRow[] {
	const rows: DemoLibraryRow[] = [];
	for (const t of TREE_ROWS) {
		let k = 0;
		for (let lot = 0; lot < 5; lot++) {
			const supplier = t.suppliers[lot % t.suppliers.length];
			const supplierLot = `${PREFIX[supplier]}-24T${TREE_ROWS.indexOf(t) + 1}${lot + 1}`;
			const ls = lotState(branch);
			for (let i = 0; i < 6; i++, k++) {
				const instrument = m.instruments[k % m.instruments.length];
				const values = spectrumOf(t.kind, axis, sampleState(ls, branch), instrument, branch, quantum);
				rows.push({ id: `${m.code}-${t.code}-${String(k + 1).padStart(3, '0')}`, material: m.code, class: t.label, supplier, supplierLot, instrument, role: k % 4 === 3 ? 'test' : 'training', axis, unit, values });
			}
		}
	}
	return rows;
}

interface LotScanSpec {
	lotKey: string;
	material: string;
	supplier: string;
	instrument: string;
	description: string;
	/** One kind per container. */
	containers: Kind[];
	truth: string[];
	corrupt?: number;
	encoding: 'AFFN' | 'DIFDUP';
	date: [number, number, number, number, number];
}

const LOT_SCANS: LotScanSpec[] = [
	{ lotKey: 'lac-good', material: 'LAC-200', supplier: 'NORDVIK', instrument: 'NIR-DOCK-1', description: 'New lot, all containers genuine', containers: Array(8).fill('lactose'), truth: Array(8).fill('genuine'), encoding: 'AFFN', date: [2025, 3, 4, 8, 30] },
	{
		lotKey: 'lac-diluted',
		material: 'LAC-200',
		supplier: 'PALMERA',
		instrument: 'NIR-DOCK-1',
		description: 'Container 4 diluted with about 20 % starch, the rest genuine',
		containers: ['lactose', 'lactose', 'lactose', 'lactose-starch', 'lactose', 'lactose'],
		truth: ['genuine', 'genuine', 'genuine', 'diluted-starch', 'genuine', 'genuine'],
		encoding: 'AFFN',
		date: [2025, 3, 5, 9, 10]
	},
	{
		lotKey: 'lac-talc',
		material: 'LAC-200',
		supplier: 'ZEPHYRA',
		instrument: 'NIR-DOCK-1',
		description: 'Container 2 cut with about 25 % of a fine, weakly absorbing talc (an adulterant no model has seen)',
		containers: ['lactose', 'lactose-talc-fine', 'lactose', 'lactose', 'lactose'],
		truth: ['genuine', 'talc-cut', 'genuine', 'genuine', 'genuine'],
		encoding: 'AFFN',
		date: [2025, 3, 6, 10, 0]
	},
	{ lotKey: 'lac-wrong', material: 'LAC-200', supplier: 'GRISEDALE', instrument: 'NIR-DOCK-1', description: 'Labelled lactose, but every container holds MCC', containers: Array(3).fill('mcc'), truth: Array(3).fill('MCC'), encoding: 'AFFN', date: [2025, 3, 7, 8, 45] },
	{ lotKey: 'lac-corrupt', material: 'LAC-200', supplier: 'NORDVIK', instrument: 'NIR-DOCK-1', description: 'Container 1 genuine; container 2 a truncated file (no ##END=)', containers: ['lactose', 'lactose'], truth: ['genuine', 'genuine'], corrupt: 2, encoding: 'AFFN', date: [2025, 3, 10, 13, 20] },
	{ lotKey: 'mcc-good', material: 'MCC-100', supplier: 'GRISEDALE', instrument: 'NIR-DOCK-1', description: 'All containers genuine (files in DIF/DUP form)', containers: Array(5).fill('mcc'), truth: Array(5).fill('genuine'), encoding: 'DIFDUP', date: [2025, 3, 11, 9, 0] },
	{ lotKey: 'cit-good', material: 'CIT-ANH', supplier: 'NORDVIK', instrument: 'RAMAN-1', description: 'All containers genuine (Raman, DIF/DUP form)', containers: Array(4).fill('citric-anhydrous'), truth: Array(4).fill('genuine'), encoding: 'DIFDUP', date: [2025, 3, 12, 14, 15] }
];

const pad2 = (n: number) => String(n).padStart(2, '0');

function stamp([y, mo, d, h, mi]: number[], plusSeconds: number): { jcamp: string; iso: string } {
	const t = new Date(Date.UTC(y, mo - 1, d, h, mi) + plusSeconds * 1000);
	const date = `${t.getUTCFullYear()}/${pad2(t.getUTCMonth() + 1)}/${pad2(t.getUTCDate())}`;
	const time = `${pad2(t.getUTCHours())}:${pad2(t.getUTCMinutes())}:${pad2(t.getUTCSeconds())}`;
	return { jcamp: `${date} ${time}`, iso: `${date.replaceAll('/', '-')}T${time}` };
}

/** Builds the whole scenario in memory; the same seed gives the same bytes. */
export function demoScenario(options: { seed?: number } = {}): DemoScenario {
	const { seed = DEFAULT_SEED } = options;
	const rng = createRng(seed);
	// The held-out validation spectra come from their own stream, so adding them changed none of the other spectra.
	const hold = createRng((seed ^ 0x5eed1e55) >>> 0);
	// The model-tree rows too: adding them changed no earlier spectrum, lot or held-out row.
	const branch = createRng((seed ^ 0x7ee5b4a7) >>> 0);
	const encoder = new TextEncoder();
	const lotCounter: Record<string, number> = {};
	const nextLot = (supplier: string, year: number) => {
		lotCounter[`${supplier}${year}`] = (lotCounter[`${supplier}${year}`] ?? 100) + 1 + Math.floor(rng.uniform() * 7);
		return `${PREFIX[supplier]}-${year}${lotCounter[`${supplier}${year}`]}`;
	};

	const materials: DemoMaterial[] = [];
	const classes: DemoClass[] = [];
	const library: DemoLibraryRow[] = [];
	const libraryFiles: DemoScenario['libraryFiles'] = [];
	const treeRows: DemoLibraryRow[] = [];
	const treeFiles: DemoScenario['treeFiles'] = [];
	const axisOf = (technique: 'NIR' | 'Raman') => (technique === 'NIR' ? uniformAxis(1100, 2500, 2) : uniformAxis(200, 1800, 2));

	for (const m of MATERIALS) {
		const axis = axisOf(m.technique);
		const unit: AxisUnit = m.technique === 'NIR' ? 'nm' : 'cm-1';
		const quantum = m.technique === 'NIR' ? 1e-6 : 1e-5;
		const material: DemoMaterial = {
			code: m.code,
			name: m.name,
			technique: m.technique,
			unit,
			yUnit: m.technique === 'NIR' ? 'ABSORBANCE' : 'ARBITRARY UNITS',
			axis,
			classes: [],
			challenges: []
		};
		const rows: DemoLibraryRow[] = [];
		for (const c of m.classes) {
			if (c.challenge) material.challenges.push({ code: c.code, description: c.description });
			else {
				const dc: DemoClass = { material: m.code, code: c.code, kind: c.genuine ? 'genuine' : 'suspect', description: c.description };
				material.classes.push(dc);
				classes.push(dc);
			}
			let k = 0;
			for (const lot of c.lots) {
				const supplierLot = nextLot(lot.supplier, 24);
				const ls = lotState(rng);
				for (let i = 0; i < lot.count; i++, k++) {
					const instrument = m.instruments[k % m.instruments.length];
					const values = spectrumOf(c.kind, axis, sampleState(ls, rng), instrument, rng, quantum);
					rows.push({
						id: `${m.code}-${c.code}-${String(k + 1).padStart(3, '0')}`,
						material: m.code,
						class: c.code,
						supplier: lot.supplier,
						supplierLot,
						instrument,
						// Every fourth spectrum of a class is held out for testing: 20 of 80, 10 of 40.
						role: c.challenge ? 'challenge' : k % 4 === 3 ? 'test' : 'training',
						axis,
						unit,
						values
					});
				}
			}
		}
		rows.push(...heldOut(m, axis, unit, quantum, hold));
		for (const c of HELD_OUT_CHALLENGES[m.code] ?? []) material.challenges.push({ code: c.code, description: c.description });
		materials.push(material);
		library.push(...rows);
		const cols = ['id', 'class', 'supplier', 'supplier_lot', 'instrument', 'role'];
		const csvOf = (list: DemoLibraryRow[]) =>
			writeCsvMatrix(
				cols,
				axis,
				list.map((r) => ({ meta: { id: r.id, class: r.class, supplier: r.supplier, supplier_lot: r.supplierLot, instrument: r.instrument, role: r.role }, values: r.values })),
				m.technique === 'NIR' ? 6 : 5
			);
		libraryFiles.push({ material: m.code, name: `${m.code}.csv`, bytes: encoder.encode(csvOf(rows)) });
		if (m.code === 'LAC-200') {
			const extra = treeRowsOf(m, axis, unit, quantum, branch);
			treeRows.push(...extra);
			treeFiles.push({ material: m.code, name: `${m.code}-tree.csv`, bytes: encoder.encode(csvOf(extra)) });
		}
	}

	const lots: DemoLot[] = [];
	for (const spec of LOT_SCANS) {
		const m = MATERIALS.find((x) => x.code === spec.material)!;
		const material = materials.find((x) => x.code === spec.material)!;
		const supplierLot = nextLot(spec.supplier, 25);
		const ls = lotState(rng);
		const wrongMaterial = spec.containers[0] === 'mcc' && m.code !== 'MCC-100';
		const files: DemoLotFile[] = spec.containers.map((kind, i) => {
			const container = i + 1;
			const cc = `C${pad2(container)}`;
			const raman = kind.startsWith('citric');
			const axis = material.axis;
			const quantum = raman ? 1e-5 : 1e-6;
			const values = spectrumOf(kind, axis, sampleState(ls, rng), spec.instrument, rng, quantum);
			const when = stamp(spec.date, i * 240 + Math.floor(rng.uniform() * 60));
			const js: JcampSpectrum = {
				title: `${m.code} ${m.name}, lot ${supplierLot}, container ${cc}`,
				axis,
				values,
				xUnits: raman ? '1/CM' : 'NANOMETERS',
				yUnits: material.yUnit,
				yFactor: quantum,
				dataType: raman ? 'RAMAN SPECTRUM' : 'INFRARED SPECTRUM',
				origin: COMPANY,
				owner: `${COMPANY}; invented demo data`,
				longDate: when.jcamp,
				vendor: { INSTRUMENT: spec.instrument, MATERIAL: m.code, SUPPLIER: spec.supplier, 'SUPPLIER LOT': supplierLot, CONTAINER: cc }
			};
			let text = spec.encoding === 'DIFDUP' ? writeJcampDifDup(js) : writeJcampAffn(js);
			const corrupt = spec.corrupt === container;
			// A transfer that stopped part-way: the data end mid-line and ##END= never arrives.
			if (corrupt) text = text.slice(0, Math.floor(text.length * 0.55));
			return {
				name: `${spec.lotKey}-${cc}.jdx`,
				bytes: encoder.encode(text),
				container,
				truth: wrongMaterial ? 'MCC' : spec.truth[i],
				corrupt,
				instrument: spec.instrument,
				acquiredAt: when.iso,
				encoding: spec.encoding,
				axis,
				values
			};
		});
		lots.push({ lotKey: spec.lotKey, material: spec.material, supplier: spec.supplier, supplierLot, instrument: spec.instrument, description: spec.description, files });
	}

	return { company: COMPANY, seed, materials, classes, suppliers: SUPPLIERS.map((s) => ({ ...s })), instruments: INSTRUMENTS.map((i) => ({ ...i })), library, libraryFiles, treeRows, treeFiles, lots };
}
