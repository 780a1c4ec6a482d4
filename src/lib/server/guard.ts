import { error, redirect, type RequestEvent } from '@sveltejs/kit';
import { flatRoles, type Allowed } from '$lib/permissions';
import { hasRole, type Actor } from './services/actor';

/** For page loads and form actions: the hook guards the area, this re-checks the specific role. */
export function requireUser(event: RequestEvent, ...allowed: Allowed[]): Actor {
	const actor = event.locals.actor;
	const roles = flatRoles(allowed);
	if (!actor || actor.id == null) redirect(303, `/login?redirectTo=${encodeURIComponent(event.url.pathname + event.url.search)}`);
	if (roles.length && !hasRole(actor, roles)) error(403, `This needs one of the roles: ${roles.join(', ')}`);
	return actor;
}
