// The mail queue: one job per outbox message, retried with backoff; the outbox row records every attempt.
import { defineQueue, enqueue } from '../jobs';
import { deliver, MAIL_MAX_ATTEMPTS, setDispatcher, stranded } from '../mail';

export const MAIL_QUEUE = 'mail-send';

defineQueue(
	MAIL_QUEUE,
	async (data) => {
		// Throws while retries remain, so pg-boss tries again later (5 s, 10 s, 20 s, …).
		await deliver(Number(data.outboxId));
	},
	{ retryLimit: MAIL_MAX_ATTEMPTS - 1 }
);

setDispatcher(async (outboxId) => {
	await enqueue(MAIL_QUEUE, { outboxId });
});

// Messages committed while the queue was unreachable wait in the outbox; hand them over again now and then.
const sweep = setInterval(() => {
	stranded(60)
		.then((ids) => Promise.all(ids.map((outboxId) => enqueue(MAIL_QUEUE, { outboxId }))))
		.catch((error) => console.error('[mail] outbox sweep failed:', error?.message ?? error));
}, 60_000);
sweep.unref();
