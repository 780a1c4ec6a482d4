import { resolveDatabase } from './lib/runtime';

const { url } = await resolveDatabase();
process.env.DATABASE_URL = url;
const { sequelize, closeDatabase } = await import('../src/lib/server/db/index');
const { migrate } = await import('../src/lib/server/db/migrate');
await migrate(sequelize());
await closeDatabase();
