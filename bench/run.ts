// `npm run bench`: runs every bench/*.bench.ts in turn; each prints its figures next to its target.
import { spawnSync } from 'node:child_process';
import { readdirSync } from 'node:fs';

const only = process.argv.slice(2);
const files = readdirSync(new URL('.', import.meta.url))
	.filter((f) => f.endsWith('.bench.ts'))
	.filter((f) => !only.length || only.some((o) => f.includes(o)))
	.sort();
let failed = 0;
for (const file of files) {
	console.log(`\n=== ${file} ===`);
	const run = spawnSync('npx', ['tsx', `bench/${file}`], { stdio: 'inherit' });
	if (run.status !== 0) failed++;
}
process.exit(failed ? 1 : 0);
