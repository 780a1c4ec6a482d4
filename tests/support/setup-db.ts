import { afterAll, inject } from 'vitest';

process.env.DATABASE_URL = inject('databaseUrl');
process.env.AUTH_SECRET ??= 'integration-test-secret';

afterAll(async () => {
	const { closeDatabase } = await import('../../src/lib/server/db/index');
	await closeDatabase();
});
