import { SvelteKitAuth, CredentialsSignin } from '@auth/sveltekit';
import Credentials from '@auth/sveltekit/providers/credentials';
import { AuthenticationError, authenticate } from './services/users';
import { LRUCache } from 'lru-cache';
import { config } from './config';

/** Idle limit: the cookie's expiry moves on with every request. */
export const SESSION_MAX_AGE_SECONDS = 8 * 60 * 60;
/** Absolute limit from sign-in, whatever the activity (checked in hooks.server.ts). */
export const SESSION_ABSOLUTE_SECONDS = 12 * 60 * 60;
/** Set by the /login action from the socket address; refused from outside (Auth.js's own routes are closed to clients). */
export const CLIENT_IP_HEADER = 'x-lotgate-client-ip';

/** What the session cookie carries besides Auth.js's own claims. */
export interface LotgateSession {
	uid?: number;
	/** users.session_version when the cookie was issued: a higher version in the database ends the session */
	sv?: number;
	/** sign-in time, seconds since the epoch, for the absolute limit */
	authAt?: number;
}

/**
 * Seconds to wait after a refused sign-in, by request id, for the /login action's Retry-After (Auth.js keeps only the code).
 * The /login action deletes its entry once read; an entry nobody reads (a sign-in posted straight to Auth.js) expires
 * after a minute, and at most 1000 are kept.
 */
export const signInRetryAfter = new LRUCache<string, number>({ max: 1000, ttl: 60_000 });

class LotgateSignInError extends CredentialsSignin {
	retryAfter?: number;
	constructor(code: string, retryAfter?: number) {
		super();
		this.code = code;
		this.retryAfter = retryAfter;
	}
}

// Sessions are signed, encrypted JWT cookies (httpOnly, sameSite=lax, Secure whenever the request came over https),
// revocable through the per-user session version that hooks.server.ts compares on every request.
export const { handle: authHandle, signIn, signOut } = SvelteKitAuth(async (event) => ({
	trustHost: true,
	secret: config().AUTH_SECRET,
	useSecureCookies: event.url.protocol === 'https:',
	session: { strategy: 'jwt', maxAge: SESSION_MAX_AGE_SECONDS },
	pages: { signIn: '/login', error: '/login' },
	providers: [
		Credentials({
			id: 'credentials',
			credentials: { email: {}, password: {} },
			async authorize(credentials, request) {
				try {
					const user = await authenticate(
						String(credentials?.email ?? ''),
						String(credentials?.password ?? ''),
						'sign-in',
						request.headers.get('x-request-id') ?? undefined,
						request.headers.get(CLIENT_IP_HEADER) ?? undefined
					);
					return { id: String(user.id), email: user.email, name: user.name, sv: user.sessionVersion } as { id: string; email: string; name: string };
				} catch (error) {
					if (error instanceof AuthenticationError) {
						const requestId = request.headers.get('x-request-id');
						if (requestId && error.retryAfter) signInRetryAfter.set(requestId, error.retryAfter);
						throw new LotgateSignInError(error.reason, error.retryAfter);
					}
					throw error;
				}
			}
		})
	],
	callbacks: {
		jwt({ token, user }) {
			if (user?.id) {
				token.uid = Number(user.id);
				token.sv = Number((user as { sv?: number }).sv ?? 0);
				token.authAt = Math.floor(Date.now() / 1000);
			}
			return token;
		},
		session({ session, token }) {
			const out = session as unknown as LotgateSession;
			out.uid = token.uid as number;
			out.sv = token.sv as number;
			out.authAt = token.authAt as number;
			return session;
		}
	}
}));
