// Local stand-ins started by the start and test commands (demo and test mode only).
export interface RunningService {
	close(): Promise<void>;
}

/**
 * The SMTP fake that stores every message in PostgreSQL (mail_messages), on 127.0.0.1 at LOTGATE_SMTP_PORT or a free
 * port. Sets env.SMTP_URL so the app started with `env` sends there: in demo and test mode no mail leaves the machine.
 */
export async function startMailFake(env: NodeJS.ProcessEnv): Promise<RunningService | null> {
	if (!env.DATABASE_URL) throw new Error('startMailFake needs DATABASE_URL (the fake stores what it receives in PostgreSQL)');
	const { startSmtpFake } = await preload();
	const fake = await startSmtpFake({ databaseUrl: env.DATABASE_URL, port: env.LOTGATE_SMTP_PORT ? Number(env.LOTGATE_SMTP_PORT) : 0 });
	env.SMTP_URL = fake.url;
	console.log(`[start] local mail recorder on ${fake.url} (messages appear in Admin → Demo inbox)`);
	return { close: fake.close };
}

/** Loads the mail recorder's code now (the compiled launcher does this before a build replaces dist/start/). */
export function preload() {
	return import('../../src/lib/server/mail-fake');
}
