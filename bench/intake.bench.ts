// Intake bench: 200 JCAMP-DX files of 2,000 points through POST /api/v1/spectra (target ≤ 3 s), and the server's
// server's peak memory rise for single-spectrum CSV files of 1, 5, 10 and 20 MB (the curve, issue 16 §1). Starts the embedded PostgreSQL (database lotgate_bench) and the built app itself.
//   npx tsx bench/intake.bench.ts            (builds the app first when build/ is missing)
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { loadavg } from 'node:os';
import { createServer } from 'node:net';
import { resolve } from 'node:path';
import { projectRoot } from '../scripts/lib/postgres';
import { freshBenchDatabase } from './support';
import { jcampFile } from '../tests/support/intake-files';

const FILES = 200;
const CURVE_MB = [1, 5, 10, 20];
const POINTS = 2000;
const TARGET_S = 3;

const freePort = () =>
	new Promise<number>((ok, fail) => {
		const s = createServer();
		s.once('error', fail);
		s.listen(0, '127.0.0.1', () => {
			const port = (s.address() as { port: number }).port;
			s.close(() => ok(port));
		});
	});

/** Peak and current resident set of a process, from /proc (Linux), in MB. */
function memoryOf(pid: number) {
	const status = readFileSync(`/proc/${pid}/status`, 'utf8');
	const kb = (key: string) => Number(new RegExp(`${key}:\\s+(\\d+)`).exec(status)?.[1] ?? NaN);
	return { peakMb: kb('VmHWM') / 1024, rssMb: kb('VmRSS') / 1024 };
}

/** Resets the process's peak resident set (VmHWM) to its current size, so the next peak is one request's own. */
function resetPeak(pid: number) {
	try {
		writeFileSync(`/proc/${pid}/clear_refs`, '5');
	} catch {
		// not permitted here: the peak then carries over from the previous, smaller file (still an upper bound)
	}
}

const loadAverage = () => loadavg().map((l) => l.toFixed(2)).join(', ');

/** A single-spectrum CSV ("x,y" lines, about 17 bytes each) of about `megabytes` MB, as the issue's load test sent. */
function largeCsv(megabytes: number): Uint8Array {
	const lines: string[] = ['wavenumber,absorbance'];
	let size = lines[0].length + 1;
	for (let i = 0; size < megabytes * 1048576 - 40; i++) {
		const line = `${(4000 + i * 0.001).toFixed(3)},${(0.4 + 0.3 * Math.sin(i / 5000)).toFixed(6)}`;
		lines.push(line);
		size += line.length + 1;
	}
	return Buffer.from(lines.join('\n') + '\n');
}

async function waitFor(url: string, timeoutMs = 60_000) {
	const until = Date.now() + timeoutMs;
	while (Date.now() < until) {
		try {
			if ((await fetch(url)).status < 500) return;
		} catch {
			/* not listening yet */
		}
		await new Promise((r) => setTimeout(r, 200));
	}
	throw new Error(`the app did not answer at ${url}`);
}

function post(base: string, token: string, files: { name: string; bytes: Uint8Array }[]) {
	const form = new FormData();
	for (const f of files) form.append('file', new Blob([f.bytes as BlobPart]), f.name);
	return fetch(`${base}/api/v1/spectra`, { method: 'POST', body: form, headers: { authorization: `Bearer ${token}` } });
}

const { url, closeDatabase } = await freshBenchDatabase('lotgate_bench');
const users = await import('../src/lib/server/services/users');
const instruments = await import('../src/lib/server/services/instruments');
const bootstrap = { id: null, label: 'bench', roles: ['admin' as const] };
const admin = await users.create(bootstrap, { email: 'bench-admin@bench.test', name: 'Bench admin', password: 'bench-password-1', roles: ['admin'] });
const adminActor = { id: admin.id, label: admin.name, roles: ['admin' as const] };
const instrument = await instruments.create(adminActor, { name: 'BENCH-NIR', technique: 'NIR', serial: 'B-1', axisUnit: 'nm', qualificationDue: '2999-12-31' });
const { token } = await instruments.createToken(adminActor, instrument.id, 'bench');
await closeDatabase();

if (!existsSync(resolve(projectRoot, 'build/index.js'))) {
	console.log('[bench] building the app…');
	const build = spawnSync('npx', ['vite', 'build', '--logLevel', 'error'], { cwd: projectRoot, stdio: 'inherit' });
	if (build.status !== 0) process.exit(1);
}

