import type { Role } from '../db/models';

/** Who performs a change: a signed-in user, an instrument token, or the system itself. */
export interface Actor {
	id: number | null;
	label: string;
	roles: Role[];
	requestId?: string;
	instrumentId?: number;
	/** client address, for per-address rate limits and the audit trail */
	ip?: string;
}

export const systemActor: Actor = { id: null, label: 'system', roles: [] };

export function hasRole(actor: Pick<Actor, 'roles'> | null | undefined, ...roles: Role[]): boolean {
	return !!actor && roles.some((role) => actor.roles.includes(role));
}
