// Embedded PostgreSQL for the start and test commands: Debian's server, loopback only, data inside the project.
import { execFileSync, spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, readdirSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import pg from 'pg';

/** The folder holding package.json, found upwards from this file (also from its compiled copy in dist/). */
function findProjectRoot(from: string): string {
	for (let dir = from; ; dir = dirname(dir)) {
		if (existsSync(resolve(dir, 'package.json'))) return dir;
		if (dirname(dir) === dir) return from;
	}
}
export const projectRoot = findProjectRoot(dirname(fileURLToPath(import.meta.url)));
export const defaultPort = Number(process.env.LOTGATE_PG_PORT ?? 54329);
const isRoot = process.getuid?.() === 0;

function log(message: string) {
	console.log(`[postgres] ${message}`);
}

/** Installs Debian's postgresql when no server binaries are present (only possible as root). */
export function ensurePostgresInstalled(): string {
	const found = findBinDir();
	if (found) return found;
	if (!isRoot) throw new Error('PostgreSQL server binaries not found; install Debian package "postgresql".');
	log('installing Debian package postgresql (apt-get)…');
	execFileSync('apt-get', ['update', '-qq'], { stdio: 'inherit' });
	execFileSync('apt-get', ['install', '-y', '-qq', 'postgresql'], {
		stdio: 'inherit',
		env: { ...process.env, DEBIAN_FRONTEND: 'noninteractive' }
	});
	const after = findBinDir();
	if (!after) throw new Error('postgresql installed but no server binaries were found under /usr/lib/postgresql');
	return after;
}

function findBinDir(): string | null {
	const base = '/usr/lib/postgresql';
	if (!existsSync(base)) return null;
	const versions = readdirSync(base)
		.filter((v) => existsSync(`${base}/${v}/bin/initdb`))
		.sort((a, b) => Number(b) - Number(a));
	return versions.length ? `${base}/${versions[0]}/bin` : null;
}

/** True when the postgres OS user can reach every folder above dir (a clone under /root breaks this). */
function postgresCanTraverse(dir: string): boolean {
	if (!isRoot) return true;
	const probe = spawnSync('runuser', ['-u', 'postgres', '--', 'test', '-x', dirname(dir)]);
	return probe.status === 0;
}

/** The data folder: .data/postgres in the project, or a fallback under /var/lib/lotgate keyed by project path. */
export function dataDirFor(name = 'postgres'): string {
	const preferred = resolve(projectRoot, '.data', name);
	mkdirSync(dirname(preferred), { recursive: true });
	if (postgresCanTraverse(preferred)) return preferred;
	const key = createHash('sha256').update(projectRoot).digest('hex').slice(0, 12);
	const fallback = `/var/lib/lotgate/${key}/${name}`;
	log(`the postgres user cannot reach ${preferred}; using ${fallback} instead`);
	mkdirSync(dirname(fallback), { recursive: true });
	return fallback;
}

function runAsServerUser(bin: string, args: string[]) {
	const command = isRoot ? 'runuser' : bin;
	const fullArgs = isRoot ? ['-u', 'postgres', '--', bin, ...args] : args;
	return spawnSync(command, fullArgs, { encoding: 'utf8' });
}

export interface Cluster {
	dataDir: string;
	port: number;
	urlFor(database: string): string;
}

/** Initialises (first time) and starts the cluster; reuses a running one. */
export async function startCluster(options: { port?: number; dataDir?: string } = {}): Promise<Cluster> {
	const binDir = ensurePostgresInstalled();
	const port = options.port ?? defaultPort;
	const dataDir = options.dataDir ?? dataDirFor();
	const cluster: Cluster = {
		dataDir,
		port,
		urlFor: (database) => `postgresql://lotgate@127.0.0.1:${port}/${database}`
	};
	if (!existsSync(`${dataDir}/PG_VERSION`)) {
		mkdirSync(dataDir, { recursive: true });
		giveToServerUser(dataDir);
		log(`initialising a new cluster in ${dataDir}`);
		const init = runAsServerUser(`${binDir}/initdb`, ['-D', dataDir, '-U', 'lotgate', '--auth=trust', '-E', 'UTF8', '--no-locale']);
		if (init.status !== 0) throw new Error(`initdb failed: ${init.stderr || init.stdout}`);
	}
	if (await isAccepting(cluster)) {
		log(`reusing the running server on 127.0.0.1:${port}`);
		return cluster;
	}
	giveToServerUser(dataDir);
	const start = runAsServerUser(`${binDir}/pg_ctl`, [
		'-D', dataDir, '-l', `${dataDir}/server.log`, '-w', '-t', '60',
		'-o', `-c listen_addresses=127.0.0.1 -p ${port} -k ${dataDir}`,
		'start'
	]);
	if (start.status !== 0) throw new Error(`pg_ctl start failed: ${start.stderr || start.stdout}; see ${dataDir}/server.log`);
	log(`started on 127.0.0.1:${port} (data in ${dataDir})`);
	return cluster;
}

export function stopCluster(options: { dataDir?: string } = {}) {
	const binDir = findBinDir();
	const dataDir = options.dataDir ?? dataDirFor();
	if (!binDir || !existsSync(`${dataDir}/postmaster.pid`)) return;
	const stop = runAsServerUser(`${binDir}/pg_ctl`, ['-D', dataDir, '-m', 'fast', '-w', 'stop']);
	if (stop.status === 0) log('stopped');
	else log(`stop: ${stop.stderr || stop.stdout}`);
}

function giveToServerUser(dir: string) {
	if (!isRoot) return;
	execFileSync('chown', ['-R', 'postgres:postgres', dir]);
}

async function isAccepting(cluster: Cluster): Promise<boolean> {
	const client = new pg.Client({ connectionString: cluster.urlFor('postgres'), connectionTimeoutMillis: 1500 });
	try {
		await client.connect();
		await client.end();
		return true;
	} catch {
		return false;
	}
}

/** Creates the database if missing; with fresh=true drops it first (test databases). */
export async function ensureDatabase(cluster: Cluster, database: string, { fresh = false } = {}) {
	const client = new pg.Client({ connectionString: cluster.urlFor('postgres') });
	await client.connect();
	try {
		if (fresh) await client.query(`DROP DATABASE IF EXISTS "${database}" WITH (FORCE)`);
		const exists = await client.query('SELECT 1 FROM pg_database WHERE datname = $1', [database]);
		if (exists.rowCount === 0) await client.query(`CREATE DATABASE "${database}"`);
	} finally {
		await client.end();
	}
	return cluster.urlFor(database);
}
