import type { Sequelize } from 'sequelize';
import { Umzug, SequelizeStorage } from 'umzug';
import { migrations } from './migrations';
import { config } from '../config';

/** Applies pending migrations in order; the list is explicit so the bundled server needs no file globbing. */
export async function migrate(sequelize: Sequelize, { quiet = false } = {}) {
	const umzug = new Umzug({
		migrations: migrations.map((m) => ({
			name: m.name,
			up: () => m.up(sequelize),
			down: () => m.down(sequelize)
		})),
		storage: new SequelizeStorage({ sequelize, tableName: 'schema_migrations' }),
		logger: quiet ? undefined : console
	});
	const applied = await umzug.up();
	await grantAppRole(sequelize);
	return applied;
}

/**
 * The app role's rights, re-applied after every migration so new tables are covered: reading and changing the working
 * tables, but on the audit trail only INSERT and SELECT (no UPDATE, DELETE or TRUNCATE; triggers are the owner's).
 * LOTGATE_APP_ROLE names it (default lotgate_app); nothing is granted when that role does not exist.
 */
export async function grantAppRole(sequelize: Sequelize) {
	const role = config().LOTGATE_APP_ROLE;
	if (!/^[a-z_][a-z0-9_]*$/.test(role)) throw new Error(`LOTGATE_APP_ROLE "${role}" is not a plain role name`);
	const [rows] = await sequelize.query(`SELECT 1 FROM pg_roles WHERE rolname = '${role}' AND rolname <> current_user`);
	if (!rows.length) return;
	await sequelize.query(`
GRANT USAGE ON SCHEMA public TO ${role};
GRANT SELECT, INSERT, UPDATE, DELETE ON ALL TABLES IN SCHEMA public TO ${role};
GRANT USAGE, SELECT, UPDATE ON ALL SEQUENCES IN SCHEMA public TO ${role};
REVOKE ALL ON audit_events, audit_chain, schema_migrations FROM ${role};
GRANT SELECT, INSERT ON audit_events TO ${role};
GRANT SELECT ON audit_chain TO ${role};`);
}
