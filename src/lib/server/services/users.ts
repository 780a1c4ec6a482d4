import bcrypt from 'bcryptjs';
import { Op } from 'sequelize';
import { z } from 'zod';
import { models, transaction } from '../db';
import { ROLES, type Role, type User } from '../db/models';
import { hasRole, systemActor, type Actor } from './actor';
import * as audit from './audit';
import { conflict, forbidden, invalid, notFound, ServiceError } from './errors';

export const LOCKOUT = { failures: 5, windowMinutes: 15, lockMinutes: 15 };
const BCRYPT_COST = 10;

export const passwordSchema = z.string().min(10, 'Use at least 10 characters').max(200);
export const newUserSchema = z.object({
	email: z.string().trim().toLowerCase().email('Enter a valid e-mail address'),
	name: z.string().trim().min(2, 'Enter the full printed name used on signatures').max(120),
	password: passwordSchema,
	roles: z.array(z.enum(ROLES as [Role, ...Role[]])).min(1, 'Give the user at least one role')
});
export type NewUser = z.infer<typeof newUserSchema>;

export interface PublicUser {
	id: number;
	email: string;
	name: string;
	roles: Role[];
	active: boolean;
	lockedUntil: string | null;
	createdAt: string;
}

export function toPublic(user: User): PublicUser {
	return {
		id: user.id,
		email: user.email,
		name: user.name,
		roles: user.roles,
		active: user.active,
		lockedUntil: user.lockedUntil && user.lockedUntil > new Date() ? user.lockedUntil.toISOString() : null,
		createdAt: user.createdAt.toISOString()
	};
}

function requireAdmin(actor: Actor) {
	if (!hasRole(actor, 'admin')) throw forbidden('Only an admin manages users');
}

export async function create(actor: Actor, input: NewUser): Promise<PublicUser> {
	requireAdmin(actor);
	const data = newUserSchema.parse(input);
	const { User } = models();
	return transaction(async (tx) => {
		if (await User.findOne({ where: { email: data.email }, transaction: tx })) {
			throw conflict(`A user with e-mail ${data.email} already exists`, 'email');
		}
		const user = await User.create(
			{ email: data.email, name: data.name, roles: data.roles, passwordHash: await bcrypt.hash(data.password, BCRYPT_COST) },
			{ transaction: tx }
		);
		await audit.record(tx, actor, {
			action: 'user.created',
			entity: 'user',
			entityId: user.id,
			after: { email: user.email, name: user.name, roles: user.roles }
		});
		return toPublic(user);
	});
}

export async function list(actor: Actor): Promise<PublicUser[]> {
	requireAdmin(actor);
	const rows = await models().User.findAll({ order: [['name', 'ASC']] });
	return rows.map(toPublic);
}

export async function get(id: number): Promise<User | null> {
	return models().User.findByPk(id);
}

export async function setRoles(actor: Actor, id: number, roles: Role[], reason: string) {
	requireAdmin(actor);
	const parsed = newUserSchema.shape.roles.parse(roles);
	return transaction(async (tx) => {
		const user = await models().User.findByPk(id, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!user) throw notFound(`User ${id}`);
		if (user.id === actor.id && user.roles.includes('admin') && !parsed.includes('admin')) {
			throw invalid('You cannot remove your own admin role', 'roles');
		}
		const before = { roles: user.roles };
		await user.update({ roles: parsed }, { transaction: tx });
		await audit.record(tx, actor, { action: 'user.roles-changed', entity: 'user', entityId: id, before, after: { roles: parsed }, reason });
		return toPublic(user);
	});
}

export async function resetPassword(actor: Actor, id: number, password: string, reason: string) {
	requireAdmin(actor);
	const hash = await bcrypt.hash(passwordSchema.parse(password), BCRYPT_COST);
	return transaction(async (tx) => {
		const user = await models().User.findByPk(id, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!user) throw notFound(`User ${id}`);
		await user.update({ passwordHash: hash, passwordChangedAt: new Date(), lockedUntil: null }, { transaction: tx });
		await models().LoginFailure.destroy({ where: { email: user.email }, transaction: tx });
		await audit.record(tx, actor, { action: 'user.password-reset', entity: 'user', entityId: id, reason });
		return toPublic(user);
	});
}

export async function setActive(actor: Actor, id: number, active: boolean, reason: string) {
	requireAdmin(actor);
	if (id === actor.id && !active) throw invalid('You cannot deactivate your own account');
	return transaction(async (tx) => {
		const user = await models().User.findByPk(id, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!user) throw notFound(`User ${id}`);
		const before = { active: user.active };
		await user.update({ active }, { transaction: tx });
		await audit.record(tx, actor, {
			action: active ? 'user.reactivated' : 'user.deactivated',
			entity: 'user',
			entityId: id,
			before,
			after: { active },
			reason
		});
		return toPublic(user);
	});
}

