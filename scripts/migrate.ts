import { resolveDatabase } from './lib/runtime';

const { ownerUrl } = await resolveDatabase();
// Migrations run as the owner role; the app role gets its rights at the end of migrate().
process.env.DATABASE_URL = ownerUrl;
const { sequelize, closeDatabase } = await import('../src/lib/server/db/index');
const { migrate } = await import('../src/lib/server/db/migrate');
await migrate(sequelize());
await closeDatabase();
