// Signed checkpoints of the audit chain (sequence number, head hash, time), kept outside the database: appended to a
// file in an append-only folder and mailed to an archive address. `audit:verify` compares the chain with the latest one,
// so deleting the last events or emptying the table is detected even though what is left still links up.
import canonicalize from 'canonicalize';
import { createHmac, timingSafeEqual } from 'node:crypto';
import { appendFileSync, closeSync, existsSync, fsyncSync, mkdirSync, openSync, readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { auditKey, auditKeyId, checkpointDir } from './audit-key';
import { transaction } from './db';
import { queueMail } from './mail';
import * as audit from './services/audit';
import { config } from './config';

export interface Checkpoint {
	v: 1;
	seq: number;
	head: string;
	at: string;
	legacyUntil: number;
	keyId: string;
	reason: string;
	sig: string;
}

const FILE = 'checkpoints.jsonl';

function signature(body: Omit<Checkpoint, 'sig'>, key: Buffer): string {
	return createHmac('sha256', key).update(`lotgate audit checkpoint\n${canonicalize(body)}`).digest('hex');
}

export function checkpointFile(dir = checkpointDir()): string {
	return resolve(dir, FILE);
}

/** Every line of the checkpoint file, split into those whose signature holds under this key and those that do not. */
export function readCheckpoints(dir = checkpointDir(), key = auditKey()): { valid: Checkpoint[]; invalid: { line: number; why: string }[] } {
	const file = checkpointFile(dir);
	const valid: Checkpoint[] = [];
	const invalid: { line: number; why: string }[] = [];
	if (!existsSync(file)) return { valid, invalid };
	const lines = readFileSync(file, 'utf8').split('\n');
	lines.forEach((text, i) => {
		if (!text.trim()) return;
		try {
			const cp = JSON.parse(text) as Checkpoint;
			const { sig, ...body } = cp;
			if (body.keyId !== auditKeyId(key)) return invalid.push({ line: i + 1, why: `signed with another audit key (${body.keyId})` });
			const expected = Buffer.from(signature(body, key), 'hex');
			const given = Buffer.from(String(sig), 'hex');
			if (given.length !== expected.length || !timingSafeEqual(given, expected)) return invalid.push({ line: i + 1, why: 'its signature does not match its content' });
			valid.push(cp);
		} catch {
			invalid.push({ line: i + 1, why: 'not a readable checkpoint' });
		}
	});
	return { valid, invalid };
}

/** The archive mailbox for checkpoints: LOTGATE_AUDIT_ARCHIVE, or the demo archive in demo mode, or none. */
export function archiveAddress(): string | null {
	const c = config();
	if (c.LOTGATE_AUDIT_ARCHIVE) return c.LOTGATE_AUDIT_ARCHIVE;
	return c.LOTGATE_DEMO ? 'audit-archive@demo.test' : null;
}

let lastWritten: { seq: number; head: string } | null = null;

/**
 * Writes a checkpoint of the chain's current head: one signed line appended (O_APPEND, fsync) to the checkpoint file,
 * and a copy queued to the archive address. Without `force`, nothing is written when the head has not moved since
 * this process's last checkpoint.
 */
export async function writeCheckpoint(options: { reason: string; force?: boolean }): Promise<Checkpoint | null> {
	const key = auditKey();
	const head = await audit.head();
	const legacyUntil = await audit.legacyUntil();
	const seq = head?.seq ?? 0;
	const hash = head?.hash ?? audit.GENESIS_HASH;
	if (!options.force && lastWritten && lastWritten.seq === seq && lastWritten.head === hash) return null;
	const body: Omit<Checkpoint, 'sig'> = { v: 1, seq, head: hash, at: new Date().toISOString(), legacyUntil, keyId: auditKeyId(key), reason: options.reason };
	const cp: Checkpoint = { ...body, sig: signature(body, key) };
	const dir = checkpointDir();
	mkdirSync(dir, { recursive: true, mode: 0o700 });
	const file = checkpointFile(dir);
	appendFileSync(file, JSON.stringify(cp) + '\n', { mode: 0o600, flag: 'a' });
	const fd = openSync(file, 'r');
	try {
		fsyncSync(fd);
	} finally {
		closeSync(fd);
	}
	lastWritten = { seq, head: hash };
	const archive = archiveAddress();
	if (archive) {
		await transaction((tx) =>
			queueMail(tx, {
				kind: 'audit-checkpoint',
				recipients: [archive],
				subject: `Lotgate audit checkpoint: event #${seq}`,
				body: [
					`Audit trail checkpoint (${options.reason}).`,
					'',
					`Last event: #${seq}`,
					`Head hash: ${hash}`,
					`Time: ${cp.at}`,
					`Unkeyed prefix ends at: #${legacyUntil}`,
					`Key id: ${cp.keyId}`,
					'',
					'Keep this message. The signed line below lets `npm run audit:verify` prove later that no event up to here was removed:',
					JSON.stringify(cp)
				].join('\n')
			})
		);
	}
	return cp;
}

const inFlight = new Set<Promise<unknown>>();

/** Writes checkpoints in the background (failures are logged, never thrown), for the server. */
export function checkpointSoon(reason: string) {
	const written = writeCheckpoint({ reason }).catch((error) => console.error('[audit] checkpoint not written:', error?.message ?? error));
	inFlight.add(written);
	void written.finally(() => inFlight.delete(written));
}

/** Waits for background checkpoints, so a script (the demo seed) does not close the database under one. */
export async function checkpointsSettled(): Promise<void> {
	while (inFlight.size) await Promise.allSettled([...inFlight]);
}

let timer: NodeJS.Timeout | null = null;
/** One checkpoint at start-up, then at least hourly while the server runs. */
export function startCheckpoints(intervalMs = config().LOTGATE_CHECKPOINT_INTERVAL_MS) {
	if (timer) return;
	checkpointSoon('server start');
	timer = setInterval(() => writeCheckpoint({ reason: 'hourly', force: true }).catch((error) => console.error('[audit] checkpoint not written:', error?.message ?? error)), intervalMs);
	timer.unref();
}

export function stopCheckpoints() {
	if (timer) clearInterval(timer);
	timer = null;
}
