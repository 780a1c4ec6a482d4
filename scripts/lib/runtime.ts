// What the start and maintenance commands share: the database URL (embedded or external) and the auth secret.
import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { ensureDatabase, projectRoot, startCluster } from './postgres';

export const dataRoot = resolve(projectRoot, '.data');

/** Uses DATABASE_URL when given (production); otherwise starts the embedded cluster and its database. */
export async function resolveDatabase(database = 'lotgate'): Promise<{ url: string; embedded: boolean }> {
	if (process.env.DATABASE_URL) return { url: process.env.DATABASE_URL, embedded: false };
	const cluster = await startCluster();
	return { url: await ensureDatabase(cluster, database), embedded: true };
}

/** A per-install secret for session cookies, kept in .data so sessions survive restarts. */
export function authSecret(): string {
	if (process.env.AUTH_SECRET) return process.env.AUTH_SECRET;
	mkdirSync(dataRoot, { recursive: true });
	const file = resolve(dataRoot, 'auth-secret');
	if (!existsSync(file)) writeFileSync(file, randomBytes(32).toString('base64url'), { mode: 0o600 });
	return readFileSync(file, 'utf8').trim();
}
