// `npm start`: database (embedded unless DATABASE_URL), migrations, demo seed, build (only when the sources or the
// lockfile changed), then the app on 127.0.0.1. `npm run serve` serves an existing build without any of this.
import { spawn } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import pg from 'pg';
import { resolve } from 'node:path';
import { createInterface } from 'node:readline';
import { noiseFilter } from './lib/build-noise.mjs';
import { buildIsCurrent, sourceHash } from './lib/build-stamp.mjs';
import { projectRoot, stopCluster } from './lib/postgres';
import { startBanner } from './lib/start-banner';
import { DEMO_ACCOUNTS } from '../src/lib/server/demo/accounts';
import { authSecret, dataRoot, resolveDatabase } from './lib/runtime';

// A launcher killed with SIGKILL cannot stop its app; that orphan would hold the port. Stop it before starting again.
const childPidFile = resolve(dataRoot, 'app-child.pid');
if (existsSync(childPidFile)) {
	const pid = Number(readFileSync(childPidFile, 'utf8'));
	let cmdline = '';
	try {
		cmdline = readFileSync(`/proc/${pid}/cmdline`, 'utf8');
	} catch {
		// gone already
	}
	if (pid > 0 && cmdline.includes(resolve(projectRoot, 'build/index.js'))) {
		console.log(`[start] stopping the app left running by an earlier start (pid ${pid})`);
		process.kill(pid, 'SIGTERM');
		for (let i = 0; i < 50 && existsSync(`/proc/${pid}`); i++) await new Promise((r) => setTimeout(r, 100));
		if (existsSync(`/proc/${pid}`)) process.kill(pid, 'SIGKILL');
	}
	rmSync(childPidFile, { force: true });
}

const started = Date.now();
// Seconds this process spent loading before its first line ran (the compiled launcher vs the TypeScript loader).
const loadedAfter = process.uptime();
const port = Number(process.env.PORT ?? 3000);
const { url, ownerUrl, embedded } = await resolveDatabase();
const demo = process.env.LOTGATE_DEMO ? process.env.LOTGATE_DEMO === '1' : embedded;
const env: NodeJS.ProcessEnv = {
	...process.env,
	DATABASE_URL: url,
	AUTH_SECRET: authSecret(),
	LOTGATE_DEMO: demo ? '1' : '0',
	PORT: String(port),
	HOST: process.env.HOST ?? '127.0.0.1',
	// adapter-node assumes https without ORIGIN, which would refuse every form post on plain local http.
	ORIGIN: process.env.ORIGIN ?? `http://127.0.0.1:${port}`,
	// adapter-node refuses bodies over 512 kB by default; the intake applies its own per-file limit.
	BODY_SIZE_LIMIT: process.env.BODY_SIZE_LIMIT ?? '256M',
	// One machine, one process: the app also works the job queues (production runs `npm run worker` processes instead).
	LOTGATE_JOBS_IN_PROCESS: process.env.LOTGATE_JOBS_IN_PROCESS ?? '1'
};
Object.assign(process.env, env);

// The database's identity: its oid changes when it is dropped and recreated. Read with a bare pg client, so that a
// start with nothing to do never loads Sequelize, the migrations or the seed.
const hash = sourceHash();
const oid = await (async () => {
	const client = new pg.Client({ connectionString: url });
	await client.connect();
	try {
		return String((await client.query('SELECT oid::text AS oid FROM pg_database WHERE datname = current_database()')).rows[0].oid);
	} finally {
		await client.end();
	}
})();
const stampKey = (what: string) => createHash('sha256').update(`${what} ${url} ${oid} ${hash}`).digest('hex'); // no credentials on disk
const stamped = (file: string, key: string) => existsSync(file) && readFileSync(file, 'utf8') === key;

// Migrations as the owner role; everything after (seed, server, workers) as the app role. Skipped when these very
// sources already migrated this very database (the list of migrations is part of the sources).
const migratedStamp = resolve(dataRoot, 'migrated');
let applied: string[] = [];
let db: typeof import('../src/lib/server/db/index') | null = null;
if (stamped(migratedStamp, stampKey('migrated'))) {
	console.log('[start] migrations applied (none new: this database was migrated from these sources)');
} else {
	process.env.DATABASE_URL = ownerUrl;
	db = await import('../src/lib/server/db/index');
	const { migrate } = await import('../src/lib/server/db/migrate');
	applied = (await migrate(db.sequelize(), { quiet: true })).map(String);
	await db.closeDatabase();
	writeFileSync(migratedStamp, stampKey('migrated'));
	console.log(`[start] migrations applied${applied.length ? ` (${applied.length} new)` : ' (none new)'}`);
}
process.env.DATABASE_URL = url;
// The demo seed is idempotent but slow (it regenerates the demo spectra and hashes six passwords). It is skipped when it
// already completed for this very database from these very sources, and no migration ran since.
let seeded = false;
if (demo) {
	const seedKey = createHash('sha256').update(`${url} ${oid} ${hash}`).digest('hex');
	const seedStamp = resolve(dataRoot, 'demo-seeded');
	if (!applied.length && stamped(seedStamp, seedKey)) {
		console.log('[start] demo scenario already seeded from these sources: not re-checking it');
	} else {
		const { seedDemo } = await import('../src/lib/server/demo/seed');
		await seedDemo();
		writeFileSync(seedStamp, seedKey);
		seeded = true;
	}
}
if (seeded) await (await import('../src/lib/server/db/index')).closeDatabase();

