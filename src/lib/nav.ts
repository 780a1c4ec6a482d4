import { mayEnter, type Role } from './permissions';

export interface NavItem {
	href: string;
	label: string;
}

const ITEMS: NavItem[] = [
	{ href: '/', label: 'Home' },
	{ href: '/lots', label: 'Lots' },
	{ href: '/materials', label: 'Materials' },
	{ href: '/intake', label: 'Intake' },
	{ href: '/suppliers', label: 'Suppliers' },
	{ href: '/instruments', label: 'Instruments' },
	{ href: '/alerts', label: 'Alerts' },
	{ href: '/audit', label: 'Audit trail' },
	{ href: '/admin', label: 'Admin' }
];

export function navFor(roles: readonly Role[]): NavItem[] {
	return ITEMS.filter((item) => mayEnter(roles, item.href));
}
