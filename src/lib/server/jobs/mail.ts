// The mail job: one per outbox message, retried with backoff; the outbox row records every attempt.
import { deliver, MAIL_MAX_ATTEMPTS, setDispatcher, stranded } from '../mail';
import { enqueue, type Job } from './boss';
import { QUEUES } from './queues';

export const mailJob: Job = {
	queue: QUEUES.mail,
	retryLimit: MAIL_MAX_ATTEMPTS - 1,
	// Throws while retries remain, so pg-boss tries again later (5 s, 10 s, 20 s, …).
	handler: async (data) => {
		await deliver(Number(data.outboxId));
	},
	install: () => {
		setDispatcher(async (outboxId) => {
			await enqueue(QUEUES.mail, { outboxId });
		});
	},
	work: () => {
		// Messages committed while the queue was unreachable wait in the outbox; hand them over again now and then.
		const sweep = setInterval(() => {
			stranded(60)
				.then((ids) => Promise.all(ids.map((outboxId) => enqueue(QUEUES.mail, { outboxId }))))
				.catch((error) => console.error('[mail] outbox sweep failed:', error?.message ?? error));
		}, 60_000);
		sweep.unref();
	}
};
