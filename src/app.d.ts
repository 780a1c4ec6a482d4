import type { Actor } from '$lib/server/services/actor';

declare global {
	namespace App {
		interface Locals {
			/** Set once in hooks: a signed-in person or an instrument token; null when anonymous. */
			actor: Actor | null;
			user: { id: number; name: string; email: string; roles: import('$lib/permissions').Role[]; mustChangePassword?: boolean } | null;
			requestId: string;
			/** set by handleError when a database connection error was thrown: the answer becomes a 503 */
			databaseFailed?: boolean;
		}
		interface Error {
			message: string;
			code?: string;
			requestId?: string;
		}
		interface PageData {
			user?: { id: number; name: string; roles: import('$lib/permissions').Role[] } | null;
		}
	}
}

export {};
