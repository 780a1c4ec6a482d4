// Data factories shared by integration tests: unique names so test files never collide.
import { randomBytes } from 'node:crypto';
import type { Role } from '../../src/lib/server/db/models';
import type { Actor } from '../../src/lib/server/services/actor';

export const unique = (prefix: string) => `${prefix}-${randomBytes(3).toString('hex')}`;

export const rootActor: Actor = { id: null, label: 'test-root', roles: ['admin', 'procurement', 'chemometrician', 'qa', 'technician'] };

export async function makeUser(roles: Role[], password = 'correct-horse-battery') {
	const users = await import('../../src/lib/server/services/users');
	const email = `${unique('user')}@test.example`;
	const user = await users.create(rootActor, { email, name: `Test ${roles.join('+')} ${email.slice(5, 11)}`, password, roles });
	const actor: Actor = { id: user.id, label: user.name, roles };
	return { user, actor, email, password };
}
