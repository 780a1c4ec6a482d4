// The monitoring part of the invented demo (issue 14 §5): a lactose supplier whose material slowly takes up maize
// starch over ten lots, and genuine lactose measured on a second dock instrument for a model-transfer check.
// Both come from their own random streams, so adding them changed none of the other demo spectra.
// Invented data for demonstrations; it is not evidence that any method works.
import { addBands, NIR } from './bands';
import { writeCsvMatrix } from './csv-writer';
import { writeJcampAffn } from './jcamp-writer';
import { createRng, type Rng } from './prng';
import { COMPANY, DEFAULT_SEED, INSTRUMENT_EFFECT, lotState, nirPure, sampleState, spectrumOf, type DemoFile, type DemoLot, type DemoLotFile } from './scenario';

type State = ReturnType<typeof lotState>;

export const DRIFT_SUPPLIER = { code: 'ELDERMERE', name: 'Eldermere Dairy Ingredients', status: 'qualified' as const, contacts: ['quality@eldermere.demo.test'] };
export const DRIFT_MATERIAL = 'LAC-200';
export const DRIFT_INSTRUMENT = 'NIR-DOCK-1';
/**
 * Starch fraction of the lactose, lot by lot in received order: six lots of the supplier's usual material, then a slow
 * uptake. The chart collects history over the first five lots and signals once the uptake clearly leaves it, while
 * every container still reads genuine (checked in tests/integration/demo-verdicts.test.ts).
 */
export const DRIFT_STARCH = [0, 0, 0, 0, 0, 0, 0.02, 0.04, 0.08, 0.12];
export const DRIFT_CONTAINERS = 5;
/** How far the drifting supplier's lot-to-lot variation is drawn toward the demo's centre (1 would be none). */
const STEADY = 0.25;

/** The instrument with a pending model transfer, and the one whose wavelength check is overdue. */
export const TRANSFER_INSTRUMENT = { name: 'NIR-DOCK-2', technique: 'NIR' as const, serial: 'QM-HN-0188', axisUnit: 'nm' as const };
export const OVERDUE_INSTRUMENT = { name: 'NIR-BENCH-2', technique: 'NIR' as const, serial: 'QM-BN-0019', axisUnit: 'nm' as const };
export const TRANSFER_LOTS = 3;
export const TRANSFER_PER_LOT = 4;

const axisNir = () => Float64Array.from({ length: 701 }, (_, i) => 1100 + i * 2);
const pad2 = (n: number) => String(n).padStart(2, '0');

/** Lactose with a fraction `f` replaced by starch, on the demo's noise model (./scenario.ts spectrumOf). */
function blendSpectrum(axis: Float64Array, s: State, instrument: string, rng: Rng, f: number): Float64Array {
	const eff = INSTRUMENT_EFFECT[instrument];
	const shift = s.shift + eff.shift;
	const lactose = nirPure('lactose', axis, s, shift);
	const starch = new Float64Array(axis.length);
	addBands(starch, axis, NIR.starch, 1, shift, s.width);
	const lo = axis[0];
	const span = axis[axis.length - 1] - lo;
	const quantum = 1e-6;
	return Float64Array.from(axis, (x, i) => {
		const t = (x - lo) / span;
		const y = s.offset + eff.offset + s.slope * t + s.mult * ((1 - f) * lactose[i] + f * starch[i]) + eff.noise * rng.normal();
		return Math.round(y / quantum) * quantum;
	});
}

/**
 * A steady supplier: the demo's lot-to-lot variation (./scenario.ts lotState) drawn toward its centre by `k`, so the
 * supplier's own history is tight enough for a slow change to show.
 */
function steadyLotState(rng: Rng, k: number): State {
	const s = lotState(rng);
	const toward = (x: number, centre: number) => centre + k * (x - centre);
	return { mult: toward(s.mult, 1), offset: toward(s.offset, 0.25), slope: toward(s.slope, 0.08), moisture: toward(s.moisture, 1), crystal: toward(s.crystal, 1), shift: toward(s.shift, 0), width: toward(s.width, 1) };
}

