// The audit chain's secret and the checkpoint folder: both live outside the database, so a database account alone can
// neither recompute the chain after an edit nor rewrite the record of where the chain stood.
import { createHmac, randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { config } from './config';

/** `.data` of the installation (where AUTH_SECRET is generated too); LOTGATE_DATA_DIR moves it. */
export function dataDir(): string {
	return config().LOTGATE_DATA_DIR || resolve(process.cwd(), '.data');
}

let cached: { source: string; key: Buffer } | null = null;

/**
 * LOTGATE_AUDIT_KEY, or a key generated once into `.data/audit-key` (mode 600). Losing it does not lose records, but the
 * chain can then no longer be verified past the last checkpoint: back it up apart from the database.
 */
export function auditKey(): Buffer {
	const fromEnv = config().LOTGATE_AUDIT_KEY;
	const source = fromEnv ? `env:${fromEnv}` : `file:${dataDir()}`;
	if (cached?.source === source) return cached.key;
	let text = fromEnv;
	if (!text) {
		mkdirSync(dataDir(), { recursive: true });
		const file = resolve(dataDir(), 'audit-key');
		if (!existsSync(file)) writeFileSync(file, randomBytes(32).toString('base64url'), { mode: 0o600, flag: 'wx' });
		text = readFileSync(file, 'utf8').trim();
	}
	if (text.length < 16) throw new Error('LOTGATE_AUDIT_KEY is too short: use at least 16 characters (32 random bytes, base64url, is what Lotgate generates)');
	cached = { source, key: Buffer.from(text, 'utf8') };
	return cached.key;
}

/** A short public name for the key, printed in checkpoints, so a verification with the wrong key says so plainly. */
export function auditKeyId(key = auditKey()): string {
	return createHmac('sha256', key).update('lotgate audit key id').digest('hex').slice(0, 16);
}

/** Where checkpoints are appended; put it on storage the database host cannot rewrite (see README, Security model). */
export function checkpointDir(): string {
	return config().LOTGATE_AUDIT_CHECKPOINT_DIR || resolve(dataDir(), 'audit-checkpoints');
}
