// Model-build benchmark (issue 5, Performance): a build job for 500 spectra × 2,000 points, 4 classes, auto components,
// CV limits, database I/O included (load spectra, build, screen the library for evidence, store artefact and figures);
// and the version page's server data (the services its load calls). Prints each figure next to its target.
import { freshBenchDatabase, reportMs } from './support';

const N = 500;
const P = 2000;

async function main() {
	const { closeDatabase } = await freshBenchDatabase('lotgate_bench_models');
	const materials = await import('../src/lib/server/services/materials');
	const versions = await import('../src/lib/server/services/model-versions');
	const users = await import('../src/lib/server/services/users');
	const { insertLibrary } = await import('../tests/support/library-fixtures');

	const root = { id: null, label: 'bench', roles: ['admin', 'chemometrician'] as ('admin' | 'chemometrician')[] };
	const chemist = await users.create(root, { email: 'bench-chemist@bench.test', name: 'Bench Chemist', password: 'bench-password-1', roles: ['chemometrician'] });
	const m = await materials.create(root, { code: 'BENCH-1', name: 'Bench material', technique: 'NIR' });
	const classes: [string, 'genuine' | 'diluted' | 'substituted' | 'alien'][] = [['genuine', 'genuine'], ['diluted', 'diluted'], ['substituted', 'substituted'], ['other-grade', 'alien']];
	for (const [name] of classes) await materials.addClass(root, m.id, { name, kind: name === 'genuine' ? 'genuine' : 'suspect', description: name });
	const rows = Array.from({ length: N }, (_, i) => {
		const [label, kind] = classes[Math.floor((i * classes.length) / N)];
		return { label, kind, role: 'training' as const, lot: `${label}-L${Math.floor(i / 5)}` };
	});
	const t0 = performance.now();
	await insertLibrary(m.id, rows, 11, P);
	console.log(`setup: ${N} spectra × ${P} points stored in ${((performance.now() - t0) / 1000).toFixed(1)} s (not timed)`);

	const actor = { id: chemist.id, label: chemist.name, roles: ['chemometrician' as const] };
	const b0 = performance.now();
	const { id } = await versions.createBuild(actor, m.id, { recipe: 'snv,center', components: 'auto', familyComponents: 'auto', limits: 'cv', folds: 7 }, { inline: true });
	const buildMs = performance.now() - b0;
	const v = await versions.get(id);
	if (v.state !== 'draft') throw new Error(`build ended ${v.state}: ${v.error}`);

	const samples: number[] = [];
	for (let i = 0; i < 7; i++) {
		const s0 = performance.now();
		await versions.pageData(id);
		samples.push(performance.now() - s0);
	}
	samples.sort((a, b) => a - b);
	const median = samples[Math.floor(samples.length / 2)];
	const line = (label: string, ms: number, target: number) => reportMs(label, ms, target, 58);
	line(`build job (${N}×${P}, ${classes.length} classes, auto A, CV limits, DB I/O)`, buildMs, 5000);
	line("version page server load (median of 7)", median, 300);
	console.log(`  models: ${v.figures!.models.map((x) => `${x.name} A=${x.components}`).join(', ')}; engine-side build ${v.figures!.buildMs} ms`);
	await closeDatabase();
}

main().then(
	() => process.exit(0),
	(e) => {
		console.error(e);
		process.exit(1);
	}
);
