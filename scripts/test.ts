// `npm test`: installs what the tests need (Debian chromium, postgresql), type-checks (svelte-check) and lints (ESLint),
// then runs every Vitest project.
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { ensurePostgresInstalled } from './lib/postgres';

const started = Date.now();
ensurePostgresInstalled();
if (!existsSync('/usr/bin/chromium')) {
	if (process.getuid?.() !== 0) {
		console.error('Debian chromium is missing (/usr/bin/chromium); install it with apt-get install chromium.');
		process.exit(1);
	}
	console.log('[test] installing Debian package chromium (apt-get)…');
	execFileSync('apt-get', ['update', '-qq'], { stdio: 'inherit' });
	execFileSync('apt-get', ['install', '-y', '-qq', 'chromium', 'poppler-utils'], { stdio: 'inherit', env: { ...process.env, DEBIAN_FRONTEND: 'noninteractive' } });
}
if (!existsSync('/usr/bin/pdftotext')) {
	execFileSync('apt-get', ['install', '-y', '-qq', 'poppler-utils'], { stdio: 'inherit', env: { ...process.env, DEBIAN_FRONTEND: 'noninteractive' } });
}
// Type errors and lint errors fail the test command (and so CI) before any test runs.
for (const script of ['check', 'lint']) {
	console.log(`[test] npm run ${script}`);
	const result = spawnSync('npm', ['run', '--silent', script], { stdio: 'inherit' });
	if (result.status !== 0) {
		console.error(`[test] npm run ${script} failed`);
		process.exit(result.status ?? 1);
	}
}
const args = process.argv.slice(2);
const run = spawnSync('npx', ['vitest', 'run', ...args], { stdio: 'inherit', env: { ...process.env, LOTGATE_TEST: '1' } });
console.log(`[test] finished in ${((Date.now() - started) / 1000).toFixed(0)} s`);
process.exit(run.status ?? 1);
