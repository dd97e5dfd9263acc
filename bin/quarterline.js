#!/usr/bin/env node
// The quarterline command. Runs the TypeScript sources directly through tsx's
// in-process loader, so a checkout works right after `npm install`.
import { register } from 'tsx/esm/api';

register();
const { main } = await import('../src/cli.ts');
process.exitCode = await main(process.argv.slice(2));
