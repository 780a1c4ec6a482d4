import bcrypt from 'bcryptjs';
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { nameText, proseText } from '../../validation/text';
import { models, sequelize, transaction } from '../db';
import { can, ROLES, type Role } from '../../permissions';
import type { User } from '../db/models';
import { PASSWORD_MAX_LENGTH, PASSWORD_MIN_LENGTH, passwordProblem } from '../password-policy';
import * as limits from '../rate-limit';
import { hasRole, systemActor, type Actor } from './actor';
import * as audit from './audit';
import { conflict, forbidden, invalid, notFound, ServiceError } from './errors';

export const LOCKOUT = { failures: limits.LOGIN_PER_ACCOUNT.limit, windowMinutes: limits.LOGIN_PER_ACCOUNT.windowSeconds / 60, lockMinutes: limits.LOGIN_PER_ACCOUNT.windowSeconds / 60 };
const BCRYPT_COST = 10;
/** Roles whose grant takes a second admin (separation of duties): they sign releases or manage who may. */
export const GUARDED_ROLES: Role[] = ['qa', 'admin'];

export const passwordSchema = z.string().min(PASSWORD_MIN_LENGTH, `Use at least ${PASSWORD_MIN_LENGTH} characters`).max(PASSWORD_MAX_LENGTH);
export const rolesSchema = z.array(z.enum(ROLES)).min(1, 'Give the user at least one role');
export const newUserSchema = z
	.object({
		email: z.string().trim().toLowerCase().email('Enter a valid e-mail address'),
		name: nameText(z.string().trim().min(2, 'Enter the full printed name used on signatures').max(120)),
		password: passwordSchema,
		roles: rolesSchema
	})
	.superRefine((value, ctx) => {
		const problem = passwordProblem(value.password, value.email);
		if (problem) ctx.addIssue({ code: z.ZodIssueCode.custom, path: ['password'], message: problem });
	});

/** Throws 400 naming `field` when the password breaks the policy (NIST SP 800-63B §5.1.1.2). */
export function checkPassword(password: string, email: string, field = 'password') {
	const problem = passwordProblem(password, email);
	if (problem) throw invalid(problem, field);
}

// A fixed hash to compare against when the e-mail is unknown, so an unknown address costs the same bcrypt time.
let dummyHash: string | null = null;
const timingDummy = async () => (dummyHash ??= await bcrypt.hash('lotgate-timing-equaliser', BCRYPT_COST));

/** Ends every session of the user: their cookies carry the old version and are refused on the next request. */
async function endSessions(userId: number, tx: Transaction) {
	await sequelize().query('UPDATE users SET session_version = session_version + 1 WHERE id = :userId', { replacements: { userId }, transaction: tx });
}
export type NewUser = z.infer<typeof newUserSchema>;

export interface PublicUser {
	id: number;
	email: string;
	name: string;
	roles: Role[];
	active: boolean;
	lockedUntil: string | null;
	passwordMustChange: boolean;
	createdAt: string;
	/** a grant of qa/admin waiting for a second admin */
	pendingRoleChange?: RoleChangeRequest | null;
}

export interface RoleChangeRequest {
	id: number;
	userId: number;
	rolesBefore: Role[];
	rolesAfter: Role[];
	reason: string;
	requestedBy: number;
	requestedByName: string;
	requestedAt: string;
	state: 'pending' | 'approved' | 'declined';
}

export function toPublic(user: User): PublicUser {
	return {
		id: user.id,
		email: user.email,
		name: user.name,
		roles: user.roles,
		active: user.active,
		lockedUntil: user.lockedUntil && user.lockedUntil > new Date() ? user.lockedUntil.toISOString() : null,
		passwordMustChange: user.passwordMustChange,
		createdAt: user.createdAt.toISOString()
	};
}

function requireAdmin(actor: Actor) {
	if (!hasRole(actor, can.administer)) throw forbidden('Only an admin manages users');
}

