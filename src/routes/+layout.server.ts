import type { LayoutServerLoad } from './$types';

// The browser gets only what the shell needs, never the user row.
export const load = (async ({ locals }) => ({
	user: locals.user ? { id: locals.user.id, name: locals.user.name, roles: locals.user.roles } : null
})) satisfies LayoutServerLoad;
