// Separation of duties, one-time passwords, revocable sessions and sign-in limits (issue 10, §2–§4).
import { describe, expect, it } from 'vitest';
import { models } from '../../src/lib/server/db';
import { passwordProblem } from '../../src/lib/server/password-policy';
import { acceptedRequestId, isConnectionError } from '../../src/lib/server/request-limits';
import * as users from '../../src/lib/server/services/users';
import { makeUser, unique } from '../support/factories';

const version = async (id: number) => (await models().User.findByPk(id))!.sessionVersion;

describe('separation of duties', () => {
	it('refuses an admin changing their own roles', async () => {
		const admin = await makeUser(['admin']);
		await expect(users.setRoles(admin.actor, admin.user.id, ['admin', 'qa'], 'self-grant')).rejects.toMatchObject({ status: 403, code: 'own-roles' });
		expect((await models().User.findByPk(admin.user.id))!.roles).toEqual(['admin']);
	});

	it('records a qa grant as pending until a second admin approves it; the requester cannot approve', async () => {
		const first = await makeUser(['admin']);
		const second = await makeUser(['admin']);
		const target = await makeUser(['technician']);
		const out = await users.setRoles(first.actor, target.user.id, ['technician', 'qa'], 'needs to sign');
		expect(out.pendingRoleChange?.rolesAfter).toEqual(['technician', 'qa']);
		expect((await models().User.findByPk(target.user.id))!.roles).toEqual(['technician']);
		await expect(users.decideRoleChange(first.actor, out.pendingRoleChange!.id, true, 'my own request')).rejects.toMatchObject({ status: 403, code: 'same-admin' });
		const before = await version(target.user.id);
		await users.decideRoleChange(second.actor, out.pendingRoleChange!.id, true, 'checked with QA head');
		expect((await models().User.findByPk(target.user.id))!.roles).toEqual(['technician', 'qa']);
		expect(await version(target.user.id)).toBe(before + 1);
	});

	it('a password reset by an admin is one-time: it cannot sign, and it ends the sessions', async () => {
		const admin = await makeUser(['admin']);
		const qa = await makeUser(['qa']);
		const before = await version(qa.user.id);
		await users.resetPassword(admin.actor, qa.user.id, 'admin-chosen-reset-99', 'forgot it');
		expect(await version(qa.user.id)).toBe(before + 1);
		await expect(users.confirmSigner(qa.actor, 'admin-chosen-reset-99')).rejects.toMatchObject({ status: 403, code: 'one-time-password' });
		await users.changeOwnPassword(qa.actor, { current: 'admin-chosen-reset-99', password: 'only-i-know-this-one', confirm: 'only-i-know-this-one' });
		expect((await users.confirmSigner(qa.actor, 'only-i-know-this-one')).id).toBe(qa.user.id);
	});
});

describe('password policy (NIST SP 800-63B §5.1.1.2)', () => {
	it('needs 12 characters, refuses the e-mail and common passwords', () => {
		expect(passwordProblem('short-pass1')).toMatch(/12/);
		expect(passwordProblem('passwordpassword')).toMatch(/common/);
		expect(passwordProblem('xx-jane.doe@lab.example-xx', 'jane.doe@lab.example')).toMatch(/e-mail/);
		expect(passwordProblem('demo-lotgate', 'qa@demo.test')).toBeNull();
	});
});

describe('sign-in without account discovery', () => {
	it('locks an unknown e-mail exactly like a known one', async () => {
		const known = await makeUser(['technician']);
		const unknown = `${unique('nobody')}@test.example`;
		const outcomes: string[][] = [[], []];
		for (const [i, email] of [known.email, unknown].entries()) {
			for (let n = 0; n < 6; n++) outcomes[i].push(await users.authenticate(email, 'wrong-password-x').then(() => 'ok', (e) => `${e.status}:${e.message}`));
		}
		expect(outcomes[0]).toEqual(outcomes[1]);
		expect(outcomes[0].at(-1)).toMatch(/^429:/);
	});

	it('keeps a signed-in user able to sign while their sign-in is locked by someone else', async () => {
		const qa = await makeUser(['qa']);
		for (let n = 0; n < 6; n++) await users.authenticate(qa.email, 'attacker-guess').catch(() => {});
		expect((await users.confirmSigner(qa.actor, qa.password)).id).toBe(qa.user.id);
	});
});

describe('request hygiene', () => {
	it('accepts only a UUID or up to 64 safe characters as request id', () => {
		expect(acceptedRequestId('5f0c1c1e-8d0b-4c39-9d53-7a0f3c2b1a00')).not.toBeNull();
		expect(acceptedRequestId('job-42.retry:1')).toBe('job-42.retry:1');
		expect(acceptedRequestId('x'.repeat(65))).toBeNull();
		expect(acceptedRequestId('<script>')).toBeNull();
	});

	it('recognises connection errors (503), not query errors', () => {
		expect(isConnectionError({ name: 'SequelizeConnectionRefusedError' })).toBe(true);
		expect(isConnectionError({ name: 'SequelizeDatabaseError', parent: { code: '57P01' } })).toBe(true);
		expect(isConnectionError({ name: 'SequelizeDatabaseError', parent: { code: '42P01' } })).toBe(false);
	});
});
