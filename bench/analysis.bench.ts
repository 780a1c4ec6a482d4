// Analysis engine benchmark: prints each figure next to its target (issue 3, Performance).
// Synthetic data generated here: 500 spectra × 2000 points, three classes of a smooth NIR-like family.
import os from 'node:os';
import { buildModel, pca, prepareArtefact, screen, type TrainingSpectrum } from '../src/lib/analysis';
import { createRng } from '../src/lib/analysis/prng';

const N = 500;
const P = 2000;

const rng = createRng(7);
const gauss = rng.normal;

const axis = Array.from({ length: P }, (_, j) => 1000 + j * 0.5);
const band = (c: number, w: number) => axis.map((x) => Math.exp(-(((x - c) / w) ** 2)));
const bands = [band(1200, 40), band(1450, 25), band(1700, 60), band(1930, 30), band(1550, 80), band(1800, 15)];
const classShift = [
	[1, 0.6, 0.3, 0.5, 0.2, 0.1],
	[1, 0.55, 0.35, 0.5, 0.25, 0.1],
	[0.9, 0.6, 0.3, 0.6, 0.2, 0.15]
];

function spectrum(cls: number): number[] {
	const w = classShift[cls].map((b) => b * (1 + 0.05 * gauss()));
	const offset = 0.02 * gauss();
	const slope = 0.00001 * gauss();
	return axis.map((x, j) => {
		let y = offset + slope * (x - 1000);
		for (let k = 0; k < bands.length; k++) y += w[k] * bands[k][j];
		return y + 0.002 * gauss();
	});
}

const names = ['genuine', 'diluted', 'swapped'];
const training: TrainingSpectrum[] = Array.from({ length: N }, (_, i) => {
	const cls = Math.floor((i * 3) / N);
	return { id: `s${i}`, axis, values: spectrum(cls), unit: 'nm', className: names[cls] };
});

const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
// CPU time of this process, beside wall time: other jobs on this 2-core machine inflate wall time, not this
const cpuMs = (since: NodeJS.CpuUsage) => {
	const c = process.cpuUsage(since);
	return (c.user + c.system) / 1000;
};
const line = (label: string, value: string, target: string, ok: boolean) =>
	console.log(`${label.padEnd(58)} ${value.padStart(12)}   target ${target.padEnd(10)} ${ok ? 'ok' : 'MISSED'}`);

// 1. exact top-10 PCA of the centred 500×2000 matrix
const X = new Float64Array(N * P);
for (let j = 0; j < P; j++) {
	let m = 0;
	for (let i = 0; i < N; i++) m += training[i].values[j] as number;
	m /= N;
	for (let i = 0; i < N; i++) X[i * P + j] = (training[i].values[j] as number) - m;
}
const pcaTimes: number[] = [];
const pcaCpu: number[] = [];
for (let r = 0; r < 5; r++) {
	const c = process.cpuUsage();
	const t = performance.now();
	pca({ data: X, rows: N, cols: P }, 10);
	pcaTimes.push(performance.now() - t);
	pcaCpu.push(cpuMs(c));
}
const pcaMs = median(pcaTimes);

// 2. complete two-stage build: family + 3 class models, auto components, 7-fold CV limits
const buildTimes: number[] = [];
const buildCpu: number[] = [];
let artefact = buildModel(training);
for (let r = 0; r < 2; r++) {
	const c = process.cpuUsage();
	const t = performance.now();
	artefact = buildModel(training);
	buildTimes.push(performance.now() - t);
	buildCpu.push(cpuMs(c));
}
const buildMs = Math.min(...buildTimes);

// 3. one spectrum through family + 3 class models (artefact prepared once, as the app caches it)
const prep = prepareArtefact(artefact);
const probes = Array.from({ length: 200 }, (_, i) => ({ id: `p${i}`, axis, values: spectrum(i % 3), unit: 'nm' as const }));
for (const s of probes) screen(prep, s);
const screenTimes: number[] = [];
const screenCpu0 = process.cpuUsage();
for (let rep = 0; rep < 10; rep++)
	for (const s of probes) {
		const t = performance.now();
		screen(prep, s);
		screenTimes.push(performance.now() - t);
	}
const screenCpuMs = cpuMs(screenCpu0) / screenTimes.length;
const screenMs = median(screenTimes);

const peakMb = process.resourceUsage().maxRSS / 1024;

console.log(`analysis bench: ${N} spectra × ${P} points, Node ${process.version}`);
line('exact top-10 PCA of 500×2000 (median of 5)', `${pcaMs.toFixed(0)} ms`, '≤ 250 ms', pcaMs <= 250);
line('two-stage build: family + 3 classes, auto A, 7-fold CV (best of 2)', `${buildMs.toFixed(0)} ms`, '≤ 3000 ms', buildMs <= 3000);
line('screen one spectrum, family + 3 class models (median)', `${(screenMs * 1000).toFixed(0)} µs`, '≤ 100 µs', screenMs <= 0.1);
line('peak memory (max RSS of this process)', `${peakMb.toFixed(0)} MB`, '≤ 400 MB', peakMb <= 400);
console.log(
	`CPU time (less sensitive to other load): PCA median ${median(pcaCpu).toFixed(0)} ms, build best ${Math.min(...buildCpu).toFixed(0)} ms, ` +
		`screen mean ${(screenCpuMs * 1000).toFixed(0)} µs (includes the timer calls); load average ${os.loadavg()[0].toFixed(1)} on ${os.cpus().length} cores`
);
console.log(
	`components: family ${artefact.family.components}, ${artefact.classes.map((c) => `${c} ${artefact.models[c].components}`).join(', ')}; ` +
		`CV false-reject rate at α = 0.05: ${artefact.classes.map((c) => artefact.models[c].cvFalseRejectRate.toFixed(3)).join(', ')}`
);