const port = await freePort();
const base = `http://127.0.0.1:${port}`;
const app: ChildProcess = spawn(process.execPath, [resolve(projectRoot, 'build/index.js')], {
	cwd: projectRoot,
	stdio: ['ignore', 'ignore', 'inherit'],
	env: {
		...process.env,
		DATABASE_URL: url,
		AUTH_SECRET: 'bench-secret',
		PORT: String(port),
		HOST: '127.0.0.1',
		ORIGIN: base,
		// adapter-node's own body limit (512 kB by default) must not cut a 20 MB file short; the route applies ours.
		BODY_SIZE_LIMIT: String(64 * 1024 * 1024)
	}
});
let exitCode = 0;
try {
	await waitFor(`${base}/login`);
	const pid = app.pid!;

	// Warm-up: the first request loads the route modules and opens database connections.
	const warm = await post(base, token, [{ name: 'warm-up.jdx', bytes: jcampFile(POINTS) }]);
	if (warm.status !== 201) throw new Error(`warm-up upload failed: ${warm.status} ${await warm.text()}`);
	const idle = memoryOf(pid);

	// Memory as files grow (issue 16 §1): single-spectrum CSV files of 1, 5, 10 and 20 MB, one request each. The peak
	// resident set is reset before each (/proc/PID/clear_refs, Linux), so each row is that file's own rise.
	const curve: { mb: number; points: number; seconds: number; riseMb: number; status: number }[] = [];
	for (const size of CURVE_MB) {
		const bytes = largeCsv(size);
		const before = memoryOf(pid);
		resetPeak(pid);
		const t0 = performance.now();
		const r = await post(base, token, [{ name: `large-${size}MB.csv`, bytes }]);
		const b = (await r.json()) as { files?: { points?: number; error?: { message: string } }[] };
		const seconds = (performance.now() - t0) / 1000;
		const after = memoryOf(pid);
		if (r.status !== 201) console.log(`[bench] the ${size} MB file was refused: ${r.status} ${b.files?.[0]?.error?.message}`);
		curve.push({ mb: bytes.length / 1048576, points: b.files?.[0]?.points ?? 0, seconds, riseMb: after.peakMb - before.rssMb, status: r.status });
		(globalThis as { gc?: () => void }).gc?.();
	}
	const big = curve[curve.length - 1];

	// 200 files of 2,000 points in one request (the batch limit), then the same count as 200 single-file requests, 8 at a time.
	const batch = Array.from({ length: FILES }, (_, i) => ({ name: `bench-${i}.jdx`, bytes: jcampFile(POINTS, `batch-${i}-${Date.now()}`) }));
	const t1 = performance.now();
	const res = await post(base, token, batch);
	const body = (await res.json()) as { stored?: number; refused?: number };
	const batchSeconds = (performance.now() - t1) / 1000;
	if (res.status !== 201 || body.stored !== FILES) throw new Error(`batch: HTTP ${res.status}, stored ${body.stored}, refused ${body.refused}`);

	const singles = Array.from({ length: FILES }, (_, i) => ({ name: `single-${i}.jdx`, bytes: jcampFile(POINTS, `single-${i}-${Date.now()}`) }));
	const t2 = performance.now();
	let next = 0;
	let failed = 0;
	await Promise.all(
		Array.from({ length: 8 }, async () => {
			while (next < singles.length) {
				const r = await post(base, token, [singles[next++]]);
				if (r.status !== 201) failed++;
				await r.arrayBuffer();
			}
		})
	);
	const singleSeconds = (performance.now() - t2) / 1000;
	const mb = (batch.reduce((s, f) => s + f.bytes.length, 0) / 1048576).toFixed(1);

	const pass = (s: number) => (s <= TARGET_S ? 'PASS' : 'FAIL');
	console.log(`intake: ${FILES} JCAMP-DX files × ${POINTS} points (${mb} MB), parsed, stored with raw bytes, SHA-256 and one audit event each`);
	console.log(`  one request of ${FILES} files         ${batchSeconds.toFixed(2)} s   target ≤ ${TARGET_S} s   ${pass(batchSeconds)}`);
	console.log(`  ${FILES} requests, 8 in parallel        ${singleSeconds.toFixed(2)} s   target ≤ ${TARGET_S} s   ${pass(singleSeconds)}${failed ? `   (${failed} failed)` : ''}`);
	console.log(`  server memory when idle: ${idle.rssMb.toFixed(0)} MB resident   (load average ${loadAverage()})`);
	console.log('  single-spectrum CSV through POST /api/v1/spectra: peak memory rise of the server, and time');
	console.log('    file MB   points      rise MB   × file   target ≤ 3×   time s   target ≤ 3 s');
	for (const c of curve) {
		const ratio = c.riseMb / c.mb;
		console.log(
			`    ${c.mb.toFixed(1).padStart(7)}   ${String(c.points).padStart(9)}   ${c.riseMb.toFixed(0).padStart(7)}   ${ratio.toFixed(1).padStart(6)}   ${(ratio <= 3 ? 'PASS' : 'FAIL').padEnd(11)}   ${c.seconds.toFixed(2).padStart(6)}   ${c.seconds <= 3 ? 'PASS' : 'FAIL'}${c.status !== 201 ? `   HTTP ${c.status}` : ''}`
		);
	}
	console.log(`  20 MB file: rise ${big.riseMb.toFixed(0)} MB (target ≤ ${(3 * big.mb).toFixed(0)} MB), ${big.seconds.toFixed(2)} s (target ≤ 3 s)`);
	if (batchSeconds > TARGET_S) exitCode = 1;
} catch (e) {
	console.error('[bench] failed:', e);
	exitCode = 1;
} finally {
	app.kill('SIGTERM');
	await new Promise((r) => app.once('exit', r));
}
process.exit(exitCode);
