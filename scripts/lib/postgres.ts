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
	/** The bootstrap superuser: creates databases and roles only. */
	urlFor(database: string): string;
	/** The owner role: runs migrations. */
	ownerUrlFor(database: string): string;
	/** The app role: runs the server, seed and workers. */
	appUrlFor(database: string): string;
}

export const OWNER_ROLE = 'lotgate_owner';
export const APP_ROLE = 'lotgate_app';

/** Initialises (first time) and starts the cluster; reuses a running one. */
export async function startCluster(options: { port?: number; dataDir?: string } = {}): Promise<Cluster> {
	const binDir = ensurePostgresInstalled();
	const port = options.port ?? defaultPort;
	const dataDir = options.dataDir ?? dataDirFor();
	const cluster: Cluster = {
		dataDir,
		port,
		urlFor: (database) => `postgresql://lotgate@127.0.0.1:${port}/${database}`,
		ownerUrlFor: (database) => `postgresql://${OWNER_ROLE}@127.0.0.1:${port}/${database}`,
		appUrlFor: (database) => `postgresql://${APP_ROLE}@127.0.0.1:${port}/${database}`
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

/**
 * Least privilege in the embedded cluster: an owner role that owns the schema and runs migrations, and an app role that
 * runs the server. Neither is a superuser, so neither can set session_replication_role; only the owner can ALTER or
 * TRUNCATE; the app role's table rights are granted by `migrate()` (INSERT and SELECT only on the audit tables).
 * Idempotent; objects a superuser created before the roles existed are handed to their owner role.
 */
export async function provisionRoles(cluster: Cluster, database: string) {
	const client = new pg.Client({ connectionString: cluster.urlFor(database) });
	await client.connect();
	try {
		await client.query(`
DO $$ BEGIN
  IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = '${OWNER_ROLE}') THEN CREATE ROLE ${OWNER_ROLE} LOGIN; END IF;
  IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = '${APP_ROLE}') THEN CREATE ROLE ${APP_ROLE} LOGIN; END IF;
END $$;
ALTER ROLE ${OWNER_ROLE} NOSUPERUSER NOCREATEDB NOCREATEROLE NOREPLICATION NOBYPASSRLS;
ALTER ROLE ${APP_ROLE} NOSUPERUSER NOCREATEDB NOCREATEROLE NOREPLICATION NOBYPASSRLS;
ALTER DATABASE "${database}" OWNER TO ${OWNER_ROLE};
ALTER SCHEMA public OWNER TO ${OWNER_ROLE};
REVOKE CREATE ON SCHEMA public FROM PUBLIC;
GRANT USAGE ON SCHEMA public TO ${APP_ROLE};
-- pg-boss creates a table per queue at run time, so its schema belongs to the app role (it holds jobs, not records);
-- its start-up runs CREATE SCHEMA IF NOT EXISTS, which needs CREATE on the database (new schemas only, never public).
GRANT CONNECT, CREATE ON DATABASE "${database}" TO ${APP_ROLE};
CREATE SCHEMA IF NOT EXISTS pgboss AUTHORIZATION ${APP_ROLE};
ALTER SCHEMA pgboss OWNER TO ${APP_ROLE};
DO $$ DECLARE r record; BEGIN
  FOR r IN SELECT format('ALTER TABLE %I.%I OWNER TO %I', n.nspname, c.relname, CASE n.nspname WHEN 'pgboss' THEN '${APP_ROLE}' ELSE '${OWNER_ROLE}' END) AS q
             FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace
            WHERE n.nspname IN ('public', 'pgboss') AND c.relkind IN ('r', 'p', 'v', 'm')
              AND pg_get_userbyid(c.relowner) <> CASE n.nspname WHEN 'pgboss' THEN '${APP_ROLE}' ELSE '${OWNER_ROLE}' END LOOP
    EXECUTE r.q;
  END LOOP;
  FOR r IN SELECT format('ALTER FUNCTION %s OWNER TO %I', p.oid::regprocedure, CASE n.nspname WHEN 'pgboss' THEN '${APP_ROLE}' ELSE '${OWNER_ROLE}' END) AS q
             FROM pg_proc p JOIN pg_namespace n ON n.oid = p.pronamespace
            WHERE n.nspname IN ('public', 'pgboss')
              AND pg_get_userbyid(p.proowner) <> CASE n.nspname WHEN 'pgboss' THEN '${APP_ROLE}' ELSE '${OWNER_ROLE}' END LOOP
    EXECUTE r.q;
  END LOOP;
  FOR r IN SELECT format('ALTER TYPE %I.%I OWNER TO %I', n.nspname, t.typname, CASE n.nspname WHEN 'pgboss' THEN '${APP_ROLE}' ELSE '${OWNER_ROLE}' END) AS q
             FROM pg_type t JOIN pg_namespace n ON n.oid = t.typnamespace
            WHERE n.nspname IN ('public', 'pgboss') AND t.typtype = 'e'
              AND pg_get_userbyid(t.typowner) <> CASE n.nspname WHEN 'pgboss' THEN '${APP_ROLE}' ELSE '${OWNER_ROLE}' END LOOP
    EXECUTE r.q;
  END LOOP;
END $$;`);
	} finally {
		await client.end();
	}
	return { ownerUrl: cluster.ownerUrlFor(database), appUrl: cluster.appUrlFor(database) };
}
