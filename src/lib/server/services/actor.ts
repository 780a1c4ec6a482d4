import { holds, type Allowed, type Role } from '../../permissions';

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

/** True when the actor holds any of the roles or capabilities (`hasRole(actor, can.uploadScans)`). */
export function hasRole(actor: Pick<Actor, 'roles'> | null | undefined, ...allowed: Allowed[]): boolean {
	return !!actor && holds(actor.roles, ...allowed);
}
