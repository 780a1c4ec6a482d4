import { SvelteKitAuth, CredentialsSignin } from '@auth/sveltekit';
import Credentials from '@auth/sveltekit/providers/credentials';
import { AuthenticationError, authenticate } from './services/users';

export const SESSION_MAX_AGE_SECONDS = 8 * 60 * 60;

class LotgateSignInError extends CredentialsSignin {
	constructor(code: string) {
		super();
		this.code = code;
	}
}

// Sessions are signed, encrypted JWT cookies (httpOnly, sameSite=lax, secure on https), so app servers hold no state.
export const { handle: authHandle, signIn, signOut } = SvelteKitAuth({
	trustHost: true,
	secret: process.env.AUTH_SECRET,
	session: { strategy: 'jwt', maxAge: SESSION_MAX_AGE_SECONDS },
	pages: { signIn: '/login', error: '/login' },
	providers: [
		Credentials({
			id: 'credentials',
			credentials: { email: {}, password: {} },
			async authorize(credentials, request) {
				try {
					const user = await authenticate(String(credentials?.email ?? ''), String(credentials?.password ?? ''), 'sign-in', request.headers.get('x-request-id') ?? undefined);
					return { id: String(user.id), email: user.email, name: user.name };
				} catch (error) {
					if (error instanceof AuthenticationError) throw new LotgateSignInError(error.reason);
					throw error;
				}
			}
		})
	],
	callbacks: {
		jwt({ token, user }) {
			if (user?.id) token.uid = Number(user.id);
			return token;
		},
		session({ session, token }) {
			(session as unknown as { uid: number }).uid = token.uid as number;
			return session;
		}
	}
});
