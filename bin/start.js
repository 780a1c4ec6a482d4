#!/usr/bin/env node
// `npm start`: runs the compiled launcher (dist/start/start.js, made by `npm run build` and by the first `npm start`)
// when it is at least as new as every source it was built from, so a second start does not pay for the TypeScript
// loader; otherwise (a fresh clone, or a changed source) scripts/start.ts through tsx.
import { existsSync, readFileSync, statSync } from 'node:fs';

const root = new URL('../', import.meta.url);
const compiled = new URL('dist/start/start.js', root);

function compiledIsCurrent() {
	if (!existsSync(compiled)) return false;
	try {
		const builtAt = statSync(compiled).mtimeMs;
		const inputs = JSON.parse(readFileSync(new URL('dist/start.inputs.json', root), 'utf8'));
		return inputs.every((file) => !existsSync(new URL(file, root)) || statSync(new URL(file, root)).mtimeMs <= builtAt);
	} catch {
		return false;
	}
}

if (compiledIsCurrent()) await import(compiled.href);
else {
	let register = null;
	try {
		({ register } = await import('tsx/esm/api'));
	} catch {
		if (!existsSync(compiled)) throw new Error('start: dist/start/start.js is missing; run `npm run build` (or install the development dependencies)');
	}
	if (register) {
		register();
		await import('../scripts/start.ts');
	} else await import(compiled.href);
}
