import { describe, expect, test } from 'vitest';
import { config } from '../../../src/lib/server/config';
import { jobsInProcess } from '../../../src/lib/server/worker';

describe('typed configuration (src/lib/server/config.ts)', () => {
	test('defaults when a variable is unset or empty', () => {
		const c = config({});
		expect(c.DB_POOL_MAX).toBe(10);
		expect(c.LOTGATE_MAX_UPLOAD_MB).toBe(20);
		expect(c.LOTGATE_MAX_BATCH_FILES).toBe(200);
		expect(c.LOTGATE_MAX_BATCH_MB).toBe(200);
		expect(c.LOTGATE_CHECKPOINT_INTERVAL_MS).toBe(3_600_000);
		expect(c.MAIL_FROM).toBe('Lotgate <lotgate@lotgate.invalid>');
		expect(c.LOTGATE_APP_ROLE).toBe('lotgate_app');
		expect(c.LOTGATE_DEMO).toBe(false);
		expect(c.DATABASE_URL).toBeUndefined();
		expect(config({ DB_POOL_MAX: '' }).DB_POOL_MAX).toBe(10);
	});
	test('numbers and flags are parsed', () => {
		const c = config({ DB_POOL_MAX: '6', LOTGATE_MAX_UPLOAD_MB: '0.01', LOTGATE_DEMO: '1', LOTGATE_TEST: '0' });
		expect(c.DB_POOL_MAX).toBe(6);
		expect(c.LOTGATE_MAX_UPLOAD_MB).toBe(0.01);
		expect(c.LOTGATE_DEMO).toBe(true);
		expect(c.LOTGATE_TEST).toBe(false);
		expect(jobsInProcess({ LOTGATE_JOBS_IN_PROCESS: '1' })).toBe(true);
		expect(jobsInProcess({})).toBe(false);
	});
	test('a bad value is an error naming the variable', () => {
		expect(() => config({ DB_POOL_MAX: 'ten' })).toThrow('DB_POOL_MAX must be a positive number, got "ten"');
		expect(() => config({ LOTGATE_MAX_BATCH_MB: '-1' })).toThrow('LOTGATE_MAX_BATCH_MB must be a positive number');
	});
});
