// `npm run stop`: ends a running `npm start` (which stops its app) and the embedded database.
import { existsSync, readFileSync, rmSync } from 'node:fs';
import { resolve } from 'node:path';
import { stopCluster } from './lib/postgres';
import { dataRoot } from './lib/runtime';

const pidFile = resolve(dataRoot, 'app.pid');
if (existsSync(pidFile)) {
	const pid = Number(readFileSync(pidFile, 'utf8'));
	try {
		process.kill(pid, 'SIGTERM');
		console.log(`[stop] asked Lotgate (pid ${pid}) to stop`);
		await new Promise((r) => setTimeout(r, 1500));
	} catch {
		console.log('[stop] no running Lotgate process');
	}
	rmSync(pidFile, { force: true });
}
stopCluster();
