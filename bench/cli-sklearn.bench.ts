// The command line against LAPACK-backed Python, side by side in one run (issue 16 §3): `lotgate build` on a 500 × 2000
// CSV matrix (10 components, training limits; family + 3 class models), whole process, against scikit-learn's
// full-SVD PCA fit (10 components) after `numpy.loadtxt` of the same file, also whole process. Uses Debian's
// python3-sklearn when present and skips the peer with a message when not. Best of 3 wall times each, with the load
// average beside them (2 cores shared: wall time is inflated by other jobs).
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { projectRoot } from '../scripts/lib/postgres';
import { csvMatrix, type FixtureRow } from '../tests/support/library-fixtures';

const N = 500;
const P = 2000;
const A = 10;
const RUNS = 3;
const load = () => loadavg().map((l) => l.toFixed(2)).join(', ');

/** dist/lotgate.js must be current, or bin/lotgate.js would time the TypeScript sources through tsx. */
function distIsCurrent(): boolean {
	const compiled = resolve(projectRoot, 'dist/lotgate.js');
	if (!existsSync(compiled)) return false;
	const builtAt = statSync(compiled).mtimeMs;
	const inputs = JSON.parse(readFileSync(resolve(projectRoot, 'dist/lotgate.inputs.json'), 'utf8')) as string[];
	return inputs.every((f) => !existsSync(resolve(projectRoot, f)) || statSync(resolve(projectRoot, f)).mtimeMs <= builtAt);
}

function best(label: string, command: string, args: string[]): number {
	const times: number[] = [];
	for (let r = 0; r < RUNS; r++) {
		const t = performance.now();
		const run = spawnSync(command, args, { cwd: projectRoot, encoding: 'utf8' });
		times.push(performance.now() - t);
		if (run.status !== 0) throw new Error(`${label} failed (${run.status}): ${run.stderr || run.stdout}`);
	}
	return Math.min(...times);
}

const dir = mkdtempSync(join(tmpdir(), 'lotgate-cli-bench-'));
try {
	if (!distIsCurrent()) {
		console.log('[bench] compiling the command line (dist/) first');
		const b = spawnSync(process.execPath, [resolve(projectRoot, 'scripts/build.mjs'), '--dist-only'], { cwd: projectRoot, stdio: 'inherit' });
		if (b.status !== 0) process.exit(1);
	}
	const labels = ['genuine', 'diluted', 'substituted'] as const;
	const rows: FixtureRow[] = Array.from({ length: N }, (_, i) => {
		const label = labels[Math.floor((i * labels.length) / N)];
		return { label, kind: label, role: 'training', lot: `${label}-L${Math.floor(i / 5)}` };
	});
	const csv = join(dir, 'train.csv');
	writeFileSync(csv, csvMatrix(rows, 16, P));
	const model = join(dir, 'model.json');
	const cliArgs = [resolve(projectRoot, 'bin/lotgate.js'), 'build', '--train', csv, '--out', model, '--recipe', 'center', '--components', String(A), '--family-components', String(A), '--limits', 'training', '--class-column', 'class', '--genuine', 'genuine'];
	const cliMs = best('lotgate build', process.execPath, cliArgs);
	const cliLoad = load();

	// Debian's interpreter, where python3-sklearn installs (a pyenv or venv python3 earlier on PATH would not see it).
	const pythonBin = existsSync('/usr/bin/python3') ? '/usr/bin/python3' : 'python3';
	const python = spawnSync(pythonBin, ['-c', 'import sklearn, numpy; print(sklearn.__version__, numpy.__version__)'], { encoding: 'utf8' });
	const peer = python.status === 0 ? python.stdout.trim() : null;
	console.log(`lotgate build (${N} × ${P}, ${A} components, --limits training; family + 3 class models), whole process, best of ${RUNS}`);
	console.log(`  ${'lotgate build (node bin/lotgate.js)'.padEnd(58)} ${(cliMs / 1000).toFixed(2).padStart(7)} s   (load average ${cliLoad})`);
	if (!peer) {
		console.log('  scikit-learn: skipped (Debian package python3-sklearn is not installed: apt-get install python3-sklearn)');
		console.log(`  ratio to scikit-learn: not measured   target ≤ 1.0×`);
	} else {
		const script = join(dir, 'peer.py');
		writeFileSync(
			script,
			[
				'import sys, numpy as np',
				'from sklearn.decomposition import PCA',
				`X = np.loadtxt(sys.argv[1], delimiter=',', skiprows=1, usecols=range(4, ${4 + P}))`,
				`PCA(n_components=${A}, svd_solver='full').fit(X)`
			].join('\n')
		);
		const peerMs = best('scikit-learn', pythonBin, [script, csv]);
		const ratio = cliMs / peerMs;
		console.log(`  ${`scikit-learn ${peer.split(' ')[0]} PCA(svd_solver='full') after numpy.loadtxt`.padEnd(58)} ${(peerMs / 1000).toFixed(2).padStart(7)} s   (load average ${load()})`);
		console.log(`  ratio lotgate / scikit-learn ${ratio.toFixed(2)}×   target ≤ 1.0×   ${ratio <= 1 ? 'ok' : 'MISSED'}`);
	}
} finally {
	rmSync(dir, { recursive: true, force: true });
}
