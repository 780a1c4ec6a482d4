// The one place for roles and what each may do. The hook, the navigation, the services and the routes all read it.
// Adding a role: add it to ROLES and ROLE_LABELS, put it in the capabilities it should have, add a migration that
// widens the roles CHECK constraints, and document it in the README's roles table.

export const ROLES = ['technician', 'chemometrician', 'qa', 'procurement', 'admin', 'auditor'] as const;
export type Role = (typeof ROLES)[number];

export const ROLE_LABELS: Record<Role, string> = {
	technician: 'Technician',
	chemometrician: 'Chemometrician',
	qa: 'QA manager',
	procurement: 'Procurement',
	admin: 'Admin',
	auditor: 'Auditor'
};

/** Every role: what "anyone signed in" may do (a new role gets these reads without touching the handlers). */
export const ANY_SIGNED_IN: readonly Role[] = ROLES;

/**
 * Capability → the roles that hold it. A user holds a capability when any of their roles is listed.
 * The auditor reads everything an inspector needs (lots, materials, models, libraries, spectra, alerts, the audit
 * trail and its export) and changes nothing; the admin area (users, tokens, demo inbox) stays with admins.
 */
export const can = {
	/** lots, materials, suppliers, dispositions, certificates, scorecards */
	read: ANY_SIGNED_IN,
	readModels: ['technician', 'chemometrician', 'qa', 'admin', 'auditor'],
	readLibrary: ['chemometrician', 'qa', 'admin', 'auditor'],
	readSpectra: ['technician', 'chemometrician', 'qa', 'admin', 'auditor'],
	readAlerts: ['procurement', 'qa', 'admin', 'auditor'],
	readAudit: ['qa', 'admin', 'auditor'],
	exportAudit: ['qa', 'admin', 'auditor'],

	receiveLots: ['technician', 'admin'],
	uploadScans: ['technician', 'admin'],
	uploadSpectra: ['technician', 'chemometrician', 'admin'],
	manageMaterials: ['chemometrician', 'admin'],
	curateLibrary: ['chemometrician', 'admin'],
	buildModels: ['chemometrician', 'admin'],
	approveModels: ['qa'],
	/** record the periodic review of an approved model version (issue 12 §1) */
	reviewModels: ['chemometrician', 'qa'],
	signDispositions: ['qa'],
	manageSuppliers: ['procurement', 'admin'],
	requestSupplierStatus: ['procurement'],
	cosignSupplierStatus: ['qa'],
	handleAlerts: ['procurement', 'admin'],
	proposeInvalidation: ['technician', 'chemometrician', 'admin'],
	decideInvalidation: ['qa'],
	/** restart a supplier's drift history after a confirmed process change */
	restartDriftBaseline: ['chemometrician'],
	/** record an instrument performance check (the standard's spectrum or linearity readings) */
	recordInstrumentChecks: ['technician', 'admin'],
	administer: ['admin'],
	/** accept as a new scan a file whose exact bytes are already stored elsewhere, for a documented case, with a reason */
	overrideDuplicateEvidence: ['admin']
} as const satisfies Record<string, readonly Role[]>;
export type Capability = keyof typeof can;

/** Roles (or capability lists) flattened; a plain role is still accepted so a call can name one directly. */
export type Allowed = Role | readonly Role[];
export const flatRoles = (allowed: readonly Allowed[]): Role[] => allowed.flatMap((a) => (typeof a === 'string' ? [a] : [...a]));

/** True when any of `roles` is among the allowed roles or capability lists. */
export function holds(roles: readonly Role[], ...allowed: Allowed[]): boolean {
	return flatRoles(allowed).some((r) => roles.includes(r));
}

interface AreaRule {
	prefix: string;
	roles: readonly Role[] | 'any';
}

// First match wins; paths not listed need only a signed-in user.
export const AREA_RULES: AreaRule[] = [
	{ prefix: '/admin', roles: can.administer },
	{ prefix: '/intake', roles: can.readSpectra },
	{ prefix: '/api/v1/admin', roles: can.administer },
	{ prefix: '/api/v1/users', roles: can.administer },
	{ prefix: '/api/v1/instruments', roles: can.administer },
	{ prefix: '/audit', roles: can.readAudit },
	{ prefix: '/api/v1/audit', roles: can.readAudit },
	{ prefix: '/alerts', roles: can.readAlerts },
	{ prefix: '/api/v1/alerts', roles: can.readAlerts }
];

export function rolesFor(pathname: string): readonly Role[] | 'any' {
	for (const rule of AREA_RULES) {
		if (pathname === rule.prefix || pathname.startsWith(rule.prefix + '/')) return rule.roles;
	}
	return 'any';
}

export function mayEnter(roles: readonly Role[], pathname: string): boolean {
	const needed = rolesFor(pathname);
	return needed === 'any' || needed.some((r) => roles.includes(r));
}
