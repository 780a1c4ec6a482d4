import type { Sequelize } from 'sequelize';
import { Umzug, SequelizeStorage } from 'umzug';
import { migrations } from './migrations';

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
	return umzug.up();
}
