// The job worker process (`npm run worker`): works every registered pg-boss queue (model builds, mail: certificate,
// alert, drift and audit-checkpoint messages) and writes the hourly audit checkpoint. No HTTP. Any number of workers
// may run against one PostgreSQL: pg-boss hands each job to exactly one of them (SELECT … FOR UPDATE SKIP LOCKED).
import { startCheckpoints, stopCheckpoints } from './audit-checkpoint';
import { closeDatabase, databaseUrl } from './db';
import { startWorkers, stopJobs } from './jobs';
import { config } from './config';

/** Starts working the queues; resolves once the workers are polling. Retries while the database is unreachable. */
export async function runWorker(options: { log?: (message: string) => void } = {}): Promise<{ stop(): Promise<void> }> {
	const log = options.log ?? ((m: string) => console.log(`[worker ${process.pid}] ${m}`));
	databaseUrl(); // fails fast without DATABASE_URL
	for (let attempt = 1; ; attempt++) {
		try {
			await startWorkers();
			break;
		} catch (error) {
			log(`queues not reachable (${(error as Error).message}); retrying in 5 s`);
			await stopJobs().catch(() => {});
			await new Promise((r) => setTimeout(r, Math.min(5000, 500 * attempt)));
		}
	}
	startCheckpoints();
	log('working the job queues');
	let stopped = false;
	return {
		async stop() {
			if (stopped) return;
			stopped = true;
			stopCheckpoints();
			await stopJobs().catch(() => {});
			await closeDatabase().catch(() => {});
			log('stopped');
		}
	};
}

/** True when the web process should also work the queues (one-process installs, `npm start`, the browser tests). */
export function jobsInProcess(env: NodeJS.ProcessEnv = process.env): boolean {
	return config(env).LOTGATE_JOBS_IN_PROCESS;
}
