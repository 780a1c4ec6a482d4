// What the start and maintenance commands share: the database URL (embedded or external) and the auth secret.
import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { ensureDatabase, projectRoot, provisionRoles, startCluster } from './postgres';

export const dataRoot = resolve(projectRoot, '.data');

/**
 * Uses DATABASE_URL when given (production; DATABASE_OWNER_URL, when set, runs the migrations); otherwise starts the
 * embedded cluster with its owner role (migrations) and app role (`url`: server, seed, maintenance commands).
 */
export async function resolveDatabase(database = 'lotgate'): Promise<{ url: string; ownerUrl: string; embedded: boolean }> {
	if (process.env.DATABASE_URL) return { url: process.env.DATABASE_URL, ownerUrl: process.env.DATABASE_OWNER_URL || process.env.DATABASE_URL, embedded: false };
	const cluster = await startCluster();
	await ensureDatabase(cluster, database);
	const { ownerUrl, appUrl } = await provisionRoles(cluster, database);
	return { url: appUrl, ownerUrl, embedded: true };
}

/** A per-install secret for session cookies, kept in .data so sessions survive restarts. */
export function authSecret(): string {
	if (process.env.AUTH_SECRET) return process.env.AUTH_SECRET;
	mkdirSync(dataRoot, { recursive: true });
	const file = resolve(dataRoot, 'auth-secret');
	if (!existsSync(file)) writeFileSync(file, randomBytes(32).toString('base64url'), { mode: 0o600 });
	return readFileSync(file, 'utf8').trim();
}
