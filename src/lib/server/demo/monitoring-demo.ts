// Demo step of monitoring (issue 14 §5), through the services only: a lactose supplier drifting over ten lots (its
// chart signals while every container still reads genuine), an instrument whose wavelength check is overdue, and
// one with a model transfer checked and waiting for QA. Idempotent: what is already in place is left as it is.
import { driftLots, DRIFT_MATERIAL, DRIFT_SUPPLIER, OVERDUE_INSTRUMENT, transferLibrary, TRANSFER_INSTRUMENT } from '../../demo/monitoring';
import { writeJcampAffn } from '../../demo/jcamp-writer';
import { createRng } from '../../demo/prng';
import type { Actor } from '../services/actor';
import * as checks from '../services/instrument-checks';
import * as instruments from '../services/instruments';
import * as library from '../services/library';
import * as lots from '../services/lots';
import * as materials from '../services/materials';
import * as versions from '../services/model-versions';
import * as scans from '../services/scans';
import * as suppliers from '../services/suppliers';
import * as transfers from '../services/transfers';
import * as users from '../services/users';
import { ServiceError } from '../services/errors';

async function actorFor(email: string, roles: Actor['roles']): Promise<Actor> {
	const u = await users.findByEmail(email);
	if (!u) throw new Error(`demo account ${email} is missing: seed the accounts first`);
	return { id: u.id, label: u.name, roles, requestId: 'demo-seed' };
}

async function exists<T>(read: () => Promise<T>) {
	try {
		await read();
		return true;
	} catch (e) {
		if (e instanceof ServiceError && e.status === 404) return false;
		throw e;
	}
}

const isoDay = (d: Date) => d.toISOString().slice(0, 10);

/** A flat reference spectrum for the noise check (about 1e-4 absorbance RMS, within the NIR plan's 3e-4). */
function noiseStandard(): Uint8Array {
	const rng = createRng(880_014);
	const axis = Float64Array.from({ length: 701 }, (_, i) => 1100 + i * 2);
	const values = new Float64Array(axis.length);
	for (let i = 0; i < values.length; i++) values[i] = Math.round((0.02 + 1e-4 * rng.normal()) / 1e-6) * 1e-6;
	const text = writeJcampAffn({ title: 'NIR-BENCH-2 noise check, 100 % reference', axis, values, xUnits: 'NANOMETERS', yUnits: 'ABSORBANCE', yFactor: 1e-6, dataType: 'INFRARED SPECTRUM', origin: 'Quarrymoor Pharmaceuticals (demo)', owner: 'invented demo data' });
	return new TextEncoder().encode(text);
}

export async function seedMonitoringDemo(log: (line: string) => void = console.log) {
	const admin = await actorFor('admin@demo.test', ['admin', 'procurement', 'chemometrician']);
	const technician = await actorFor('technician@demo.test', ['technician']);
	const chemist = await actorFor('chemist@demo.test', ['chemometrician']);

	// 1. The drifting supplier and its ten lots (screened on NIR-DOCK-1; the chart judges each lot as it completes).
	if (!(await exists(() => suppliers.get(DRIFT_SUPPLIER.code)))) await suppliers.create(admin, DRIFT_SUPPLIER, 'demo seed: a steady supplier whose lactose slowly takes up starch');
	const have = new Set((await lots.list({ material: DRIFT_MATERIAL, supplier: DRIFT_SUPPLIER.code, pageSize: 200 })).rows.map((r) => r.supplierLot));
	const dock = await instruments.get('NIR-DOCK-1');
	let received = 0;
	for (const spec of driftLots()) {
		if (have.has(spec.supplierLot)) continue;
		const receivedAt = spec.files[0].acquiredAt.slice(0, 10);
		const lot = await lots.create(technician, { material: spec.material, supplier: spec.supplier, supplierLot: spec.supplierLot, containers: spec.files.length, receivedAt }, `demo seed: ${spec.description}`);
		for (const f of spec.files) await scans.add(technician, lot.id, { bytes: f.bytes, fileName: f.name, container: f.container, instrumentId: dock.id });
		received++;
	}
	if (received) log(`[seed] drift: ${received} ${DRIFT_SUPPLIER.code} lots of ${DRIFT_MATERIAL} received and screened`);

	// 2. An instrument whose first wavelength check was due three weeks ago; its linearity and noise checks pass today.
	if (!(await exists(() => instruments.get(OVERDUE_INSTRUMENT.name)))) {
		const now = new Date();
		await instruments.create(
			admin,
			{ ...OVERDUE_INSTRUMENT, qualificationDue: `${now.getUTCFullYear() + 1}-06-30`, checksDueFrom: isoDay(new Date(now.getTime() - 21 * 86_400_000)) },
			'demo seed: a bench instrument whose wavelength check is overdue'
		);
		await checks.record(technician, OVERDUE_INSTRUMENT.name, { kind: 'linearity', readings: '0.02 0.021\n0.10 0.101\n0.40 0.398\n0.80 0.803\n0.99 0.992' });
		await checks.record(technician, OVERDUE_INSTRUMENT.name, { kind: 'noise' }, { bytes: noiseStandard(), fileName: 'nir-bench-2-noise.jdx' });
		log(`[seed] instruments: ${OVERDUE_INSTRUMENT.name} registered with its wavelength check overdue`);
	}

	// 3. A second dock instrument with LAC-200 transfer spectra and a transfer check that waits for QA.
	if (!(await exists(() => instruments.get(TRANSFER_INSTRUMENT.name)))) {
		await instruments.create(admin, { ...TRANSFER_INSTRUMENT, qualificationDue: `${new Date().getUTCFullYear() + 1}-06-30` }, 'demo seed: a second dock instrument');
	}
	const material = await materials.get(DRIFT_MATERIAL);
	const approved = await versions.approvedFor(material.id);
	if (!approved) return;
	const onDock2 = (await library.entriesOf(material.id, ['transfer'])).filter((e) => e.instrument === TRANSFER_INSTRUMENT.name);
	if (!onDock2.length) {
		const file = transferLibrary();
		await library.addFiles(chemist, material.id, [{ name: file.name, bytes: file.bytes }], { classColumn: 'class', roleColumn: 'role' });
		log(`[seed] ${DRIFT_MATERIAL}: ${file.rows} transfer spectra measured on ${TRANSFER_INSTRUMENT.name}`);
	}
	const view = await transfers.forVersion(approved.versionId);
	if (!view.transfers.some((t) => t.instrument === TRANSFER_INSTRUMENT.name)) {
		const t = await transfers.check(chemist, approved.versionId, { instrument: TRANSFER_INSTRUMENT.name, note: 'Demo: second dock instrument installed at goods-in; 12 genuine spectra from 3 lots' });
		log(`[seed] ${approved.label}: transfer check to ${TRANSFER_INSTRUMENT.name} ${t.state === 'proposed' ? 'waits for QA' : t.state}`);
	}
}