export type AuthFailure = 'wrong-credentials' | 'locked' | 'inactive';

export class AuthenticationError extends ServiceError {
	constructor(readonly reason: AuthFailure, message: string) {
		super(reason === 'locked' ? 423 : 401, reason, message);
	}
}

const wrongCredentials = () => new AuthenticationError('wrong-credentials', 'The e-mail or password is not correct.');

/**
 * Checks an e-mail and password. Failures count toward the lockout
 * (LOCKOUT.failures within LOCKOUT.windowMinutes locks for LOCKOUT.lockMinutes), and the lock is audited.
 */
export async function authenticate(emailInput: string, password: string, context: 'sign-in' | 'signature' = 'sign-in', requestId?: string): Promise<User> {
	const email = String(emailInput ?? '').trim().toLowerCase();
	const { User, LoginFailure } = models();
	const user = await User.findOne({ where: { email } });
	if (user?.lockedUntil && user.lockedUntil > new Date()) {
		throw new AuthenticationError('locked', `This account is locked after repeated failed attempts until ${user.lockedUntil.toISOString().slice(11, 16)} UTC. Ask an admin, or try again later.`);
	}
	const ok = user ? await bcrypt.compare(String(password ?? ''), user.passwordHash) : false;
	if (!user || !ok) {
		await transaction(async (tx) => {
			await LoginFailure.create({ email, context }, { transaction: tx });
			if (!user) return;
			const since = new Date(Date.now() - LOCKOUT.windowMinutes * 60_000);
			const recent = await LoginFailure.count({ where: { email, at: { [Op.gte]: since } }, transaction: tx });
			const actor = { ...systemActor, requestId };
			await audit.record(tx, actor, { action: `user.${context}-failed`, entity: 'user', entityId: user.id, after: { failuresInWindow: recent } });
			if (recent >= LOCKOUT.failures) {
				const lockedUntil = new Date(Date.now() + LOCKOUT.lockMinutes * 60_000);
				await user.update({ lockedUntil }, { transaction: tx });
				await audit.record(tx, actor, {
					action: 'user.locked',
					entity: 'user',
					entityId: user.id,
					after: { lockedUntil: lockedUntil.toISOString() },
					reason: `${recent} failed attempts within ${LOCKOUT.windowMinutes} minutes`
				});
			}
		});
		const locked = user ? await User.findByPk(user.id) : null;
		if (locked?.lockedUntil && locked.lockedUntil > new Date()) {
			throw new AuthenticationError('locked', `Too many failed attempts: this account is locked for ${LOCKOUT.lockMinutes} minutes.`);
		}
		throw wrongCredentials();
	}
	if (!user.active) throw new AuthenticationError('inactive', 'This account has been deactivated. Ask an admin.');
	if (context === 'sign-in') {
		await transaction(async (tx) => {
			await LoginFailure.destroy({ where: { email }, transaction: tx });
			if (user.lockedUntil) await user.update({ lockedUntil: null }, { transaction: tx });
			await audit.record(tx, { ...systemActor, requestId }, { action: 'user.signed-in', entity: 'user', entityId: user.id });
		});
	}
	return user;
}

/** Re-entered password for an electronic signature (21 CFR 11.200): the signer must be the signed-in user. */
export async function confirmSigner(actor: Actor, password: string): Promise<User> {
	if (actor.id == null) throw forbidden('Only a person can sign');
	const user = await models().User.findByPk(actor.id);
	if (!user) throw notFound('Signer');
	try {
		return await authenticate(user.email, password, 'signature', actor.requestId);
	} catch (error) {
		if (error instanceof AuthenticationError && error.reason === 'wrong-credentials') {
			throw new ServiceError(401, 'wrong-password', 'The password is not correct: the signature was not applied.', 'password');
		}
		throw error;
	}
}

export async function findByEmail(email: string) {
	return models().User.findOne({ where: { email: email.trim().toLowerCase() } });
}

/** Used by the demo seed: creates or refreshes an account without an actor's role check. */
export async function upsertForSeed(input: NewUser) {
	const { User } = models();
	const hash = await bcrypt.hash(input.password, BCRYPT_COST);
	return transaction(async (tx) => {
		const existing = await User.findOne({ where: { email: input.email }, transaction: tx });
		if (existing) return existing;
		const user = await User.create({ email: input.email, name: input.name, roles: input.roles, passwordHash: hash }, { transaction: tx });
		await audit.record(tx, systemActor, {
			action: 'user.created',
			entity: 'user',
			entityId: user.id,
			after: { email: user.email, name: user.name, roles: user.roles },
			reason: 'demo seed'
		});
		return user;
	});
}
