/**
 * Regenerates the demo book in data/demo from its seeded generator.
 * Run from the repository root: node bin/run-ts.js scripts/generate-demo.ts
 */
import { writeDemoBook } from '../src/synth/demo.ts';

const target = 'data/demo';
await writeDemoBook(target);
process.stdout.write(`demo book written to ${target}\n`);