export async function create(actor: Actor, input: NewUser): Promise<PublicUser> {
	requireAdmin(actor);
	const data = newUserSchema.parse(input);
	const { User } = models();
	// A person (not the system seed) grants qa/admin only through a pending change a second admin approves.
	const guarded = actor.id != null ? data.roles.filter((r) => GUARDED_ROLES.includes(r)) : [];
	const direct = data.roles.filter((r) => !guarded.includes(r));
	return transaction(async (tx) => {
		if (await User.findOne({ where: { email: data.email }, transaction: tx })) {
			throw conflict(`A user with e-mail ${data.email} already exists`, 'email');
		}
		// The initial password is chosen by the admin, so it is one-time: the user replaces it at first sign-in.
		const user = await User.create(
			{ email: data.email, name: data.name, roles: direct, passwordHash: await bcrypt.hash(data.password, BCRYPT_COST), passwordMustChange: true },
			{ transaction: tx }
		);
		await audit.record(tx, actor, {
			action: 'user.created',
			entity: 'user',
			entityId: user.id,
			after: { email: user.email, name: user.name, roles: user.roles, passwordOneTime: true }
		});
		const out = toPublic(user);
		if (guarded.length) out.pendingRoleChange = await requestRoleChange(tx, actor, user, data.roles, 'initial roles of a new user');
		return out;
	});
}

async function requestRoleChange(tx: Transaction, actor: Actor, user: User, rolesAfter: Role[], reason: string): Promise<RoleChangeRequest> {
	const [row] = await sequelize().query<{ id: number; requested_at: Date }>(
		`INSERT INTO role_change_requests (user_id, roles_before, roles_after, reason, requested_by)
		 VALUES (:userId, ARRAY[:before]::text[], ARRAY[:after]::text[], :reason, :by)
		 ON CONFLICT (user_id) WHERE state = 'pending' DO NOTHING RETURNING id, requested_at`,
		{
			replacements: { userId: user.id, before: user.roles.length ? user.roles : [null], after: rolesAfter, reason, by: actor.id },
			type: QueryTypes.SELECT,
			transaction: tx
		}
	);
	if (!row) throw conflict(`A role change for ${user.name} is already waiting for a second admin: approve or decline it first`, 'roles');
	await sequelize().query('UPDATE role_change_requests SET roles_before = array_remove(roles_before, NULL) WHERE id = :id', { replacements: { id: row.id }, transaction: tx });
	await audit.record(tx, actor, {
		action: 'user.role-change-requested',
		entity: 'user',
		entityId: user.id,
		before: { roles: user.roles },
		after: { roles: rolesAfter, requestId: row.id },
		reason
	});
	return {
		id: row.id,
		userId: user.id,
		rolesBefore: user.roles,
		rolesAfter,
		reason,
		requestedBy: actor.id as number,
		requestedByName: actor.label,
		requestedAt: new Date(row.requested_at).toISOString(),
		state: 'pending'
	};
}

interface RoleChangeRow {
	id: number;
	user_id: number;
	roles_before: Role[];
	roles_after: Role[];
	reason: string;
	requested_by: number;
	requested_by_name: string;
	requested_at: Date;
	state: 'pending' | 'approved' | 'declined';
}

const toRoleChange = (r: RoleChangeRow): RoleChangeRequest => ({
	id: r.id,
	userId: r.user_id,
	rolesBefore: r.roles_before,
	rolesAfter: r.roles_after,
	reason: r.reason,
	requestedBy: r.requested_by,
	requestedByName: r.requested_by_name,
	requestedAt: new Date(r.requested_at).toISOString(),
	state: r.state
});

/** Role grants waiting for a second admin. */
export async function pendingRoleChanges(actor: Actor): Promise<RoleChangeRequest[]> {
	requireAdmin(actor);
	const rows = await sequelize().query<RoleChangeRow>(
		`SELECT r.*, u.name AS requested_by_name FROM role_change_requests r JOIN users u ON u.id = r.requested_by WHERE r.state = 'pending' ORDER BY r.id`,
		{ type: QueryTypes.SELECT }
	);
	return rows.map(toRoleChange);
}

