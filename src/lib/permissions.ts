// Shared by the server guard and the navigation: which roles reach which area.
export type Role = 'technician' | 'chemometrician' | 'qa' | 'procurement' | 'admin';
export const ROLE_LABELS: Record<Role, string> = {
	technician: 'Technician',
	chemometrician: 'Chemometrician',
	qa: 'QA manager',
	procurement: 'Procurement',
	admin: 'Admin'
};

interface AreaRule {
	prefix: string;
	roles: Role[] | 'any';
}

// First match wins; paths not listed need only a signed-in user.
export const AREA_RULES: AreaRule[] = [
	{ prefix: '/admin', roles: ['admin'] },
	{ prefix: '/intake', roles: ['technician', 'chemometrician', 'qa', 'admin'] },
	{ prefix: '/api/v1/admin', roles: ['admin'] },
	{ prefix: '/api/v1/users', roles: ['admin'] },
	{ prefix: '/api/v1/instruments', roles: ['admin'] },
	{ prefix: '/audit', roles: ['qa', 'admin'] },
	{ prefix: '/api/v1/audit', roles: ['qa', 'admin'] },
	{ prefix: '/alerts', roles: ['procurement', 'qa', 'admin'] },
	{ prefix: '/api/v1/alerts', roles: ['procurement', 'qa', 'admin'] }
];

export function rolesFor(pathname: string): Role[] | 'any' {
	for (const rule of AREA_RULES) {
		if (pathname === rule.prefix || pathname.startsWith(rule.prefix + '/')) return rule.roles;
	}
	return 'any';
}

export function mayEnter(roles: readonly Role[], pathname: string): boolean {
	const needed = rolesFor(pathname);
	return needed === 'any' || needed.some((r) => roles.includes(r));
}
