import type { Sequelize } from 'sequelize';

// The auditor role (read everything, export the audit trail, change nothing): the roles CHECK constraints accept it.
const ROLES_BEFORE = `ARRAY['technician','chemometrician','qa','procurement','admin']::text[]`;
const ROLES_AFTER = `ARRAY['technician','chemometrician','qa','procurement','admin','auditor']::text[]`;

const widen = (roles: string) => `
ALTER TABLE users DROP CONSTRAINT users_roles_check;
ALTER TABLE users ADD CONSTRAINT users_roles_check CHECK (roles <@ ${roles});
ALTER TABLE role_change_requests DROP CONSTRAINT role_change_requests_roles_after_check;
ALTER TABLE role_change_requests ADD CONSTRAINT role_change_requests_roles_after_check CHECK (roles_after <@ ${roles});
`;

export default {
	name: '060-auditor-role',
	async up(sequelize: Sequelize) {
		await sequelize.query(widen(ROLES_AFTER));
	},
	async down(sequelize: Sequelize) {
		await sequelize.query(`UPDATE users SET roles = array_remove(roles, 'auditor') WHERE 'auditor' = ANY(roles);` + widen(ROLES_BEFORE));
	}
};
