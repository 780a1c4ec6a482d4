// Browser tests: the built app on a loopback port against its own fresh, seeded database.
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import type { TestProject } from 'vitest/node';
import { ensureDatabase, projectRoot, provisionRoles, startCluster } from '../../scripts/lib/postgres';

let app: ChildProcess | null = null;

export default async function setup(project: TestProject) {
	const cluster = await startCluster();
	const port = Number(process.env.LOTGATE_E2E_PORT ?? 3107);
	// One database per port, so two runs side by side never drop each other's data.
	await ensureDatabase(cluster, `lotgate_e2e_${port}`, { fresh: true });
	const { ownerUrl, appUrl: url } = await provisionRoles(cluster, `lotgate_e2e_${port}`);
	const env = {
		...process.env,
		DATABASE_URL: url,
		AUTH_SECRET: 'e2e-test-secret',
		LOTGATE_DEMO: '1',
		LOTGATE_TEST: '1',
		PORT: String(port),
		HOST: '127.0.0.1',
		ORIGIN: `http://127.0.0.1:${port}`,
		BODY_SIZE_LIMIT: '256M',
		LOTGATE_JOBS_IN_PROCESS: '1',
		LOTGATE_AUDIT_KEY: 'e2e-test-audit-key-0123456789',
		LOTGATE_AUDIT_CHECKPOINT_DIR: mkdtempSync(join(tmpdir(), 'lotgate-e2e-checkpoints-'))
	};
	Object.assign(process.env, { DATABASE_URL: url, LOTGATE_AUDIT_KEY: env.LOTGATE_AUDIT_KEY, LOTGATE_AUDIT_CHECKPOINT_DIR: env.LOTGATE_AUDIT_CHECKPOINT_DIR });
	const { sequelize, closeDatabase } = await import('../../src/lib/server/db/index');
	const { migrate } = await import('../../src/lib/server/db/migrate');
	const { seedDemo } = await import('../../src/lib/server/demo/seed');
	// Migrations as the owner role; the seed and the server as the app role.
	process.env.DATABASE_URL = ownerUrl;
	await migrate(sequelize(), { quiet: true });
	await closeDatabase();
	process.env.DATABASE_URL = url;
	await seedDemo(() => {});
	await closeDatabase();

	if (process.env.LOTGATE_E2E_SKIP_BUILD !== '1') {
		const build = spawnSync('npx', ['vite', 'build', '--logLevel', 'error'], { cwd: projectRoot, stdio: 'inherit', env });
		if (build.status !== 0) throw new Error('vite build failed');
	}
	// A server left over on this port would answer instead of ours, against another database.
	if (await fetch(`http://127.0.0.1:${port}/login`).then(() => true, () => false)) {
		throw new Error(`port ${port} is already in use: stop that server or set LOTGATE_E2E_PORT`);
	}
	const services = await import('../../scripts/lib/services');
	const mail = await services.startMailFake(env);
	app = spawn(process.execPath, [resolve(projectRoot, 'build/index.js')], { cwd: projectRoot, env, stdio: ['ignore', 'inherit', 'inherit'] });
	const baseUrl = `http://127.0.0.1:${port}`;
	await waitFor(`${baseUrl}/login`);
	project.provide('baseUrl', baseUrl);
	project.provide('databaseUrl', url);
	project.provide('ownerDatabaseUrl', ownerUrl);
	project.provide('auditKey', env.LOTGATE_AUDIT_KEY);
	project.provide('auditCheckpointDir', env.LOTGATE_AUDIT_CHECKPOINT_DIR);
	return async () => {
		await stopProcess(app);
		await mail?.close();
	};
}

/** SIGTERM, then SIGKILL if the server has not exited within a few seconds. */
export async function stopProcess(child: ChildProcess | null, graceMs = 5000) {
	if (!child || child.exitCode !== null) return;
	const exited = new Promise<void>((r) => child.once('exit', () => r()));
	child.kill('SIGTERM');
	const timer = setTimeout(() => child.kill('SIGKILL'), graceMs);
	await exited;
	clearTimeout(timer);
}

async function waitFor(url: string, timeoutMs = 60_000) {
	const until = Date.now() + timeoutMs;
	while (Date.now() < until) {
		try {
			const res = await fetch(url);
			if (res.status < 500) return;
		} catch {
			/* not listening yet */
		}
		await new Promise((r) => setTimeout(r, 250));
	}
	throw new Error(`the app did not answer at ${url}`);
}
