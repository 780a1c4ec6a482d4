// How `npm run build` compiles the `npm start` launcher (scripts/start.ts) to dist/start/: our own sources bundled,
// every package left as an import (`npm start` needs the development install anyway: it may run vite), and split, so
// that what a start with nothing to do never needs (the migrations, the demo seed and Sequelize with them, the mail
// recorder) stays in chunks that are loaded only when used. The unit test tests/unit/start-output.test.ts checks that.
import { resolve } from 'node:path';

/** esbuild options. @param {string} root @param {string} outdir */
export function startBundleOptions(root, outdir) {
	return {
		entryPoints: { start: resolve(root, 'scripts/start.ts') },
		bundle: true,
		splitting: true,
		platform: /** @type {const} */ ('node'),
		format: /** @type {const} */ ('esm'),
		target: 'node20',
		outdir,
		packages: /** @type {const} */ ('external'),
		metafile: true,
		logLevel: /** @type {const} */ ('warning'),
		banner: { js: `import { createRequire as __lotgateRequire } from 'node:module'; const require = __lotgateRequire(import.meta.url);` },
		alias: { $lib: resolve(root, 'src/lib') }
	};
}
