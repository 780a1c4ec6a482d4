import { signOut } from '$lib/server/auth';
import * as users from '$lib/server/services/users';
import type { Actions } from './$types';

// Signing out ends every session of the user (the session version rises), not just this browser's cookie.
export const actions = {
	default: async (event) => {
		if (event.locals.actor?.id != null) await users.signOutEverywhere(event.locals.actor);
		return signOut(event);
	}
} satisfies Actions;
