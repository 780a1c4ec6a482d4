// Integration tests: the real PostgreSQL on loopback, a fresh database per run, migrations applied.
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { TestProject } from 'vitest/node';
import { ensureDatabase, provisionRoles, startCluster } from '../../scripts/lib/postgres';

export default async function setup(project: TestProject) {
	const cluster = await startCluster();
	await ensureDatabase(cluster, 'lotgate_test', { fresh: true });
	// As in production: migrations as the owner role, the tests (like the server) as the app role.
	const { ownerUrl, appUrl: url } = await provisionRoles(cluster, 'lotgate_test');
	process.env.DATABASE_URL = ownerUrl;
	const { sequelize, closeDatabase } = await import('../../src/lib/server/db/index');
	const { migrate } = await import('../../src/lib/server/db/migrate');
	await migrate(sequelize(), { quiet: true });
	await closeDatabase();
	project.provide('databaseUrl', url);
	project.provide('ownerDatabaseUrl', ownerUrl);
	// The audit key and checkpoint folder live outside the database, as in production: a fresh folder per run.
	project.provide('auditCheckpointDir', mkdtempSync(join(tmpdir(), 'lotgate-checkpoints-')));
}

declare module 'vitest' {
	export interface ProvidedContext {
		databaseUrl: string;
		baseUrl: string;
		auditCheckpointDir: string;
		auditKey: string;
		ownerDatabaseUrl: string;
	}
}
