// Local stand-ins started by the start and test commands (demo and test mode only).
export interface RunningService {
	close(): Promise<void>;
}

/** The SMTP fake that stores every message in PostgreSQL; filled in by the mail workflow. */
export async function startMailFake(env: NodeJS.ProcessEnv): Promise<RunningService | null> {
	void env;
	return null;
}
