import { afterAll, inject } from 'vitest';

process.env.DATABASE_URL = inject('databaseUrl');
process.env.AUTH_SECRET ??= 'integration-test-secret';
export const TEST_AUDIT_KEY = 'integration-test-audit-key-0123456789';
process.env.LOTGATE_AUDIT_KEY = TEST_AUDIT_KEY;
process.env.LOTGATE_AUDIT_CHECKPOINT_DIR = inject('auditCheckpointDir');

afterAll(async () => {
	const { closeDatabase } = await import('../../src/lib/server/db/index');
	await closeDatabase();
});