/** The ten drifting deliveries, three weeks apart from April 2025, five containers each, all scanned on NIR-DOCK-1. */
export function driftLots(options: { seed?: number } = {}): DemoLot[] {
	const { seed = DEFAULT_SEED } = options;
	const rng = createRng((seed ^ 0x0d41f7ed) >>> 0);
	const encoder = new TextEncoder();
	const axis = axisNir();
	return DRIFT_STARCH.map((f, k) => {
		const supplierLot = `ELD-25${String(301 + k * 4)}`;
		const received = new Date(Date.UTC(2025, 3, 1) + k * 21 * 86_400_000);
		const ls = steadyLotState(rng, STEADY);
		const files: DemoLotFile[] = Array.from({ length: DRIFT_CONTAINERS }, (_, i) => {
			const container = i + 1;
			const cc = `C${pad2(container)}`;
			const values = blendSpectrum(axis, sampleState(ls, rng), DRIFT_INSTRUMENT, rng, f);
			const t = new Date(received.getTime() + (9 * 3600 + i * 240) * 1000);
			const iso = t.toISOString().slice(0, 19);
			const text = writeJcampAffn({
				title: `${DRIFT_MATERIAL} Lactose monohydrate 200 mesh, lot ${supplierLot}, container ${cc}`,
				axis,
				values,
				xUnits: 'NANOMETERS',
				yUnits: 'ABSORBANCE',
				yFactor: 1e-6,
				dataType: 'INFRARED SPECTRUM',
				origin: COMPANY,
				owner: `${COMPANY}; invented demo data`,
				longDate: `${iso.slice(0, 10).replaceAll('-', '/')} ${iso.slice(11)}`,
				vendor: { INSTRUMENT: DRIFT_INSTRUMENT, MATERIAL: DRIFT_MATERIAL, SUPPLIER: DRIFT_SUPPLIER.code, 'SUPPLIER LOT': supplierLot, CONTAINER: cc }
			});
			return { name: `lac-drift-${pad2(k + 1)}-${cc}.jdx`, bytes: encoder.encode(text), container, truth: f > 0 ? `genuine with ${(f * 100).toFixed(0)} % starch` : 'genuine', corrupt: false, instrument: DRIFT_INSTRUMENT, acquiredAt: iso, encoding: 'AFFN', axis, values };
		});
		const description = f > 0 ? `Drift demo lot ${k + 1} of ${DRIFT_STARCH.length}: about ${(f * 100).toFixed(0)} % starch taken up` : `Drift demo lot ${k + 1} of ${DRIFT_STARCH.length}: the supplier's usual material`;
		return { lotKey: `lac-drift-${pad2(k + 1)}`, material: DRIFT_MATERIAL, supplier: DRIFT_SUPPLIER.code, supplierLot, instrument: DRIFT_INSTRUMENT, description, files };
	});
}

/**
 * Genuine LAC-200 measured on NIR-DOCK-2: 3 supplier lots × 4 spectra, one CSV matrix with the library's columns and
 * role `transfer` (the evidence a transfer check screens).
 */
export function transferLibrary(options: { seed?: number } = {}): DemoFile & { material: string; rows: number } {
	const { seed = DEFAULT_SEED } = options;
	const rng = createRng((seed ^ 0x7a5f3e21) >>> 0);
	const axis = axisNir();
	const suppliers = ['NORDVIK', 'GRISEDALE', 'NORDVIK'];
	const rows: { meta: Record<string, string>; values: Float64Array }[] = [];
	for (let lot = 0; lot < TRANSFER_LOTS; lot++) {
		const supplierLot = `${suppliers[lot] === 'NORDVIK' ? 'NVX' : 'GFC'}-26T${lot + 1}`;
		const ls = lotState(rng);
		for (let i = 0; i < TRANSFER_PER_LOT; i++) {
			const values = spectrumOf('lactose', axis, sampleState(ls, rng), TRANSFER_INSTRUMENT.name, rng, 1e-6);
			rows.push({ meta: { id: `LAC-200-transfer-${pad2(lot * TRANSFER_PER_LOT + i + 1)}`, class: 'genuine', supplier: suppliers[lot], supplier_lot: supplierLot, instrument: TRANSFER_INSTRUMENT.name, role: 'transfer' }, values });
		}
	}
	const csv = writeCsvMatrix(['id', 'class', 'supplier', 'supplier_lot', 'instrument', 'role'], axis, rows, 6);
	return { material: DRIFT_MATERIAL, name: 'LAC-200-transfer-NIR-DOCK-2.csv', bytes: new TextEncoder().encode(csv), rows: rows.length };
}
