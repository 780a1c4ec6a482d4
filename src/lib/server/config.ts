// The one place the server reads its environment: every variable, its type and its default, checked with zod.
// Read per call (a parse of a few strings), so tests and operators can change a value without a restart of the module.
// Each variable is documented in the README's configuration table. Scripts that start processes (scripts/*.ts) set
// these for their children and read only what they need themselves.
import { z } from 'zod';

const text = z.string().trim().min(1).optional();
const positive = (name: string, fallback: number) =>
	z
		.string()
		.optional()
		.transform((v, ctx) => {
			if (v == null || v.trim() === '') return fallback;
			const n = Number(v);
			if (!Number.isFinite(n) || n <= 0) {
				ctx.addIssue({ code: 'custom', message: `${name} must be a positive number, got "${v}"` });
				return z.NEVER;
			}
			return n;
		});
const flag = z
	.string()
	.optional()
	.transform((v) => v === '1');

const schema = z.object({
	DATABASE_URL: text,
	DATABASE_OWNER_URL: text,
	DB_POOL_MAX: positive('DB_POOL_MAX', 10),
	AUTH_SECRET: text,
	LOTGATE_DEMO: flag,
	LOTGATE_DEMO_PASSWORD: z.string().optional().transform((v) => v || 'demo-lotgate'),
	LOTGATE_TEST: flag,
	LOTGATE_TIME_ZONE: text,
	SMTP_URL: text,
	MAIL_FROM: z.string().optional().transform((v) => v || 'Lotgate <lotgate@lotgate.invalid>'),
	LOTGATE_MAX_UPLOAD_MB: positive('LOTGATE_MAX_UPLOAD_MB', 20),
	LOTGATE_MAX_BATCH_FILES: positive('LOTGATE_MAX_BATCH_FILES', 200),
	LOTGATE_MAX_BATCH_MB: positive('LOTGATE_MAX_BATCH_MB', 200),
	LOTGATE_DATA_DIR: text,
	LOTGATE_AUDIT_KEY: z.string().optional(),
	LOTGATE_AUDIT_CHECKPOINT_DIR: text,
	LOTGATE_AUDIT_ARCHIVE: text,
	LOTGATE_CHECKPOINT_INTERVAL_MS: positive('LOTGATE_CHECKPOINT_INTERVAL_MS', 3_600_000),
	LOTGATE_JOBS_IN_PROCESS: flag,
	LOTGATE_APP_ROLE: z.string().optional().transform((v) => v || 'lotgate_app'),
	/** 'production' turns off the zod check of raw query rows (src/lib/server/db/rows.ts). */
	NODE_ENV: z.string().optional()
});
export type Config = z.output<typeof schema>;

/** The environment, checked: a bad value is an error naming the variable, never a silent NaN. */
export function config(env: NodeJS.ProcessEnv = process.env): Config {
	const parsed = schema.safeParse(env);
	if (!parsed.success) throw new Error(`Configuration: ${parsed.error.issues.map((i) => i.message || `${i.path.join('.')} is invalid`).join('; ')}`);
	return parsed.data;
}
