// The pg-boss connection: enqueue from anywhere, work the queues of the registered jobs. Imports nothing of the app
// but the database URL, so services may import it statically without a cycle.
import PgBoss from 'pg-boss';
import { databaseUrl } from '../db';
import type { QueueName } from './queues';

export type JobHandler = (data: Record<string, unknown>, job: { id: string }) => Promise<void>;

/** One background job: its queue, its retry policy and its handler. Every job module exports one (see jobs/index.ts). */
export interface Job {
	queue: QueueName;
	retryLimit: number;
	handler: JobHandler;
	/** Producer-side wiring run once in every process that may enqueue (e.g. the mail outbox hand-off). */
	install?: () => void;
	/** Worker-side wiring run once when a process starts working the queues (e.g. the outbox sweep). */
	work?: () => void;
}

let instance: Promise<PgBoss> | null = null;
const handlers = new Map<string, { handler: JobHandler; retryLimit: number }>();
let working = false;

async function boss(): Promise<PgBoss> {
	if (!instance) {
		instance = (async () => {
			const b = new PgBoss({ connectionString: databaseUrl(), schema: 'pgboss', max: 4 });
			b.on('error', (error) => console.error('[jobs]', error));
			await b.start();
			return b;
		})();
		// A failed start must not be cached: the next call tries again.
		instance.catch(() => {
			instance = null;
		});
	}
	return instance;
}

/** Registers a job's queue with its retry policy (jobs/index.ts does this for every job). */
export function register(job: Job) {
	handlers.set(job.queue, { handler: job.handler, retryLimit: job.retryLimit });
	if (working) void work(job.queue);
}

async function work(name: string) {
	const b = await boss();
	const entry = handlers.get(name)!;
	await b.createQueue(name, { name, retryLimit: entry.retryLimit, retryDelay: 5, retryBackoff: true });
	await b.work(name, { pollingIntervalSeconds: 0.5, batchSize: 1 }, async (jobs) => {
		for (const job of jobs) await entry.handler(job.data as Record<string, unknown>, { id: job.id });
	});
}

export async function enqueue(name: QueueName, data: Record<string, unknown>, options: PgBoss.SendOptions = {}): Promise<string> {
	const b = await boss();
	const entry = handlers.get(name);
	await b.createQueue(name, { name, retryLimit: entry?.retryLimit ?? 0, retryDelay: 5, retryBackoff: true });
	const id = await b.send(name, data, options);
	if (!id) throw new Error(`pg-boss refused the job for queue ${name}`);
	return id;
}

/** Starts workers for every registered queue (the app server does this at start-up). */
export async function startWorkers() {
	working = true;
	for (const name of handlers.keys()) await work(name);
}

export async function stopJobs() {
	if (instance) {
		const b = await instance;
		instance = null;
		working = false;
		await b.stop({ graceful: true, timeout: 5000 });
	}
}
