// Demo step of the disposition workflow: qa@demo.test releases the Raman citric acid lot, so a fresh start shows a
// signed disposition with its certificate and e-mail. The failed lactose lots are left for QA to try the two-person
// rule. Idempotent: a lot that already has a disposition is left as it is.
import { QueryTypes } from 'sequelize';
import { demoScenario } from '../../demo';
import { sequelize } from '../db';
import * as dispositions from '../services/dispositions';
import * as users from '../services/users';

export async function seedDemoDispositions(password: string, log: (line: string) => void = console.log) {
	const user = await users.findByEmail('qa@demo.test');
	if (!user) throw new Error('demo QA account is missing: seed the accounts first');
	const qa = { id: user.id, label: user.name, roles: ['qa' as const], requestId: 'demo-seed' };
	const spec = demoScenario().lots.find((l) => l.lotKey === 'cit-good');
	if (!spec) return;
	const [lot] = await sequelize().query<{ id: number; identity: string | null; n: string }>(
		`SELECT l.id, l.identity, (SELECT count(*) FROM dispositions d WHERE d.lot_id = l.id) AS n
		   FROM lots l JOIN materials m ON m.id = l.material_id WHERE m.code = :material AND l.supplier_lot = :supplierLot`,
		{ replacements: { material: spec.material, supplierLot: spec.supplierLot }, type: QueryTypes.SELECT }
	);
	if (!lot || Number(lot.n) > 0 || lot.identity !== 'meets') return;
	await dispositions.dispose(qa, Number(lot.id), { decision: 'release', password, meaning: 'released for use', reason: 'Demo: every container genuine on the approved Raman model' });
	log('[seed] dispositions: the citric acid demo lot released by qa@demo.test');
}
