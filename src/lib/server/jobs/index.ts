// Background work (model builds, certificates, mail) runs as pg-boss jobs, so more workers can join one PostgreSQL.
// One pattern for every job: a module in this folder exports a `Job` ({ queue, retryLimit, handler, install? }) with its
// queue name from ./queues, and is listed in JOBS below. Services enqueue with `enqueue(QUEUES.x, data)` from ./boss.
import { register, startWorkers as startQueues, type Job } from './boss';
import { mailJob } from './mail';
import { modelBuildJob } from './model-build';

export { enqueue, stopJobs, type Job } from './boss';
export { QUEUES, type QueueName } from './queues';

export const JOBS: Job[] = [modelBuildJob, mailJob];

let installed = false;
/** Registers every job's queue and runs its producer-side wiring; once per process (web server or worker). */
export function installJobs() {
	if (installed) return;
	installed = true;
	for (const job of JOBS) {
		register(job);
		job.install?.();
	}
}

let working = false;
/** Starts the workers of every job (installing them first if needed): the worker process, or a one-process install. */
export async function startWorkers() {
	installJobs();
	await startQueues();
	if (working) return;
	working = true;
	for (const job of JOBS) job.work?.();
}
