// `npm run worker`: job workers only (model builds, mail), no web server. Reads DATABASE_URL (and SMTP_URL, the audit
// key and checkpoint folder, as the web server does). Start as many as you like; SIGTERM finishes the current job.
import { runWorker } from '../src/lib/server/worker';

const worker = await runWorker();
for (const signal of ['SIGINT', 'SIGTERM'] as const) {
	process.once(signal, () => {
		void worker.stop().then(() => process.exit(0));
	});
}
