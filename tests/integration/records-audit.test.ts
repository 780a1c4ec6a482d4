// Issue 10 §1: the audit chain covers exactly what is stored, `audit:verify` reports every broken row, and tampering by
// edit, by a recomputed chain, by deleting the tail and by truncation each fail verification against the checkpoint.
// Tampering is done as the database owner (the app's own role cannot do any of it).
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import canonicalize from 'canonicalize';
import pg from 'pg';
import { QueryTypes } from 'sequelize';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { sequelize, transaction } from '../../src/lib/server/db';
import * as audit from '../../src/lib/server/services/audit';
import { readCheckpoints, writeCheckpoint } from '../../src/lib/server/audit-checkpoint';
import { rootActor, unique } from '../support/factories';
import { testAction } from '../support/audit-action';

/** The owner's connection: the role that runs migrations (and the one an insider with its password would use). */
const ownerUrl = () => inject('ownerDatabaseUrl');
let owner: pg.Client;

function verifyCli() {
	const out = spawnSync('npx', ['tsx', 'scripts/audit-verify.ts'], {
		encoding: 'utf8',
		env: { ...process.env, DATABASE_URL: inject('databaseUrl') }
	});
	return { status: out.status, text: `${out.stdout}\n${out.stderr}` };
}

async function event(tag: string, extra: Partial<audit.AuditInput> = {}) {
	await transaction((tx) => audit.record(tx, rootActor, { action: testAction(`test.${tag}`), entity: 'test', after: { tag }, reason: 'tamper scenario', ...extra }));
}

/** Runs a destructive scenario on the real table and puts every row back afterwards, byte for byte. */
async function tampered(work: () => Promise<void>, check: () => Promise<void>) {
	const backup = unique('audit_backup').replace('-', '_');
	await owner.query(`CREATE TABLE ${backup} AS SELECT * FROM audit_events`);
	try {
		await owner.query('ALTER TABLE audit_events DISABLE TRIGGER USER');
		await work();
		await owner.query('ALTER TABLE audit_events ENABLE TRIGGER USER');
		await check();
	} finally {
		await owner.query('ALTER TABLE audit_events DISABLE TRIGGER USER');
		await owner.query('DELETE FROM audit_events');
		await owner.query(`INSERT INTO audit_events SELECT * FROM ${backup}`);
		await owner.query('ALTER TABLE audit_events ENABLE TRIGGER USER');
		await owner.query(`DROP TABLE ${backup}`);
	}
}

const figures = { tried: 0, detected: 0 };

beforeAll(async () => {
	owner = new pg.Client({ connectionString: ownerUrl() });
	await owner.connect();
	for (let i = 0; i < 6; i++) await event(`seed-${i}`);
	await writeCheckpoint({ reason: 'test', force: true });
});

afterAll(async () => {
	await owner?.end();
	console.log(`[figures] tampering scenarios tried: ${figures.tried}, detected by audit:verify: ${figures.detected}`);
});

describe('the hash covers what is stored', () => {
	it('an unpaired surrogate that reached the audit is hashed as PostgreSQL stores it (U+FFFD), so the chain still verifies', async () => {
		await event('surrogate', { after: { note: 'a\ud800b' }, reason: null });
		const [row] = await sequelize().query<{ after: { note: string } }>("SELECT after FROM audit_events WHERE action = 'test.surrogate' ORDER BY id DESC LIMIT 1", { type: QueryTypes.SELECT });
		expect(row.after.note).toBe('a\ufffdb');
		expect((await audit.verifyChain()).ok).toBe(true);
	});

	it('a NUL inside before/after cannot be stored: the change rolls back with no row, and the chain still verifies', async () => {
		const before = await audit.head();
		await expect(event('nul', { after: { note: 'a\u0000b' }, reason: null })).rejects.toThrow();
		expect(await audit.head()).toEqual(before);
		expect((await audit.verifyChain()).ok).toBe(true);
	});

	it('uses the key: the same rows hashed with another key do not verify', async () => {
		const report = await audit.verifyChain({ key: Buffer.from('some-other-key-0123456789') });
		expect(report.ok).toBe(false);
		expect(report.brokenCount).toBe(report.checked);
	});
});

