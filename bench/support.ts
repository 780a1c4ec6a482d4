// Shared by the benchmarks that need the database: a fresh migrated database on the embedded PostgreSQL.
import { ensureDatabase, startCluster } from '../scripts/lib/postgres';

/** Recreates `name`, points DATABASE_URL at it and applies the migrations. */
export async function freshBenchDatabase(name: string) {
	const cluster = await startCluster();
	const url = await ensureDatabase(cluster, name, { fresh: true });
	process.env.DATABASE_URL = url;
	const db = await import('../src/lib/server/db/index');
	const { migrate } = await import('../src/lib/server/db/migrate');
	await migrate(db.sequelize(), { quiet: true });
	return { url, sequelize: db.sequelize, closeDatabase: db.closeDatabase };
}

/** One figure beside its target, marked OK or OVER. */
export function reportMs(label: string, ms: number, target: number, width = 64) {
	console.log(`${label.padEnd(width)} ${ms.toFixed(0).padStart(6)} ms   target ≤ ${target} ms   ${ms <= target ? 'OK' : 'OVER'}`);
}
