// Rate limits shared by every app process: fixed-window counters in PostgreSQL (`rate_limits`), one atomic upsert a hit.
// An attempt is counted before it runs (so 40 parallel guesses cannot all slip through) and refunded when it succeeds,
// so only failures add up.
import { QueryTypes } from 'sequelize';
import { sequelize } from './db';
import { ServiceError } from './services/errors';

export interface LimitPolicy {
	/** attempts allowed within one window */
	limit: number;
	windowSeconds: number;
}

/** Sign-in: failures per client address and per e-mail (known or not, so the answer never tells which). */
export const LOGIN_PER_IP: LimitPolicy = { limit: 20, windowSeconds: 10 * 60 };
export const LOGIN_PER_ACCOUNT: LimitPolicy = { limit: 5, windowSeconds: 15 * 60 };
/** Signatures: wrong re-entered passwords per signer and per client address. Separate from sign-in, so a sign-in
 * lockout caused by someone else never stops the real user who already has a session. */
export const SIGN_PER_ACCOUNT: LimitPolicy = { limit: 5, windowSeconds: 15 * 60 };
export const SIGN_PER_IP: LimitPolicy = { limit: 20, windowSeconds: 10 * 60 };

export interface LimitState {
	allowed: boolean;
	hits: number;
	/** seconds until the window ends */
	retryAfter: number;
}

/** Counts one attempt under `key`; `allowed` is false once the window holds more than `limit` attempts. */
export async function consume(key: string, policy: LimitPolicy): Promise<LimitState> {
	const [row] = await sequelize().query<{ hits: number; retry_after: number }>(
		`INSERT INTO rate_limits AS r (key, window_start, hits) VALUES (:key, now(), 1)
		 ON CONFLICT (key) DO UPDATE SET
		   hits = CASE WHEN r.window_start <= now() - make_interval(secs => :window) THEN 1 ELSE r.hits + 1 END,
		   window_start = CASE WHEN r.window_start <= now() - make_interval(secs => :window) THEN now() ELSE r.window_start END
		 RETURNING hits, GREATEST(1, CEIL(EXTRACT(EPOCH FROM (window_start + make_interval(secs => :window) - now()))))::int AS retry_after`,
		{ replacements: { key, window: policy.windowSeconds }, type: QueryTypes.SELECT }
	);
	if (Math.random() < 0.01) void sweep().catch(() => {});
	return { allowed: row.hits <= policy.limit, hits: row.hits, retryAfter: row.retry_after };
}

/** Gives back one counted attempt (it succeeded). */
export async function refund(key: string): Promise<void> {
	await sequelize().query('UPDATE rate_limits SET hits = GREATEST(0, hits - 1) WHERE key = :key', { replacements: { key } });
}

/** Forgets a key (an admin reset, a successful sign-in). */
export async function reset(key: string): Promise<void> {
	await sequelize().query('DELETE FROM rate_limits WHERE key = :key', { replacements: { key } });
}

async function sweep() {
	await sequelize().query("DELETE FROM rate_limits WHERE window_start < now() - interval '1 day'");
}

/** 429 with the seconds to wait; the API wrapper and the forms send them as `Retry-After`. */
export class RateLimited extends ServiceError {
	constructor(
		message: string,
		readonly retryAfter: number
	) {
		super(429, 'rate-limited', message);
	}
}

export const loginKeys = (email: string, ip?: string) => ({ account: `login:acct:${email}`, ip: ip ? `login:ip:${ip}` : null });
export const signKeys = (userId: number, ip?: string) => ({ account: `sign:acct:${userId}`, ip: ip ? `sign:ip:${ip}` : null });
