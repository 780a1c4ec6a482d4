// Data factories shared by integration tests: unique names so test files never collide.
import { randomBytes } from 'node:crypto';
import type { Role } from '../../src/lib/permissions';
import type { Actor } from '../../src/lib/server/services/actor';

export const unique = (prefix: string) => `${prefix}-${randomBytes(3).toString('hex')}`;

export const rootActor: Actor = { id: null, label: 'test-root', roles: ['admin', 'procurement', 'chemometrician', 'qa', 'technician'] };

export async function makeUser(roles: Role[], password = 'correct-horse-battery') {
	const users = await import('../../src/lib/server/services/users');
	const email = `${unique('user')}@test.example`;
	const user = await users.create(rootActor, { email, name: `Test ${roles.join('+')} ${email.slice(5, 11)}`, password, roles });
	// An admin-created password is one-time; test users stand for people who have already chosen their own.
	const { models } = await import('../../src/lib/server/db');
	await models().User.update({ passwordMustChange: false }, { where: { id: user.id } });
	const actor: Actor = { id: user.id, label: user.name, roles };
	return { user, actor, email, password };
}
