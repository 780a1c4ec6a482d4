// `npm run build`: the web app (vite build → build/, adapter-node) and the command line and production maintenance
// scripts compiled to plain JavaScript in dist/, so they run with `node` on a production install (`npm ci --omit=dev`:
// no tsx, no TypeScript). Records the source hash (scripts/lib/build-stamp.mjs) so `npm start` can skip a rebuild.
// In dist/, runtime packages (package.json "dependencies") stay external imports; anything else is bundled in, and an
// import of a development-only package fails the build here rather than on the production machine.
// Extra arguments go to vite (e.g. --logLevel warn).
import { spawnSync } from 'node:child_process';
import { build } from 'esbuild';
import { readFileSync, rmSync, writeFileSync } from 'node:fs';
import { builtinModules } from 'node:module';
import { relative, resolve } from 'node:path';
import { projectRoot as root, recordBuild, sourceHash } from './lib/build-stamp.mjs';
import { startBundleOptions } from './lib/start-bundle.mjs';

// `--dist-only` compiles dist/ alone (quick, for the command line); the stamp is then left as it was.
const distOnly = process.argv.includes('--dist-only');
const hash = sourceHash();
if (!distOnly) {
	const vite = spawnSync(process.execPath, [resolve(root, 'node_modules/vite/bin/vite.js'), 'build', ...process.argv.slice(2)], { cwd: root, stdio: 'inherit' });
	if (vite.status !== 0) process.exit(vite.status ?? 1);
}

const pkg = JSON.parse(readFileSync(resolve(root, 'package.json'), 'utf8'));
const runtime = Object.keys(pkg.dependencies ?? {});
const out = resolve(root, 'dist');

/** entry name → [source, what the compiled file runs] */
const ENTRIES = {
	lotgate: ['src/lib/cli/main.ts', `import { main } from './src/lib/cli/main.ts';\nprocess.exitCode = await main(process.argv.slice(2));\n`],
	migrate: ['scripts/migrate.ts', `import './scripts/migrate.ts';\n`],
	'audit-verify': ['scripts/audit-verify.ts', `import './scripts/audit-verify.ts';\n`],
	'audit-checkpoint': ['scripts/audit-checkpoint.ts', `import './scripts/audit-checkpoint.ts';\n`],
	worker: ['scripts/worker.ts', `import './scripts/worker.ts';\n`]
};

const isBuiltin = (id) => id.startsWith('node:') || builtinModules.includes(id.split('/')[0]);
const packageOf = (id) => (id.startsWith('@') ? id.split('/').slice(0, 2).join('/') : id.split('/')[0]);

rmSync(out, { recursive: true, force: true });
for (const [name, [source, contents]] of Object.entries(ENTRIES)) {
	const result = await build({
		stdin: { contents, resolveDir: root, sourcefile: `${name}.entry.ts`, loader: 'ts' },
		bundle: true,
		platform: 'node',
		format: 'esm',
		target: 'node20',
		outfile: resolve(out, `${name}.js`),
		external: runtime.flatMap((p) => [p, `${p}/*`]),
		metafile: true,
		logLevel: 'warning',
		// Bundled CommonJS code may call require(); give ESM output one.
		banner: { js: `import { createRequire as __lotgateRequire } from 'node:module'; const require = __lotgateRequire(import.meta.url);` },
		alias: { $lib: resolve(root, 'src/lib') }
	});
	const outputs = Object.values(result.metafile.outputs);
	const imports = outputs.flatMap((o) => o.imports.filter((i) => i.external).map((i) => i.path));
	const stray = [...new Set(imports.filter((i) => !isBuiltin(i) && !runtime.includes(packageOf(i))))];
	if (stray.length) throw new Error(`dist/${name}.js imports packages that are not runtime dependencies: ${stray.join(', ')}`);
	// The sources it was built from: bin/lotgate.js falls back to them (through tsx) when any is newer.
	const inputs = Object.keys(result.metafile.inputs).filter((f) => !f.includes('node_modules') && !f.endsWith('.entry.ts'));
	writeFileSync(resolve(out, `${name}.inputs.json`), JSON.stringify(inputs.map((f) => relative(root, resolve(root, f)))));
	console.log(`[build] dist/${name}.js from ${source} (${inputs.length} source files)`);
}

// The launcher of `npm start` (bin/start.js runs it): see scripts/lib/start-bundle.mjs.
{
	const result = await build(startBundleOptions(root, resolve(out, 'start')));
	const inputs = Object.keys(result.metafile.inputs).filter((f) => !f.includes('node_modules'));
	writeFileSync(resolve(out, 'start.inputs.json'), JSON.stringify(inputs.map((f) => relative(root, resolve(root, f)))));
	console.log(`[build] dist/start/start.js from scripts/start.ts (${inputs.length} source files, ${Object.keys(result.metafile.outputs).length} files)`);
}

if (!distOnly) recordBuild(hash);
