// Intake bench: 200 JCAMP-DX files of 2,000 points through POST /api/v1/spectra (target ≤ 3 s), and the server's
// peak memory for one 20 MB file. Starts the embedded PostgreSQL (database lotgate_bench) and the built app itself.
//   npx tsx bench/intake.bench.ts            (builds the app first when build/ is missing)
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { resolve } from 'node:path';
import { projectRoot } from '../scripts/lib/postgres';
import { freshBenchDatabase } from './support';
import { jcampFile, largeJcamp } from '../tests/support/intake-files';

const FILES = 200;
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

	// One 20 MB file: the peak resident memory of the server while it is parsed and stored.
	const big = largeJcamp(20 - 0.05);
	const t0 = performance.now();
	const bigRes = await post(base, token, [{ name: 'large-20MB.jdx', bytes: big }]);
	const bigBody = (await bigRes.json()) as { files?: { points?: number; error?: { message: string } }[] };
	const bigSeconds = (performance.now() - t0) / 1000;
	const afterBig = memoryOf(pid);
	if (bigRes.status !== 201) console.log(`[bench] the 20 MB file was refused: ${bigRes.status} ${bigBody.files?.[0]?.error?.message}`);

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
	console.log(`  one ${(big.length / 1048576).toFixed(1)} MB file (${bigBody.files?.[0]?.points ?? '?'} points)   ${bigSeconds.toFixed(2)} s   HTTP ${bigRes.status}`);
	console.log(`  server memory: ${idle.rssMb.toFixed(0)} MB resident when idle, peak ${afterBig.peakMb.toFixed(0)} MB during the 20 MB file (${(afterBig.peakMb - idle.rssMb).toFixed(0)} MB above idle, ${((afterBig.peakMb - idle.rssMb) / (big.length / 1048576)).toFixed(1)}× the file)`);
	if (batchSeconds > TARGET_S) exitCode = 1;
} catch (e) {
	console.error('[bench] failed:', e);
	exitCode = 1;
} finally {
	app.kill('SIGTERM');
	await new Promise((r) => app.once('exit', r));
}
process.exit(exitCode);
