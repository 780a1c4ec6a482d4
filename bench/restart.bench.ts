// Restart bench (issue 16 §6): `npm start` after the launcher and the app were killed with SIGKILL, nothing changed,
// from the command to the sign-in page answering. Target ≤ 10 s. The first start may build, migrate and seed (shown,
// not judged); then two kill -9 restarts are timed. Uses the embedded database of `npm start` itself, on port
// LOTGATE_BENCH_PORT (3177). Skips when an `npm start` of this checkout is running (it would be stopped).
//   npx tsx bench/restart.bench.ts
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { loadavg } from 'node:os';
import { resolve } from 'node:path';
import { projectRoot } from '../scripts/lib/postgres';

const TARGET_S = 10;
const port = Number(process.env.LOTGATE_BENCH_PORT ?? 3177);
const load = () => loadavg().map((l) => l.toFixed(1)).join(', ');

function running(pidFile: string) {
	if (!existsSync(pidFile)) return false;
	const pid = Number(readFileSync(pidFile, 'utf8'));
	return pid > 0 && existsSync(`/proc/${pid}`) && readFileSync(`/proc/${pid}/cmdline`, 'utf8').includes('start');
}

async function answering(child: ChildProcess, timeoutMs: number) {
	const until = Date.now() + timeoutMs;
	while (Date.now() < until && child.exitCode == null) {
		try {
			const r = await fetch(`http://127.0.0.1:${port}/login`, { redirect: 'manual' });
			await r.arrayBuffer();
			if (r.status < 500) return true;
		} catch {
			// not listening yet
		}
		await new Promise((r) => setTimeout(r, 50));
	}
	return false;
}

/** CPU seconds used so far by the processes of a group (and their waited-for children), from /proc (Linux). */
function groupCpuSeconds(pgid: number) {
	let ticks = 0;
	for (const pid of readdirSync('/proc').filter((d) => /^\d+$/.test(d))) {
		try {
			const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
			const f = stat.slice(stat.lastIndexOf(')') + 2).split(' '); // fields from the state on (field 3)
			if (Number(f[2]) !== pgid) continue;
			ticks += Number(f[11]) + Number(f[12]) + Number(f[13]) + Number(f[14]); // utime stime cutime cstime
		} catch {
			// gone meanwhile
		}
	}
	return ticks / 100; // USER_HZ
}

/** `npm start` in its own process group; resolves when /login answers. */
async function start(timeoutMs: number) {
	const before = load();
	const t0 = performance.now();
	const child = spawn('npm', ['start'], { cwd: projectRoot, env: { ...process.env, PORT: String(port) }, detached: true, stdio: ['ignore', 'pipe', 'pipe'] });
	let output = '';
	child.stdout!.on('data', (d) => (output += d));
	child.stderr!.on('data', (d) => (output += d));
	const ok = await answering(child, timeoutMs);
	const seconds = (performance.now() - t0) / 1000;
	if (!ok) throw new Error(`npm start did not serve on port ${port}:\n${output.slice(-3000)}`);
	// the launcher prints its banner (with the phases) just after the app first answers
	for (let i = 0; i < 100 && !/ready in/.test(output); i++) await new Promise((r) => setTimeout(r, 100));
	const banner = /\(ready in [^)]*\)/.exec(output)?.[0] ?? '';
	return { child, seconds, cpu: groupCpuSeconds(child.pid!), banner, load: before, built: output.includes('building the app') };
}

async function main() {
	if (running(resolve(projectRoot, '.data/app.pid'))) {
		console.log('skipped: an `npm start` of this checkout is running (stop it to measure restarts)');
		return;
	}
	const first = await start(30 * 60_000);
	console.log('(CPU: seconds of processor time used by npm, the launcher and the app until the sign-in page answered; on a busy machine the wall time is several times that)');
	console.log(`first npm start ${first.built ? '(built the app) ' : ''}${first.seconds.toFixed(1)} s (not judged; load ${first.load}) ${first.banner}`);
	let last = first;
	const times: number[] = [];
	for (let i = 0; i < 2; i++) {
		process.kill(-last.child.pid!, 'SIGKILL'); // the launcher, npm and the app: a crash, not a shutdown
		await new Promise((r) => setTimeout(r, 500));
		last = await start(5 * 60_000);
		times.push(last.seconds);
		console.log(
			`npm start after kill -9, nothing changed   ${last.seconds.toFixed(1).padStart(5)} s   target ≤ ${TARGET_S} s   ${last.seconds <= TARGET_S ? 'OK' : 'OVER'}   CPU ${last.cpu.toFixed(1)} s   (load before ${last.load}) ${last.banner}`
		);
	}
	process.kill(-last.child.pid!, 'SIGTERM'); // a clean stop this time (stops the embedded PostgreSQL)
	await new Promise((r) => setTimeout(r, 3000));
}

main().then(
	() => process.exit(0),
	(e) => {
		console.error(e);
		process.exit(1);
	}
);