/** A second admin approves (applies) or declines a pending role grant; never the requester, never for their own roles. */
export async function decideRoleChange(actor: Actor, requestId: number, approve: boolean, reason: string) {
	requireAdmin(actor);
	if (actor.id == null) throw forbidden('A role grant is decided by a person');
	const why = proseText(z.string().trim().min(3, 'Give a reason (it goes into the audit trail)').max(500)).parse(reason);
	return transaction(async (tx) => {
		const rows = await sequelize().query<RoleChangeRow>(
			`SELECT r.*, u.name AS requested_by_name FROM role_change_requests r JOIN users u ON u.id = r.requested_by WHERE r.id = :id FOR UPDATE OF r`,
			{ replacements: { id: requestId }, type: QueryTypes.SELECT, transaction: tx }
		);
		const request = rows[0];
		if (!request) throw notFound(`Role change request ${requestId}`);
		if (request.state !== 'pending') throw conflict(`This role change was already ${request.state}`);
		if (request.requested_by === actor.id) throw new ServiceError(403, 'same-admin', 'A different admin must decide a role change you requested (separation of duties)');
		if (request.user_id === actor.id) throw new ServiceError(403, 'own-roles', 'You cannot decide a change of your own roles');
		const user = await models().User.findByPk(request.user_id, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!user) throw notFound(`User ${request.user_id}`);
		await sequelize().query("UPDATE role_change_requests SET state = :state, decided_by = :by, decided_at = now(), decision_reason = :why WHERE id = :id", {
			replacements: { state: approve ? 'approved' : 'declined', by: actor.id, why, id: requestId },
			transaction: tx
		});
		if (approve) {
			const before = { roles: user.roles };
			await user.update({ roles: request.roles_after }, { transaction: tx });
			await endSessions(user.id, tx);
			await audit.record(tx, actor, { action: 'user.roles-changed', entity: 'user', entityId: user.id, before, after: { roles: request.roles_after, requestId, requestedBy: request.requested_by }, reason: why });
		} else {
			await audit.record(tx, actor, { action: 'user.role-change-declined', entity: 'user', entityId: user.id, after: { requestId, roles: request.roles_after }, reason: why });
		}
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
	const parsed = rolesSchema.parse(roles);
	return transaction(async (tx) => {
		const user = await models().User.findByPk(id, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!user) throw notFound(`User ${id}`);
		if (user.id === actor.id) throw new ServiceError(403, 'own-roles', 'You cannot change your own roles: another admin must do it', 'roles');
		const granted = parsed.filter((r) => !user.roles.includes(r));
		if (actor.id != null && granted.some((r) => GUARDED_ROLES.includes(r))) {
			const out = toPublic(user);
			out.pendingRoleChange = await requestRoleChange(tx, actor, user, parsed, reason);
			return out;
		}
		const before = { roles: user.roles };
		await user.update({ roles: parsed }, { transaction: tx });
		await endSessions(user.id, tx);
		await audit.record(tx, actor, { action: 'user.roles-changed', entity: 'user', entityId: id, before, after: { roles: parsed }, reason });
		return toPublic(user);
	});
}

export async function resetPassword(actor: Actor, id: number, password: string, reason: string) {
	requireAdmin(actor);
	const plain = passwordSchema.parse(password);
	const target = await models().User.findByPk(id);
	if (!target) throw notFound(`User ${id}`);
	checkPassword(plain, target.email);
	const hash = await bcrypt.hash(plain, BCRYPT_COST);
	const result = await transaction(async (tx) => {
		const user = await models().User.findByPk(id, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!user) throw notFound(`User ${id}`);
		// Someone else now knows this password: it only lets the user in to choose their own, and never signs.
		await user.update({ passwordHash: hash, passwordChangedAt: new Date(), lockedUntil: null, passwordMustChange: true }, { transaction: tx });
		await endSessions(user.id, tx);
		await models().LoginFailure.destroy({ where: { email: user.email }, transaction: tx });
		await audit.record(tx, actor, { action: 'user.password-reset', entity: 'user', entityId: id, after: { passwordOneTime: true }, reason });
		return toPublic(user);
	});
	await limits.reset(limits.loginKeys(target.email).account);
	await limits.reset(limits.signKeys(target.id).account);
	return result;
}

export async function setActive(actor: Actor, id: number, active: boolean, reason: string) {
	requireAdmin(actor);
	if (id === actor.id && !active) throw invalid('You cannot deactivate your own account');
	return transaction(async (tx) => {
		const user = await models().User.findByPk(id, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!user) throw notFound(`User ${id}`);
		const before = { active: user.active };
		await user.update({ active }, { transaction: tx });
		await endSessions(user.id, tx);
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
	constructor(
		readonly reason: AuthFailure,
		message: string,
		readonly retryAfter?: number
	) {
		super(reason === 'locked' ? 429 : 401, reason, message);
	}
}

const wrongCredentials = () => new AuthenticationError('wrong-credentials', 'The e-mail or password is not correct.');
/** One text for every e-mail, known or not, so the answer never confirms that an account exists. */
export const LOCKED_MESSAGE = `Too many failed sign-in attempts with this e-mail address: sign-in with it is locked for up to ${LOCKOUT.lockMinutes} minutes. If you are already signed in elsewhere, you can keep working there.`;

/**
 * Checks an e-mail and password for sign-in. Attempts are counted per e-mail (whether or not it exists) and per client
 * address in the shared `rate_limits` table before the check and refunded on success: more than LOCKOUT.failures
 * failures within the window, or too many from one address, answer `locked` (429) with the seconds to wait.
 * Unknown e-mails cost the same bcrypt time and get the same answers.
 */
export async function authenticate(emailInput: string, password: string, context: 'sign-in' = 'sign-in', requestId?: string, ip?: string): Promise<User> {
	void context;
	const email = String(emailInput ?? '').trim().toLowerCase();
	const { User, LoginFailure } = models();
	const keys = limits.loginKeys(email, ip);
	const perIp = keys.ip ? await limits.consume(keys.ip, limits.LOGIN_PER_IP) : null;
	const perAccount = await limits.consume(keys.account, limits.LOGIN_PER_ACCOUNT);
	const user = await User.findOne({ where: { email } });
	const ok = await bcrypt.compare(String(password ?? ''), user?.passwordHash ?? (await timingDummy()));
	const blocked = [perIp, perAccount].filter((state) => state && !state.allowed) as limits.LimitState[];
	if (blocked.length) {
		throw new AuthenticationError('locked', LOCKED_MESSAGE, Math.max(...blocked.map((b) => b.retryAfter)));
	}
	if (!user || !ok) {
		await transaction(async (tx) => {
			await LoginFailure.create({ email, context: 'sign-in' }, { transaction: tx });
			if (!user) return;
			const actor = { ...systemActor, requestId };
			await audit.record(tx, actor, { action: 'user.sign-in-failed', entity: 'user', entityId: user.id, after: { failuresInWindow: perAccount.hits, ...(ip ? { ip } : {}) } });
			if (perAccount.hits >= LOCKOUT.failures) {
				const lockedUntil = new Date(Date.now() + perAccount.retryAfter * 1000);
				await user.update({ lockedUntil }, { transaction: tx });
				await audit.record(tx, actor, {
					action: 'user.locked',
					entity: 'user',
					entityId: user.id,
					after: { lockedUntil: lockedUntil.toISOString() },
					reason: `${perAccount.hits} failed sign-in attempts within ${LOCKOUT.windowMinutes} minutes`
				});
			}
		});
		if (perAccount.hits >= LOCKOUT.failures) throw new AuthenticationError('locked', LOCKED_MESSAGE, perAccount.retryAfter);
		throw wrongCredentials();
	}
	if (!user.active) throw new AuthenticationError('inactive', 'This account has been deactivated. Ask an admin.');
	await limits.reset(keys.account);
	if (keys.ip) await limits.refund(keys.ip);
	await transaction(async (tx) => {
		await LoginFailure.destroy({ where: { email }, transaction: tx });
		if (user.lockedUntil) await user.update({ lockedUntil: null }, { transaction: tx });
		await audit.record(tx, { ...systemActor, requestId }, { action: 'user.signed-in', entity: 'user', entityId: user.id, after: ip ? { ip } : undefined });
	});
	return user;
}

/**
 * Re-entered password for an electronic signature (21 CFR 11.200): the signer must be the signed-in user, with a password
 * only they know (11.300): a one-time password set by an admin never signs. Wrong passwords are limited per signer and
 * per address, apart from sign-in, so a sign-in lockout caused by someone else does not stop a signed-in user.
 */
export async function confirmSigner(actor: Actor, password: string): Promise<User> {
	if (actor.id == null) throw forbidden('Only a person can sign');
	const user = await models().User.findByPk(actor.id);
	if (!user) throw notFound('Signer');
	if (!user.active) throw new AuthenticationError('inactive', 'This account has been deactivated. Ask an admin.');
	if (user.passwordMustChange) {
		throw new ServiceError(403, 'one-time-password', 'Your password was set by an admin: choose your own password (Account → Password) before you sign.', 'password');
	}
	const keys = limits.signKeys(user.id, actor.ip);
	const perIp = keys.ip ? await limits.consume(keys.ip, limits.SIGN_PER_IP) : null;
	const perAccount = await limits.consume(keys.account, limits.SIGN_PER_ACCOUNT);
	const ok = await bcrypt.compare(String(password ?? ''), user.passwordHash);
	const blocked = [perIp, perAccount].filter((state) => state && !state.allowed) as limits.LimitState[];
	if (blocked.length) {
		throw new limits.RateLimited('Too many wrong signature passwords: wait before signing again. Nothing was signed.', Math.max(...blocked.map((b) => b.retryAfter)));
	}
	if (!ok) {
		await transaction(async (tx) => {
			await models().LoginFailure.create({ email: user.email, context: 'signature' }, { transaction: tx });
			await audit.record(tx, { ...systemActor, requestId: actor.requestId }, { action: 'user.signature-failed', entity: 'user', entityId: user.id, after: { failuresInWindow: perAccount.hits } });
		});
		throw new ServiceError(401, 'wrong-password', 'The password is not correct: the signature was not applied.', 'password');
	}
	await limits.refund(keys.account);
	if (keys.ip) await limits.refund(keys.ip);
	return user;
}

export const changePasswordSchema = z
	.object({
		current: z.string().min(1, 'Enter your current password').max(PASSWORD_MAX_LENGTH),
		password: passwordSchema,
		confirm: z.string().max(PASSWORD_MAX_LENGTH)
	})
	.refine((v) => v.password === v.confirm, { path: ['confirm'], message: 'The two new passwords differ' });

/** The user chooses their own password: ends the one-time state and every session (sign in again). */
export async function changeOwnPassword(actor: Actor, input: z.input<typeof changePasswordSchema>) {
	if (actor.id == null) throw forbidden('Only a person has a password');
	const data = changePasswordSchema.parse(input);
	const user = await models().User.findByPk(actor.id);
	if (!user || !user.active) throw notFound('Your account');
	const keys = limits.signKeys(user.id, actor.ip);
	const attempt = await limits.consume(keys.account, limits.SIGN_PER_ACCOUNT);
	if (!attempt.allowed) throw new limits.RateLimited('Too many wrong passwords: wait before trying again.', attempt.retryAfter);
	if (!(await bcrypt.compare(data.current, user.passwordHash))) throw new ServiceError(401, 'wrong-password', 'Your current password is not correct', 'current');
	await limits.refund(keys.account);
	checkPassword(data.password, user.email);
	if (await bcrypt.compare(data.password, user.passwordHash)) throw invalid('Choose a password different from the current one', 'password');
	const hash = await bcrypt.hash(data.password, BCRYPT_COST);
	return transaction(async (tx) => {
		const locked = await models().User.findByPk(user.id, { transaction: tx, lock: tx.LOCK.UPDATE });
		if (!locked) throw notFound('Your account');
		const wasOneTime = locked.passwordMustChange;
		await locked.update({ passwordHash: hash, passwordChangedAt: new Date(), passwordMustChange: false }, { transaction: tx });
		await endSessions(locked.id, tx);
		await audit.record(tx, actor, { action: 'user.password-changed', entity: 'user', entityId: locked.id, after: { replacedOneTime: wasOneTime, ...(actor.ip ? { ip: actor.ip } : {}) } });
		return toPublic(locked);
	});
}

/** Sign-out ends every session of the user, on every device (the cookie alone cannot be trusted to be gone). */
export async function signOutEverywhere(actor: Actor) {
	if (actor.id == null) return;
	await transaction(async (tx) => {
		await endSessions(actor.id as number, tx);
		await audit.record(tx, actor, { action: 'user.signed-out', entity: 'user', entityId: actor.id });
	});
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
