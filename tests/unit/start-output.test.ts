// `npm start` output (issue 17, item 20): our own Svelte components compile without a single compiler warning (the
// build printed state_referenced_locally and a11y warnings for them), and the filter that hides third-party bundler
// noise drops exactly the package warnings while keeping anything about our sources and every error. The noise lines
// below are copied verbatim from a `vite build` of this project (rollup inside adapter-node, vite's resolver).
import { execFileSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { compile } from 'svelte/compiler';
import { describe, expect, it } from 'vitest';
import { isThirdPartyNoise, noiseFilter } from '../../scripts/lib/build-noise.mjs';
import { startBanner } from '../../scripts/lib/start-banner';

describe('our Svelte components', () => {
	it('compile without compiler warnings', () => {
		const files = execFileSync('git', ['ls-files', '--cached', '--others', '--exclude-standard', 'src'], { encoding: 'utf8' })
			.split('\n')
			.filter((f) => f.endsWith('.svelte'));
		expect(files.length).toBeGreaterThan(40);
		const warnings = files.flatMap((filename) =>
			compile(readFileSync(filename, 'utf8'), { filename, generate: 'client' }).warnings.map((w) => `${filename}:${w.start?.line ?? '?'} ${w.code}`)
		);
		expect(warnings).toEqual([]);
	}, 120_000);

	it('the check catches the warning the login page had (superForm(data.form) read outside a closure)', () => {
		const source = `<script lang="ts">\n\timport { superForm } from 'sveltekit-superforms';\n\tlet { data } = $props();\n\tconst { form } = superForm(data.form);\n</script>\n{$form}\n`;
		expect(compile(source, { filename: 'x.svelte', generate: 'client' }).warnings.map((w) => w.code)).toEqual(['state_referenced_locally']);
	});
});

describe('the start output filter', () => {
	const noise = [
		"node_modules/@auth/core/lib/utils/cookie.js (1:30): The 'this' keyword is equivalent to 'undefined' at the top level of an ES module, and has been rewritten",
		"node_modules/@arktype/schema/out/scope.js (8:28): The 'this' keyword is equivalent to 'undefined' at the top level of an ES module, and has been rewritten",
		'Circular dependency: node_modules/zod-to-json-schema/dist/esm/parseDef.js -> node_modules/zod-to-json-schema/dist/esm/selectParser.js -> node_modules/zod-to-json-schema/dist/esm/parsers/array.js -> node_modules/zod-to-json-schema/dist/esm/parseDef.js',
		'[plugin rolldown:vite-resolve] Module "node:dns/promises" has been externalized for browser compatibility, imported by "/work/x/node_modules/@vinejs/vine/build/chunk-TVEIURSI.js". See https://vite.dev/guide/troubleshooting.html#module-externalized-for-browser-compatibility for more details.',
		'Generated an empty chunk: "chunks/env.js".',
		'Run npm run preview to preview your production build locally.'
	];
	it.each(noise)('hides %s', (line) => expect(isThirdPartyNoise(line)).toBe(true));

	const kept = [
		'3:28:23 PM [vite-plugin-svelte] src/routes/login/+page.svelte:5:66 This reference only captures the initial value of `data`. Did you mean to reference it inside a closure instead?',
		'Circular dependency: src/lib/server/services/lots.ts -> src/lib/server/services/scans.ts -> src/lib/server/services/lots.ts',
		'Circular dependency: src/lib/a.ts -> node_modules/pkg/index.js -> src/lib/a.ts',
		'[plugin rolldown:vite-resolve] Module "node:fs" has been externalized for browser compatibility, imported by "/work/x/src/lib/csv.ts".',
		'error during build: [vite]: Rollup failed to resolve import "x" from "node_modules/y/index.js"',
		'[build] dist/lotgate.js from src/lib/cli/main.ts (40 source files)',
		''
	];
	it.each(kept)('keeps %s', (line) => expect(isThirdPartyNoise(line)).toBe(false));

	it('hides rolldown\'s plugin-timing report as one block, and nothing after it', () => {
		const run = [
			'  ✔ done',
			'\x1b[33m[PLUGIN_TIMINGS] \x1b[0mJavaScript callbacks ran for 301.2s. The build took 157.0s.',
			'The slowest callbacks, timed inside each callback (the wait before a callback starts is excluded, the time it awaits is included):',
			'  - plugin vite-plugin-sveltekit-compile closeBundle (93%, 146.3s, 1 call)',
			'See https://rolldown.rs/reference/InputOptions.checks#bundlertimings for more details.',
			'',
			'[build] dist/lotgate.js from src/lib/cli/main.ts (41 source files)'
		];
		const isNoise = noiseFilter();
		expect(run.filter((line) => !isNoise(line))).toEqual(['  ✔ done', '', '[build] dist/lotgate.js from src/lib/cli/main.ts (41 source files)']);
	});
});

describe('the closing lines of npm start', () => {
	it('end with the demo accounts and then the URL', () => {
		const lines = startBanner({
			url: 'http://127.0.0.1:3000',
			seconds: 44.96,
			database: 'embedded PostgreSQL',
			accounts: [
				{ email: 'technician@demo.test', roles: ['technician'] },
				{ email: 'qa@demo.test', roles: ['qa'] }
			],
			password: 'demo-lotgate'
		});
		expect(lines.slice(-4)).toEqual([
			'Demo accounts (password "demo-lotgate"):',
			'  technician@demo.test  technician',
			'  qa@demo.test          qa',
			'Lotgate is serving on http://127.0.0.1:3000 (ready in 45.0 s)'
		]);
	});
	it('without demo accounts the URL is still the last line', () => {
		const lines = startBanner({ url: 'http://127.0.0.1:8080', seconds: 3, database: 'external (DATABASE_URL)', accounts: null, password: 'x' });
		expect(lines.at(-1)).toBe('Lotgate is serving on http://127.0.0.1:8080 (ready in 3.0 s)');
		expect(lines.join('\n')).not.toContain('Demo accounts');
	});
	it('says where the start time went when the phases are given', () => {
		const lines = startBanner({ url: 'http://127.0.0.1:8080', seconds: 7.04, phases: { launcher: 0.41, checks: 1.26, app: 5.37 }, database: 'external (DATABASE_URL)', accounts: null, password: 'x' });
		expect(lines.at(-1)).toBe('Lotgate is serving on http://127.0.0.1:8080 (ready in 7.0 s; launcher loaded in 0.4 s, checks 1.3 s, app boot 5.4 s)');
	});
});

describe('the compiled launcher (dist/start/)', () => {
	it('loads neither Sequelize, the migrations, the demo seed nor the mail recorder before the app is spawned', async () => {
		const { build } = await import('esbuild');
		const { mkdtempSync, rmSync } = await import('node:fs');
		const { tmpdir } = await import('node:os');
		const { join, resolve } = await import('node:path');
		const { startBundleOptions } = await import('../../scripts/lib/start-bundle.mjs');
		const root = resolve(import.meta.dirname, '../..');
		const out = mkdtempSync(join(tmpdir(), 'lotgate-start-'));
		try {
			const { metafile } = await build({ ...startBundleOptions(root, out), write: false, logLevel: 'silent' });
			const outputs = metafile!.outputs;
			const entry = Object.keys(outputs).find((f) => outputs[f].entryPoint?.endsWith('scripts/start.ts'))!;
			// everything the first file loads at once: its static imports, followed through the shared chunks
			const eager = new Set<string>();
			const walk = (file: string) => {
				for (const i of outputs[file]?.imports ?? []) {
					if (i.kind !== 'import-statement' || eager.has(i.path)) continue;
					eager.add(i.path);
					walk(i.path);
				}
			};
			walk(entry);
			const eagerSources = [entry, ...eager].flatMap((f) => Object.keys(outputs[f]?.inputs ?? {}));
			expect(eagerSources).toContain('scripts/start.ts');
			expect(eagerSources).toContain('src/lib/server/demo/accounts.ts');
			for (const late of ['src/lib/server/demo/seed.ts', 'src/lib/server/db/migrate.ts', 'src/lib/server/db/index.ts', 'src/lib/server/mail-fake.ts']) expect(eagerSources).not.toContain(late);
			expect([...eager].filter((p) => !p.includes('/'))).not.toContain('sequelize');
			// and they are still there, for a start that migrates or seeds
			const all = Object.values(outputs).flatMap((o) => Object.keys(o.inputs));
			expect(all).toContain('src/lib/server/demo/seed.ts');
		} finally {
			rmSync(out, { recursive: true, force: true });
		}
	});
});
