#!/usr/bin/env node
// Runs a TypeScript entry point from a checkout without a compile step:
// tsx's loader is registered in-process, then the module is imported.
import { register } from 'tsx/esm/api';
import { pathToFileURL } from 'node:url';
import path from 'node:path';

const [entry, ...rest] = process.argv.slice(2);
if (!entry) {
  process.stderr.write('usage: node bin/run-ts.js FILE.ts [args...]\n');
  process.exit(2);
}
register();
process.argv = [process.argv[0], path.resolve(entry), ...rest];
await import(pathToFileURL(path.resolve(entry)).href);
