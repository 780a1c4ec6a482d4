// Identification bench (issue 13 §2): one spectrum against 50 materials' family models, target ≤ 5 ms.
// The 50 family models are built from the invented demo MCC library (701 points, 1100–2500 nm, 2 nm) with 50
// different seeds of its spectra, each prepared once as the server caches them.
import os from 'node:os';
import { buildModel, identify, prepareArtefact, type FamilyCandidate } from '../src/lib/analysis';
import { demoScenario, treeLibrary } from '../src/lib/demo';
import { sealArtefact } from '../src/lib/analysis/integrity';

const scenario = demoScenario();
const mcc = scenario.library.filter((r) => r.material === 'MCC-100' && r.role === 'training');
const base = buildModel(
	mcc.map((r) => ({ id: r.id, axis: r.axis, values: r.values, unit: r.unit })),
	{ recipe: 'snv, savgol(11,2,1), center', meta: { material: 'MCC-100' } }
);
// 50 materials: the same model shape, prepared separately (distinct objects, so nothing is shared between them)
const families: FamilyCandidate[] = Array.from({ length: 50 }, (_, k) => ({ material: `M${k + 1}`, prepared: prepareArtefact(JSON.parse(JSON.stringify(base))) }));
// worst case: every material with its own recipe (here: the same steps, but a distinct axis key per material, so
// nothing is shared)
const distinct: FamilyCandidate[] = families.map((f, k) => {
	const a = JSON.parse(JSON.stringify(base));
	a.axis.x = a.axis.x.map((x: number) => x + k * 1e-9);
	const { integrity: _drop, ...content } = a;
	return { material: f.material, prepared: prepareArtefact(sealArtefact(content)) };
});
const probes = treeLibrary({ step: 2 }).filter((r) => r.role !== 'training');

function measure(cands: FamilyCandidate[]): { med: number; cpu: number } {
	for (const s of probes) identify(s, cands);
	const times: number[] = [];
	const c0 = process.cpuUsage();
	for (let rep = 0; rep < 5; rep++)
		for (const s of probes) {
			const t = performance.now();
			identify(s, cands);
			times.push(performance.now() - t);
		}
	const c = process.cpuUsage(c0);
	times.sort((a, b) => a - b);
	return { med: times[Math.floor(times.length / 2)], cpu: (c.user + c.system) / 1000 / times.length };
}
const shared = measure(families);
const worst = measure(distinct);
const line = (label: string, ms: number, ok: boolean) => console.log(`${label.padEnd(70)} ${`${ms.toFixed(2)} ms`.padStart(10)}   target ≤ 5 ms   ${ok ? 'ok' : 'MISSED'}`);
console.log(`identification bench: ${families.length} family models × ${base.axis.points} points (A = ${base.family.components}), Node ${process.version}`);
line('one spectrum, 50 family models, one instrument axis and recipe (median)', shared.med, shared.med <= 5);
line('  same, CPU time per spectrum (less sensitive to other load)', shared.cpu, shared.cpu <= 5);
line('one spectrum, 50 family models, 50 distinct axes/recipes (median)', worst.med, worst.med <= 5);
line('  same, CPU time per spectrum', worst.cpu, worst.cpu <= 5);
console.log(`load average ${os.loadavg()[0].toFixed(1)} on ${os.cpus().length} cores`);
