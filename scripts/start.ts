// `npm start`: database (embedded unless DATABASE_URL), migrations, demo seed, build, then the app on 127.0.0.1.
import { spawn, spawnSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { projectRoot, stopCluster } from './lib/postgres';
import { authSecret, dataRoot, resolveDatabase } from './lib/runtime';

const started = Date.now();
const port = Number(process.env.PORT ?? 3000);
const { url, embedded } = await resolveDatabase();
const demo = process.env.LOTGATE_DEMO ? process.env.LOTGATE_DEMO === '1' : embedded;
const env: NodeJS.ProcessEnv = {
	...process.env,
	DATABASE_URL: url,
	AUTH_SECRET: authSecret(),
	LOTGATE_DEMO: demo ? '1' : '0',
	PORT: String(port),
	HOST: process.env.HOST ?? '127.0.0.1',
	// adapter-node assumes https without ORIGIN, which would refuse every form post on plain local http.
	ORIGIN: process.env.ORIGIN ?? `http://127.0.0.1:${port}`,
	// adapter-node refuses bodies over 512 kB by default; the intake applies its own per-file limit.
	BODY_SIZE_LIMIT: process.env.BODY_SIZE_LIMIT ?? '256M'
};
Object.assign(process.env, env);

const { sequelize, closeDatabase } = await import('../src/lib/server/db/index');
const { migrate } = await import('../src/lib/server/db/migrate');
await migrate(sequelize(), { quiet: true });
console.log('[start] migrations applied');
if (demo) {
	const { seedDemo } = await import('../src/lib/server/demo/seed');
	await seedDemo();
}
await closeDatabase();

if (process.env.LOTGATE_SKIP_BUILD !== '1') {
	console.log('[start] building the app…');
	const build = spawnSync('npx', ['vite', 'build', '--logLevel', 'warn'], { cwd: projectRoot, stdio: 'inherit', env });
	if (build.status !== 0) process.exit(build.status ?? 1);
}

const services = await import('./lib/services');
const smtp = demo ? await services.startMailFake(env) : null;

const app = spawn(process.execPath, [resolve(projectRoot, 'build/index.js')], { cwd: projectRoot, stdio: 'inherit', env });
writeFileSync(resolve(dataRoot, 'app.pid'), String(process.pid));

app.on('spawn', () => {
	console.log(`\nLotgate is running on http://127.0.0.1:${port} (ready in ${((Date.now() - started) / 1000).toFixed(1)} s)`);
	console.log(`Database: ${embedded ? `embedded PostgreSQL, ${url}` : 'external (DATABASE_URL)'}`);
	if (demo) {
		const password = process.env.LOTGATE_DEMO_PASSWORD || 'demo-lotgate';
		console.log(`Demo accounts (password "${password}"):`);
		for (const email of ['technician@demo.test', 'chemist@demo.test', 'qa@demo.test', 'qa2@demo.test', 'buyer@demo.test', 'admin@demo.test']) console.log(`  ${email}`);
	}
	console.log('Stop with Ctrl-C or `npm run stop`.\n');
});

let stopping = false;
async function shutdown(code = 0) {
	if (stopping) return;
	stopping = true;
	console.log('\n[start] shutting down…');
	app.kill('SIGTERM');
	await smtp?.close();
	if (embedded) stopCluster();
	process.exit(code);
}
process.on('SIGINT', () => void shutdown());
process.on('SIGTERM', () => void shutdown());
app.on('exit', (code) => void shutdown(code ?? 0));
