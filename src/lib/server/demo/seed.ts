// The invented demo scenario (Quarrymoor Pharmaceuticals, demo only): accounts, suppliers, instruments, materials.
import { models } from '../db';
import { DEMO_ACCOUNTS } from './accounts';
import { type Actor } from '../services/actor';
import * as instruments from '../services/instruments';
import * as materials from '../services/materials';
import * as suppliers from '../services/suppliers';
import * as users from '../services/users';
import { config } from '../config';

export const DEMO_COMPANY = 'Quarrymoor Pharmaceuticals (demo)';

export { DEMO_ACCOUNTS };

export const demoPassword = () => config().LOTGATE_DEMO_PASSWORD;

const DEMO_SUPPLIERS = [
	{ code: 'NORDVIK', name: 'Nordvik Excipients', contacts: ['quality@nordvik.demo.test'], status: 'qualified' as const },
	{ code: 'PALMERA', name: 'Palmera Trading', contacts: ['sales@palmera.demo.test'], status: 'on-watch' as const },
	{ code: 'GRISEDALE', name: 'Grisedale Fine Chemicals', contacts: ['qa@grisedale.demo.test'], status: 'qualified' as const },
	{ code: 'ZEPHYRA', name: 'Zephyra Brokers', contacts: ['desk@zephyra.demo.test'], status: 'blocked' as const }
];

const nextYear = () => `${new Date().getUTCFullYear() + 1}-06-30`;
const DEMO_INSTRUMENTS = () => [
	{ name: 'NIR-DOCK-1', technique: 'NIR' as const, serial: 'QM-HN-0142', axisUnit: 'nm' as const, qualificationDue: nextYear() },
	{ name: 'NIR-BENCH-1', technique: 'NIR' as const, serial: 'QM-BN-0007', axisUnit: 'nm' as const, qualificationDue: nextYear() },
	{ name: 'RAMAN-1', technique: 'Raman' as const, serial: 'QM-RP-0031', axisUnit: 'cm-1' as const, qualificationDue: nextYear() }
];

export const DEMO_MATERIALS = [
	{
		code: 'LAC-200',
		name: 'Lactose monohydrate 200 mesh',
		technique: 'NIR' as const,
		samplingPolicy: 'reduced-allowed' as const,
		samplingJustification: 'Demo: qualified suppliers with a validated supply chain may use the WHO TRS 929 n-plan.',
		recipients: ['qa-release@quarrymoor.demo.test'],
		classes: [
			{ name: 'genuine', kind: 'genuine' as const, description: 'Lactose monohydrate 200 mesh from qualified sources' },
			{ name: 'diluted-starch', kind: 'suspect' as const, description: 'Diluted with about 20 % maize starch' },
			{ name: 'anhydrous-grade', kind: 'suspect' as const, description: 'Substituted grade: anhydrous lactose' }
		]
	},
	{
		code: 'MCC-100',
		name: 'Microcrystalline cellulose, 100 µm grade',
		technique: 'NIR' as const,
		samplingPolicy: 'every-container' as const,
		recipients: ['qa-release@quarrymoor.demo.test'],
		classes: [
			{ name: 'genuine', kind: 'genuine' as const, description: 'Microcrystalline cellulose, 100 µm' },
			{ name: 'powdered-cellulose', kind: 'suspect' as const, description: 'Substituted with powdered cellulose' }
		]
	},
	{
		code: 'CIT-ANH',
		name: 'Citric acid anhydrous',
		technique: 'Raman' as const,
		samplingPolicy: 'every-container' as const,
		recipients: ['qa-release@quarrymoor.demo.test'],
		classes: [
			{ name: 'genuine', kind: 'genuine' as const, description: 'Citric acid anhydrous' },
			{ name: 'monohydrate-grade', kind: 'suspect' as const, description: 'Substituted grade: citric acid monohydrate' }
		]
	}
];

/** Idempotent: a second run finds everything in place and changes nothing. */
export async function seedDemo(log: (line: string) => void = console.log) {
	for (const account of DEMO_ACCOUNTS) await users.upsertForSeed({ ...account, password: demoPassword() });
	const adminUser = await users.findByEmail('admin@demo.test');
	const admin: Actor = { id: adminUser!.id, label: adminUser!.name, roles: ['admin', 'procurement', 'chemometrician'], requestId: 'demo-seed' };
	const { Supplier, Instrument, Material } = models();
	for (const s of DEMO_SUPPLIERS) if (!(await Supplier.findOne({ where: { code: s.code } }))) await suppliers.create(admin, s, 'demo seed');
	for (const i of DEMO_INSTRUMENTS()) if (!(await Instrument.findOne({ where: { name: i.name } }))) await instruments.create(admin, i, 'demo seed');
	for (const { classes, ...m } of DEMO_MATERIALS) {
		if (await Material.findOne({ where: { code: m.code } })) continue;
		const created = await materials.create(admin, m, 'demo seed');
		for (const c of classes) await materials.addClass(admin, created.id, c, 'demo seed');
	}
	// Later workflows (library, models, lots) add their demo steps here, each idempotent.
	await (await import('./method-development')).seedMethodDevelopment((await import('../../demo')).demoScenario().libraryFiles, demoPassword(), log);
	await (await import('./lots-demo')).seedDemoLots(log);
	await (await import('./disposition-demo')).seedDemoDispositions(demoPassword(), log);
	await (await import('./monitoring-demo')).seedMonitoringDemo(log);
	// after the lots are screened with LAC-200 v1, so the tree version changes none of their verdicts
	await (await import('./tree-demo')).seedTreeDemo((await import('../../demo')).demoScenario().treeFiles, log);
	// The release above writes an audit checkpoint in the background; the caller closes the database next.
	await (await import('../audit-checkpoint')).checkpointsSettled();
	log(`[seed] demo scenario "${DEMO_COMPANY}" is in place`);
}
