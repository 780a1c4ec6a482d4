import pg from 'pg';
import { describe, expect, inject, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import { sequelize, transaction } from '../../src/lib/server/db';
import * as audit from '../../src/lib/server/services/audit';
import * as suppliers from '../../src/lib/server/services/suppliers';
import * as users from '../../src/lib/server/services/users';
import { makeUser, rootActor, unique } from '../support/factories';
import { testAction } from '../support/audit-action';

describe('audit trail', () => {
	it('chains each event to the previous one and verifies', async () => {
		await transaction((tx) => audit.record(tx, rootActor, { action: testAction('test.event'), entity: 'test', entityId: 1, after: { n: 1.5, nested: { b: 2, a: [1, 'x'] } }, reason: 'chain check' }));
		const report = await audit.verifyChain();
		expect(report.ok).toBe(true);
		expect(report.checked).toBeGreaterThan(0);
	});

	it('refuses UPDATE and DELETE: the app role has no such right, and the trigger stops even the owner', async () => {
		await expect(sequelize().query("UPDATE audit_events SET reason = 'rewritten'")).rejects.toThrow(/permission denied/);
		await expect(sequelize().query('DELETE FROM audit_events')).rejects.toThrow(/permission denied/);
		const owner = new pg.Client({ connectionString: inject('ownerDatabaseUrl') });
		await owner.connect();
		try {
			await expect(owner.query("UPDATE audit_events SET reason = 'rewritten'")).rejects.toThrow(/append-only/);
			await expect(owner.query('DELETE FROM audit_events')).rejects.toThrow(/append-only/);
		} finally {
			await owner.end();
		}
	});

	it('names the first tampered row, and verifies again once it is restored', async () => {
		const action = `test.tamper-target-${Date.now()}`;
		await transaction((tx) => audit.record(tx, rootActor, { action: testAction(action), entity: 'test', reason: 'original' }));
		const [{ id }] = await sequelize().query<{ id: number }>('SELECT id::int AS id FROM audit_events WHERE action = :action', { replacements: { action }, type: QueryTypes.SELECT });
		// Tampering needs the trigger off: only the database owner can do this, and the chain still exposes it.
		const owner = new pg.Client({ connectionString: inject('ownerDatabaseUrl') });
		await owner.connect();
		await owner.query('ALTER TABLE audit_events DISABLE TRIGGER audit_events_no_update');
		try {
			await owner.query("UPDATE audit_events SET reason = 'tampered' WHERE id = $1", [id]);
			const broken = await audit.verifyChain();
			expect(broken.ok).toBe(false);
			expect(broken.firstBroken?.id).toBe(id);
			await owner.query("UPDATE audit_events SET reason = 'original' WHERE id = $1", [id]);
		} finally {
			await owner.query('ALTER TABLE audit_events ENABLE TRIGGER audit_events_no_update');
			await owner.end();
		}
		expect((await audit.verifyChain()).ok).toBe(true);
	});

	it('appends a transaction\'s events at its end, in call order, chained', async () => {
		const tag = `order-${Date.now()}`;
		await transaction(async (tx) => {
			await audit.record(tx, rootActor, { action: testAction(`${tag}.first`), entity: 'test' });
			await audit.record(tx, rootActor, { action: testAction(`${tag}.second`), entity: 'test' });
		});
		const rows = await sequelize().query<{ action: string; prev_hash: string; hash: string }>(
			'SELECT action, prev_hash, hash FROM audit_events WHERE action LIKE :tag ORDER BY id',
			{ replacements: { tag: `${tag}.%` }, type: QueryTypes.SELECT }
		);
		expect(rows.map((r) => r.action)).toEqual([`${tag}.first`, `${tag}.second`]);
		expect(rows[1].prev_hash).toBe(rows[0].hash);
		expect((await audit.verifyChain()).ok).toBe(true);
	});

	it('rolls the audit event back with a failed change', async () => {
		const before = await sequelize().query<{ n: string }>('SELECT count(*) AS n FROM audit_events', { type: QueryTypes.SELECT });
		const code = unique('DUP').toUpperCase();
		await suppliers.create(rootActor, { code, name: 'First' });
		await expect(suppliers.create(rootActor, { code, name: 'Second' })).rejects.toMatchObject({ status: 409 });
		const after = await sequelize().query<{ n: string }>('SELECT count(*) AS n FROM audit_events', { type: QueryTypes.SELECT });
		expect(Number(after[0].n) - Number(before[0].n)).toBe(1);
	});
});

describe('users and sign-in', () => {
	it('only an admin creates users, and creation is audited', async () => {
		const tech = await makeUser(['technician']);
		await expect(users.create(tech.actor, { email: `${unique('x')}@test.example`, name: 'Nobody', password: 'long-enough-pw', roles: ['qa'] })).rejects.toMatchObject({ status: 403 });
		const created = await makeUser(['qa']);
		const rows = await audit.list({ entity: 'user', action: 'user.created' });
		expect(rows.rows.some((r) => r.entityId === String(created.user.id))).toBe(true);
	});

	it('rejects a wrong password and locks the account after 5 failures in 15 minutes', async () => {
		const { email, password, user } = await makeUser(['technician']);
		for (let i = 0; i < 4; i++) await expect(users.authenticate(email, 'wrong-password')).rejects.toMatchObject({ reason: 'wrong-credentials' });
		await expect(users.authenticate(email, 'wrong-password')).rejects.toMatchObject({ reason: 'locked' });
		// Even the right password is refused while locked.
		await expect(users.authenticate(email, password)).rejects.toMatchObject({ reason: 'locked' });
		const locks = await audit.list({ entity: 'user', action: 'user.locked' });
		expect(locks.rows.some((r) => r.entityId === String(user.id))).toBe(true);
		// An admin's password reset lifts the lock.
		await users.resetPassword(rootActor, user.id, 'a-brand-new-password', 'locked out in test');
		await expect(users.authenticate(email, 'a-brand-new-password')).resolves.toMatchObject({ id: user.id });
	});

	it('refuses a deactivated account', async () => {
		const { email, password, user } = await makeUser(['procurement']);
		await users.setActive(rootActor, user.id, false, 'left the company');
		await expect(users.authenticate(email, password)).rejects.toMatchObject({ reason: 'inactive' });
	});

	it('refuses an unknown role', async () => {
		await expect(users.create(rootActor, { email: `${unique('r')}@test.example`, name: 'Role test', password: 'long-enough-pw', roles: ['pilot' as never] })).rejects.toThrow();
	});
});

describe('suppliers', () => {
	it('audits a status change with its reason and refuses one without', async () => {
		const buyer = await makeUser(['procurement']);
		const created = await suppliers.create(buyer.actor, { code: unique('SUP').toUpperCase(), name: 'Test supplier', contacts: ['a@b.example'] });
		await expect(suppliers.setStatus(buyer.actor, created.id, 'blocked', '  ')).rejects.toMatchObject({ status: 400, field: 'reason' });
		await suppliers.setStatus(buyer.actor, created.id, 'on-watch', 'late certificates');
		const events = await audit.list({ entity: 'supplier', action: 'supplier.status-changed' });
		const event = events.rows.find((r) => r.entityId === String(created.id));
		expect(event?.reason).toBe('late certificates');
		expect(event?.after).toEqual({ status: 'on-watch' });
		const tech = await makeUser(['technician']);
		await expect(suppliers.setStatus(tech.actor, created.id, 'qualified', 'no')).rejects.toMatchObject({ status: 403 });
	});
});
