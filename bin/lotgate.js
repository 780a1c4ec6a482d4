#!/usr/bin/env node
// The command line. Runs the compiled JavaScript (dist/lotgate.js, made by `npm run build`) when it is at least as new
// as every source it was built from; otherwise, in a development checkout, the TypeScript sources through tsx.
// A production install (`npm ci --omit=dev`) has no tsx and runs the compiled file.
import { existsSync, readFileSync, statSync } from 'node:fs';

const root = new URL('../', import.meta.url);
const compiled = new URL('dist/lotgate.js', root);

function compiledIsCurrent() {
	if (!existsSync(compiled)) return false;
	try {
		const builtAt = statSync(compiled).mtimeMs;
		const inputs = JSON.parse(readFileSync(new URL('dist/lotgate.inputs.json', root), 'utf8'));
		return inputs.every((file) => !existsSync(new URL(file, root)) || statSync(new URL(file, root)).mtimeMs <= builtAt);
	} catch {
		return false;
	}
}

async function loadMain() {
	if (compiledIsCurrent()) return null;
	try {
		const { register } = await import('tsx/esm/api');
		register();
	} catch {
		if (existsSync(compiled)) return null; // no tsx (production install): the compiled file it is
		throw new Error('lotgate: dist/lotgate.js is missing; run `npm run build` (or install the development dependencies)');
	}
	return (await import('../src/lib/cli/main.ts')).main;
}

const main = await loadMain();
if (main) process.exitCode = await main(process.argv.slice(2));
else await import(compiled.href);
