// Demo step of the lot workflow: the technician receives the demo deliveries and uploads their container scans, so
// the demo shows every verdict (genuine, suspect, unknown, not this material, unusable). Idempotent: a lot already received
// is left as it is, except that scans stored while no model was approved are screened once one is.
import { QueryTypes } from 'sequelize';
import { demoScenario } from '../../demo';
import { sequelize } from '../db';
import type { Actor } from '../services/actor';
import * as lots from '../services/lots';
import * as scans from '../services/scans';
import * as users from '../services/users';

export async function seedDemoLots(log: (line: string) => void = console.log) {
	const user = await users.findByEmail('technician@demo.test');
	if (!user) throw new Error('demo technician account is missing: seed the accounts first');
	const technician: Actor = { id: user.id, label: user.name, roles: ['technician'], requestId: 'demo-seed' };
	const instruments = new Map(
		(await sequelize().query<{ id: number; name: string }>('SELECT id, name FROM instruments', { type: QueryTypes.SELECT })).map((i) => [i.name, Number(i.id)])
	);
	let received = 0;
	let uploaded = 0;
	for (const spec of demoScenario().lots) {
		const existing = await sequelize().query<{ id: number; identity: string | null }>(
			`SELECT l.id, l.identity FROM lots l JOIN materials m ON m.id = l.material_id JOIN suppliers s ON s.id = l.supplier_id
			  WHERE m.code = :material AND s.code = :supplier AND l.supplier_lot = :supplierLot`,
			{ replacements: { material: spec.material, supplier: spec.supplier, supplierLot: spec.supplierLot }, type: QueryTypes.SELECT }
		);
		if (existing[0]) {
			if (existing[0].identity === 'not-screened' && (await scans.approvedModel((await lots.lotRow(Number(existing[0].id))).material_id))) {
				await scans.rescreen(technician, Number(existing[0].id), 'demo seed: the material now has an approved model');
			}
			continue;
		}
		const receivedAt = (spec.files[0]?.acquiredAt ?? new Date().toISOString()).slice(0, 10);
		const lot = await lots.create(technician, { material: spec.material, supplier: spec.supplier, supplierLot: spec.supplierLot, containers: spec.files.length, receivedAt }, `demo seed: ${spec.description}`);
		received++;
		for (const f of spec.files) {
			await scans.add(technician, lot.id, { bytes: f.bytes, fileName: f.name, container: f.container, instrumentId: instruments.get(f.instrument) ?? null });
			uploaded++;
		}
	}
	log(`[seed] lots: ${received} received, ${uploaded} scans uploaded`);
}
