#!/usr/bin/env node
// Runs the TypeScript command line directly through tsx: no build step, no server.
import { register } from 'tsx/esm/api';

register();
const { main } = await import('../src/lib/cli/main.ts');
process.exitCode = await main(process.argv.slice(2));
