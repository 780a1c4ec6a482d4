// The build is keyed on a SHA-256 over the sources, the static files, the build configuration and the lockfile, kept
// in build/.source-hash. `npm start` skips the build when it matches. `npx vite build` alone (the browser tests run
// it) empties build/ and so removes the stamp: the next `npm start` builds again.
import { createHash } from 'node:crypto';
import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

/** The folder holding package.json, found upwards from this file (also from its compiled copy in dist/start/). */
function findProjectRoot(/** @type {string} */ from) {
	for (let dir = from; ; dir = dirname(dir)) {
		if (existsSync(resolve(dir, 'package.json'))) return dir;
		if (dirname(dir) === dir) return from;
	}
}
export const projectRoot = findProjectRoot(dirname(fileURLToPath(import.meta.url)));
const TREES = ['src', 'static', 'scripts/lib'];
const FILES = ['package.json', 'package-lock.json', 'svelte.config.js', 'vite.config.ts', 'tailwind.config.ts', 'tsconfig.json', 'scripts/build.mjs', 'scripts/migrate.ts', 'scripts/audit-verify.ts', 'scripts/audit-checkpoint.ts', 'scripts/worker.ts', 'scripts/start.ts'];
/** What the build produces; all must exist for the stamp to count. */
const OUTPUTS = ['build/index.js', 'dist/lotgate.js', 'dist/migrate.js', 'dist/audit-verify.js', 'dist/audit-checkpoint.js', 'dist/worker.js', 'dist/start/start.js'];
const stampFile = resolve(projectRoot, 'build', '.source-hash');

/** @param {string} dir @param {string[]} out */
function walk(dir, out) {
	if (!existsSync(dir)) return;
	for (const entry of readdirSync(dir, { withFileTypes: true })) {
		const path = join(dir, entry.name);
		if (entry.isDirectory()) walk(path, out);
		else if (entry.isFile()) out.push(path);
	}
}

/** SHA-256 over the path and content of every file the build reads, in a fixed order. */
export function sourceHash() {
	/** @type {string[]} */
	const files = [];
	for (const tree of TREES) walk(resolve(projectRoot, tree), files);
	for (const file of FILES) if (existsSync(resolve(projectRoot, file))) files.push(resolve(projectRoot, file));
	const hash = createHash('sha256');
	for (const file of files.map((f) => relative(projectRoot, f)).sort()) {
		hash.update(file).update('\0').update(readFileSync(resolve(projectRoot, file))).update('\0');
	}
	return hash.digest('hex');
}

/** True when the build on disk was made from exactly these sources. @param {string} hash */
export function buildIsCurrent(hash) {
	if (!OUTPUTS.every((f) => existsSync(resolve(projectRoot, f)))) return false;
	return existsSync(stampFile) && readFileSync(stampFile, 'utf8').trim() === hash;
}

/** @param {string} hash */
export function recordBuild(hash) {
	writeFileSync(stampFile, hash + '\n');
}
