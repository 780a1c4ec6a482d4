// Real app and worker processes for tests that need more than one (scale-out): the built web server (`node build`)
// and `bin/worker.js`, each with its own environment, on loopback ports chosen by the operating system.
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { existsSync, readdirSync, statSync } from 'node:fs';
import { createServer } from 'node:net';
import { join, resolve } from 'node:path';
import { projectRoot } from '../../scripts/lib/postgres';

function newest(path: string): number {
	if (!existsSync(path)) return 0;
	const stat = statSync(path);
	if (!stat.isDirectory()) return stat.mtimeMs;
	let latest = 0;
	for (const entry of readdirSync(path)) latest = Math.max(latest, newest(join(path, entry)));
	return latest;
}

/** Builds the web server (vite build) unless build/index.js is newer than every source, static file and config. */
export function ensureAppBuild() {
	const built = resolve(projectRoot, 'build/index.js');
	const sources = Math.max(...['src', 'static', 'svelte.config.js', 'vite.config.ts', 'package-lock.json'].map((p) => newest(resolve(projectRoot, p))));
	if (existsSync(built) && statSync(built).mtimeMs >= sources) return;
	const run = spawnSync(process.execPath, [resolve(projectRoot, 'node_modules/vite/bin/vite.js'), 'build', '--logLevel', 'error'], { cwd: projectRoot, stdio: 'inherit' });
	if (run.status !== 0) throw new Error('vite build failed');
}

export async function freePort(): Promise<number> {
	return new Promise((resolvePort, reject) => {
		const server = createServer();
		server.once('error', reject);
		server.listen(0, '127.0.0.1', () => {
			const { port } = server.address() as { port: number };
			server.close(() => resolvePort(port));
		});
	});
}

export interface Running {
	child: ChildProcess;
	/** Everything the process printed so far (stdout and stderr). */
	output(): string;
}

function track(child: ChildProcess): Running {
	let text = '';
	child.stdout?.on('data', (d) => (text += d));
	child.stderr?.on('data', (d) => (text += d));
	return { child, output: () => text };
}

/** `node build` on a loopback port; resolves once it answers. */
export async function startApp(env: NodeJS.ProcessEnv, port: number): Promise<Running & { url: string }> {
	const child = spawn(process.execPath, [resolve(projectRoot, 'build/index.js')], {
		cwd: projectRoot,
		env: { ...env, PORT: String(port), HOST: '127.0.0.1', ORIGIN: `http://127.0.0.1:${port}` },
		stdio: ['ignore', 'pipe', 'pipe']
	});
	const running = track(child);
	const url = `http://127.0.0.1:${port}`;
	for (let i = 0; i < 240; i++) {
		if (child.exitCode !== null) throw new Error(`the app on ${port} exited: ${running.output()}`);
		const answered = await fetch(`${url}/login`).then((r) => r.status < 500, () => false);
		if (answered) return { ...running, url };
		await new Promise((r) => setTimeout(r, 250));
	}
	throw new Error(`the app on ${port} did not answer: ${running.output()}`);
}

/** `node bin/worker.js`; resolves once it says it is working the queues. */
export async function startWorker(env: NodeJS.ProcessEnv): Promise<Running> {
	const child = spawn(process.execPath, [resolve(projectRoot, 'bin/worker.js')], { cwd: projectRoot, env, stdio: ['ignore', 'pipe', 'pipe'] });
	const running = track(child);
	for (let i = 0; i < 240; i++) {
		if (child.exitCode !== null) throw new Error(`the worker exited: ${running.output()}`);
		if (running.output().includes('working the job queues')) return running;
		await new Promise((r) => setTimeout(r, 250));
	}
	throw new Error(`the worker did not start: ${running.output()}`);
}

/** SIGTERM, then SIGKILL after a grace period. */
export async function stop(running: Running | null | undefined, graceMs = 8000) {
	const child = running?.child;
	if (!child || child.exitCode !== null || child.signalCode !== null) return;
	const exited = new Promise<void>((r) => child.once('exit', () => r()));
	child.kill('SIGTERM');
	const timer = setTimeout(() => child.kill('SIGKILL'), graceMs);
	await exited;
	clearTimeout(timer);
}
