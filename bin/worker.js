#!/usr/bin/env node
// `npm run worker`: the job worker process. Runs the compiled dist/worker.js (made by `npm run build`) when it is at
// least as new as every source it was built from; otherwise, in a development checkout, the sources through tsx.
import { existsSync, readFileSync, statSync } from 'node:fs';

const root = new URL('../', import.meta.url);
const compiled = new URL('dist/worker.js', root);

function compiledIsCurrent() {
	if (!existsSync(compiled)) return false;
	try {
		const builtAt = statSync(compiled).mtimeMs;
		const inputs = JSON.parse(readFileSync(new URL('dist/worker.inputs.json', root), 'utf8'));
		return inputs.every((file) => !existsSync(new URL(file, root)) || statSync(new URL(file, root)).mtimeMs <= builtAt);
	} catch {
		return false;
	}
}

if (!compiledIsCurrent()) {
	let register = null;
	try {
		({ register } = await import('tsx/esm/api'));
	} catch {
		if (!existsSync(compiled)) throw new Error('worker: dist/worker.js is missing; run `npm run build` (or install the development dependencies)');
	}
	if (register) {
		register();
		await import('../scripts/worker.ts');
	} else await import(compiled.href);
} else await import(compiled.href);
