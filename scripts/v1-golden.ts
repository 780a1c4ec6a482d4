// Freezes schemaVersion 1 artefacts and their screening results, made by the engine before model trees
// (commit e8fa96b). tests/unit/analysis/tree-v1.test.ts checks that today's engine screens them identically.
// Run once: npx tsx scripts/v1-golden.ts (re-running it with a newer engine would prove nothing).
import { readFileSync, writeFileSync } from 'node:fs';
import { buildModel, screen, serializeArtefact, type TrainingSpectrum } from '../src/lib/analysis';

function readLibrary(file: string): (TrainingSpectrum & { role: string })[] {
	const lines = readFileSync(file, 'utf8').trim().split(/\r?\n/);
	const head = lines[0].split(',');
	const first = head.findIndex((h) => /^\d/.test(h));
	const axis = head.slice(first).map(Number);
	return lines.slice(1).map((l) => {
		const c = l.split(',');
		return { id: c[0], className: c[1], role: c[5], axis, values: c.slice(first).map(Number), unit: 'nm' as const };
	});
}

function iris(): TrainingSpectrum[] {
	return readFileSync('fixtures/open/iris.csv', 'utf8')
		.trim()
		.split(/\r?\n/)
		.slice(1)
		.map((l) => {
			const c = l.split(',');
			return { id: c[0], className: c[1], axis: [1, 2, 3, 4], values: c.slice(2).map(Number), unit: 'nm' as const };
		});
}

const round = (x: unknown): unknown =>
	typeof x === 'number' ? (Number.isFinite(x) ? Number(x.toPrecision(12)) : null) : Array.isArray(x) ? x.map(round) : x && typeof x === 'object' ? Object.fromEntries(Object.entries(x).map(([k, v]) => [k, round(v)])) : x;

// Iris: setosa as "genuine", the two others as suspect profiles; every flower screened.
const ir = iris();
const irisArtefact = buildModel(ir, { genuine: 'setosa', components: 2, meta: { material: 'iris' } });
writeFileSync('fixtures/v1/iris.model.json', serializeArtefact(irisArtefact));
writeFileSync('fixtures/v1/iris.results.json', JSON.stringify(round(ir.map((s) => screen(irisArtefact, s))), null, 1));

// Demo lactose library: training rows build, every row (test and challenge too) screened.
const lac = readLibrary('fixtures/demo/library/LAC-200.csv');
const lacArtefact = buildModel(
	lac.filter((s) => s.role === 'training'),
	{ recipe: 'snv, savgol(11,2,1), center', meta: { material: 'LAC-200' } }
);
writeFileSync('fixtures/v1/lac.model.json', serializeArtefact(lacArtefact));
writeFileSync('fixtures/v1/lac.results.json', JSON.stringify(round(lac.map((s) => screen(lacArtefact, s))), null, 1));
console.log('written');
