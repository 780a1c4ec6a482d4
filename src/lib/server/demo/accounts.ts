// The demo scenario's accounts, apart from the seed so that the start banner can name them without loading the seed
// (and with it Sequelize and the services) while the app boots.
import type { Role } from '../../permissions';

export const DEMO_ACCOUNTS: { email: string; name: string; roles: Role[] }[] = [
	{ email: 'technician@demo.test', name: 'Tomasz Reyne', roles: ['technician'] },
	{ email: 'chemist@demo.test', name: 'Ilse Marwood', roles: ['chemometrician'] },
	{ email: 'qa@demo.test', name: 'Priya Halvorsen', roles: ['qa'] },
	{ email: 'qa2@demo.test', name: 'Dominic Ashgrove', roles: ['qa'] },
	{ email: 'buyer@demo.test', name: 'Lena Okafor-Brandt', roles: ['procurement'] },
	{ email: 'admin@demo.test', name: 'Sam Whitlock', roles: ['admin'] }
];