describe('audit:verify', () => {
	it('passes on the intact chain, against the latest signed checkpoint', async () => {
		await writeCheckpoint({ reason: 'test', force: true });
		expect(readCheckpoints().invalid).toEqual([]);
		const out = verifyCli();
		expect(out.status, out.text).toBe(0);
		expect(out.text).toMatch(/audit chain verified: \d+ events, no break/);
		expect(out.text).toMatch(/matches the checkpoint/);
	});

	it('edit: reports every changed row (it carries on past the first break) and exits 1', async () => {
		figures.tried++;
		const rows = (await owner.query("SELECT id FROM audit_events WHERE action LIKE 'test.seed-%' ORDER BY id")).rows.map((r) => Number(r.id));
		await tampered(
			async () => {
				await owner.query("UPDATE audit_events SET reason = 'quietly changed' WHERE id = $1 OR id = $2", [rows[1], rows[3]]);
			},
			async () => {
				const report = await audit.verifyChain();
				expect(report.brokenCount).toBe(2);
				expect(report.broken.map((b) => b.id)).toEqual([rows[1], rows[3]]);
				const out = verifyCli();
				expect(out.status).toBe(1);
				expect(out.text).toContain(`BROKEN event #${rows[1]}`);
				expect(out.text).toContain(`BROKEN event #${rows[3]}`);
				expect(out.text).toMatch(/2 of \d+ events fail/);
				if (out.status === 1) figures.detected++;
			}
		);
	});

	it('recomputed chain: an edit with every later hash recomputed (without the audit key) exits 1', async () => {
		figures.tried++;
		await tampered(
			async () => {
				const rows = (await owner.query('SELECT * FROM audit_events ORDER BY id')).rows;
				const start = rows.length - 4;
				let prev = rows[start - 1].hash as string;
				for (const [i, r] of rows.slice(start).entries()) {
					const fields = {
						at: new Date(r.at).toISOString(),
						actorId: r.actor_id,
						actorLabel: r.actor_label,
						action: r.action,
						entity: r.entity,
						entityId: r.entity_id,
						before: r.before,
						after: r.after,
						reason: i === 0 ? 'rewritten history' : r.reason,
						requestId: r.request_id
					};
					const hash = createHash('sha256').update(prev + canonicalize(fields)).digest('hex');
					await owner.query('UPDATE audit_events SET reason = $2, prev_hash = $3, hash = $4 WHERE id = $1', [r.id, fields.reason, prev, hash]);
					prev = hash;
				}
			},
			async () => {
				const out = verifyCli();
				expect(out.status).toBe(1);
				expect(out.text).toMatch(/without the audit key/);
				if (out.status === 1) figures.detected++;
			}
		);
	});

	it('tail deletion: removing the last events up to the checkpoint exits 1', async () => {
		figures.tried++;
		await writeCheckpoint({ reason: 'test', force: true });
		await tampered(
			async () => {
				await owner.query('DELETE FROM audit_events WHERE id IN (SELECT id FROM audit_events ORDER BY id DESC LIMIT 3)');
			},
			async () => {
				expect((await audit.verifyChain()).ok).toBe(true); // what is left still links up…
				const out = verifyCli();
				expect(out.status).toBe(1); // …but not to the checkpoint
				expect(out.text).toMatch(/events at the end were deleted/);
				if (out.status === 1) figures.detected++;
			}
		);
	});

	it('truncation: an emptied table exits 1', async () => {
		figures.tried++;
		await tampered(
			async () => {
				await owner.query('TRUNCATE audit_events');
			},
			async () => {
				const out = verifyCli();
				expect(out.status).toBe(1);
				expect(out.text).toMatch(/audit table is empty/);
				if (out.status === 1) figures.detected++;
			}
		);
	});

	it('a forged checkpoint line (content changed, signature kept) is reported and fails verification', async () => {
		const { appendFileSync } = await import('node:fs');
		const { checkpointFile } = await import('../../src/lib/server/audit-checkpoint');
		const [latest] = readCheckpoints().valid.slice(-1);
		const forged = { ...latest, seq: 1 };
		appendFileSync(checkpointFile(), JSON.stringify(forged) + '\n');
		try {
			const out = verifyCli();
			expect(out.status).toBe(1);
			expect(out.text).toMatch(/signature does not match/);
		} finally {
			const { readFileSync, writeFileSync } = await import('node:fs');
			const lines = readFileSync(checkpointFile(), 'utf8').trimEnd().split('\n');
			writeFileSync(checkpointFile(), lines.slice(0, -1).join('\n') + '\n');
		}
		expect(verifyCli().status).toBe(0);
	});
});

describe('least privilege (the app role)', () => {
	const app = () => sequelize();
	it('is not a superuser and may not switch replication mode (which would skip the triggers)', async () => {
		const [me] = await app().query<{ rolsuper: boolean; current_user: string }>('SELECT rolsuper, current_user FROM pg_roles WHERE rolname = current_user', { type: QueryTypes.SELECT });
		expect(me).toMatchObject({ rolsuper: false, current_user: 'lotgate_app' });
		await expect(app().query('SET session_replication_role = replica')).rejects.toThrow(/permission denied/);
	});

	it('cannot disable or drop the trigger, alter, truncate, update or delete the audit table', async () => {
		for (const sql of [
			'ALTER TABLE audit_events DISABLE TRIGGER audit_events_no_update',
			'ALTER TABLE audit_events DISABLE TRIGGER ALL',
			'DROP TRIGGER audit_events_no_update ON audit_events',
			'ALTER TABLE audit_events ADD COLUMN x int',
			'TRUNCATE audit_events',
			"UPDATE audit_events SET reason = 'x'",
			'DELETE FROM audit_events',
			'UPDATE audit_chain SET legacy_until = 999999'
		]) {
			await expect(app().query(sql), sql).rejects.toThrow(/must be owner|permission denied/);
		}
	});

	it('can append (INSERT) and read (SELECT) events, which is all the server needs', async () => {
		const before = await audit.head();
		await event('least-privilege-append');
		expect((await audit.head())!.seq).toBeGreaterThan(before!.seq);
	});

	it('the owner role is not a superuser either', async () => {
		const { rows } = await owner.query('SELECT rolsuper FROM pg_roles WHERE rolname = current_user');
		expect(rows[0].rolsuper).toBe(false);
		await expect(owner.query('SET session_replication_role = replica')).rejects.toThrow(/permission denied/);
	});
});