if (process.env.LOTGATE_SKIP_BUILD !== '1') {
	if (buildIsCurrent(hash)) {
		console.log('[start] the build is current (sources and lockfile unchanged): not rebuilding');
	} else {
		// Compiled, this launcher loads its later parts from dist/start/, which the build replaces: load them first.
		if (demo) await (await import('./lib/services')).preload();
		console.log('[start] building the app…');
		const status = await buildQuietly();
		if (status !== 0) process.exit(status);
	}
}

/** The build, with third-party bundler warnings left out of the start output (`npm run build` shows everything). */
async function buildQuietly(): Promise<number> {
	const child = spawn(process.execPath, [resolve(projectRoot, 'scripts/build.mjs'), '--logLevel', 'warn'], { cwd: projectRoot, stdio: ['ignore', 'pipe', 'pipe'], env });
	let hidden = 0;
	const isNoise = noiseFilter();
	const relay = (stream: NodeJS.ReadableStream, out: NodeJS.WriteStream) =>
		createInterface({ input: stream }).on('line', (line) => {
			if (isNoise(line)) hidden++;
			else out.write(`${line}\n`);
		});
	relay(child.stdout!, process.stdout);
	relay(child.stderr!, process.stderr);
	const code = await new Promise<number>((done) => child.on('close', (c) => done(c ?? 1)));
	if (hidden) console.log(`[start] ${hidden} warnings about third-party packages hidden (\`npm run build\` shows them)`);
	return code;
}

// The app's boot (loading the server bundle) and the demo mail recorder's start overlap: the recorder's port is chosen
// first, so the app is spawned with its SMTP_URL at once (it connects only when it sends).
let smtpPort = 0;
if (demo) {
	smtpPort = Number(process.env.LOTGATE_SMTP_PORT || 0) || (await freePort());
	env.SMTP_URL = `smtp://127.0.0.1:${smtpPort}`;
}
const spawnedAt = Date.now();
const app = spawn(process.execPath, [resolve(projectRoot, 'build/index.js')], { cwd: projectRoot, stdio: 'inherit', env });
const services = await import('./lib/services');
const smtp = demo ? await services.startMailFake({ ...env, LOTGATE_SMTP_PORT: String(smtpPort) }) : null;
writeFileSync(resolve(dataRoot, 'app.pid'), String(process.pid));
if (app.pid) writeFileSync(childPidFile, String(app.pid));

function freePort(): Promise<number> {
	return new Promise((ok, fail) => {
		const server = createServer();
		server.once('error', fail);
		server.listen(0, '127.0.0.1', () => {
			const { port } = server.address() as { port: number };
			server.close(() => ok(port));
		});
	});
}

/** Waits until the app answers, so the figure printed is the time to serving, not to spawning. */
async function answering(): Promise<boolean> {
	for (let i = 0; i < 600 && app.exitCode == null; i++) {
		try {
			const response = await fetch(`http://${!env.HOST || env.HOST === '0.0.0.0' || env.HOST === '::' ? '127.0.0.1' : env.HOST}:${port}/login`, { redirect: 'manual' });
			await response.arrayBuffer();
			if (response.status < 500) return true;
		} catch {
			// not listening yet
		}
		await new Promise((r) => setTimeout(r, 100));
	}
	return false;
}

// Not on 'spawn': that event has passed while the mail recorder started.
void (async () => {
	if (!(await answering())) return;
	const seconds = loadedAfter + (Date.now() - started) / 1000; // from this process's start
	const phases = { launcher: loadedAfter, checks: (spawnedAt - started) / 1000, app: (Date.now() - spawnedAt) / 1000 };
	const accounts = demo ? DEMO_ACCOUNTS : null;
	const lines = startBanner({
		url: `http://127.0.0.1:${port}`,
		seconds,
		phases,
		database: embedded ? `embedded PostgreSQL, ${url}` : 'external (DATABASE_URL)',
		accounts,
		password: process.env.LOTGATE_DEMO_PASSWORD || 'demo-lotgate'
	});
	console.log(`\n${lines.join('\n')}\n`);
})();

let stopping = false;
async function shutdown(code = 0) {
	if (stopping) return;
	stopping = true;
	console.log('\n[start] shutting down…');
	app.kill('SIGTERM');
	rmSync(childPidFile, { force: true });
	await smtp?.close();
	if (embedded) stopCluster();
	process.exit(code);
}
process.on('SIGINT', () => void shutdown());
process.on('SIGTERM', () => void shutdown());
app.on('exit', (code) => void shutdown(code ?? 0));
