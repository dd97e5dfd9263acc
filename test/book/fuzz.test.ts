/**
 * Property-based fuzzing of the loader and the computation behind it:
 * thousands of random corruptions of a valid book never crash the run,
 * and every error names its file and line.
 */
import { mkdtempSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { BookError, type Diagnostic } from '../../src/errors.ts';
import { computeRun } from '../../src/run/build.ts';

const FIXTURE = 'test/fixtures/books/minimal';
const FILES = readdirSync(FIXTURE).filter((name) => /\.(csv|yaml)$/.test(name)).sort();
const ORIGINAL = new Map(FILES.map((name) => [name, readFileSync(path.join(FIXTURE, name), 'utf8')]));
const PERIOD = '2026-Q3';

/** Pieces that break CSV, YAML, numbers and dates in interesting ways. */
const NASTY = [',', '"', '\n', '\r\n', '-', '-1', '0', '1e309', 'NaN', ' ', '', '\u00A0', '\uFEFF', ':', '  - ', '{', '[', '#', '2026-02-30', '9999-99-99', '<script>', '\u202E', 'null', '~', '\t', "'"];

/** One corruption: at a position in one file, delete, insert or replace a span. */
const corruption = fc.record({
  file: fc.constantFrom(...FILES),
  kind: fc.constantFrom('insert', 'delete', 'replace', 'duplicate-line', 'drop-line', 'swap-lines', 'truncate'),
  at: fc.double({ min: 0, max: 1, noNaN: true }),
  length: fc.integer({ min: 1, max: 12 }),
  text: fc.oneof(fc.constantFrom(...NASTY), fc.string({ maxLength: 6 }), fc.integer({ min: -1000, max: 1e9 }).map(String)),
});

type Corruption = typeof corruption extends fc.Arbitrary<infer T> ? T : never;

function corrupt(content: string, change: Corruption): string {
  const position = Math.floor(change.at * content.length);
  const lines = content.split('\n');
  const lineIndex = Math.min(lines.length - 1, Math.floor(change.at * lines.length));
  switch (change.kind) {
    case 'insert': return content.slice(0, position) + change.text + content.slice(position);
    case 'delete': return content.slice(0, position) + content.slice(position + change.length);
    case 'replace': return content.slice(0, position) + change.text + content.slice(position + change.length);
    case 'duplicate-line': lines.splice(lineIndex, 0, lines[lineIndex]!); return lines.join('\n');
    case 'drop-line': lines.splice(lineIndex, 1); return lines.join('\n');
    case 'swap-lines': {
      const other = Math.min(lines.length - 1, lineIndex + change.length);
      [lines[lineIndex], lines[other]] = [lines[other]!, lines[lineIndex]!];
      return lines.join('\n');
    }
    case 'truncate': return content.slice(0, position);
  }
}

function expectLocated(diagnostic: Diagnostic, files: Map<string, string>): void {
  const where = `${diagnostic.file}:${diagnostic.line}: ${diagnostic.message}`;
  expect(FILES, where).toContain(diagnostic.file);
  expect(diagnostic.message.length, where).toBeGreaterThan(10);
  if (diagnostic.line === null) {
    // Only a problem with the file as a whole may lack a line: an empty file.
    expect(files.get(diagnostic.file)!.replace(/^\uFEFF/, '').trim(), where).toBe('');
  } else {
    expect(Number.isInteger(diagnostic.line) && diagnostic.line >= 1, where).toBe(true);
  }
}

describe('fuzzing the book', () => {
  it('never crashes and locates every error (seeded, 1,500 corrupted books)', async () => {
    const dir = mkdtempSync(path.join(tmpdir(), 'quarterline-fuzz-'));
    let bookErrors = 0;
    let accountFailures = 0;
    await fc.assert(
      fc.asyncProperty(fc.array(corruption, { minLength: 1, maxLength: 3 }), async (changes) => {
        const files = new Map(ORIGINAL);
        for (const change of changes) files.set(change.file, corrupt(files.get(change.file)!, change));
        for (const [name, content] of files) writeFileSync(path.join(dir, name), content);
        try {
          const result = await computeRun({ bookDir: dir, period: PERIOD, accounts: null });
          for (const diagnostic of result.book.diagnostics) expectLocated(diagnostic, files);
          for (const outcome of result.outcomes) {
            for (const error of outcome.errors) {
              expect(error.message, `${outcome.account}: ${error.message}`).not.toMatch(/Internal error/);
              expect(FILES).toContain(error.file);
            }
            if (outcome.status === 'failed') accountFailures++;
          }
        } catch (error) {
          if (!(error instanceof BookError)) throw error;
          bookErrors++;
          expect(error.diagnostics.length).toBeGreaterThan(0);
          for (const diagnostic of error.diagnostics) expectLocated(diagnostic, files);
        }
      }),
      { numRuns: 1500, seed: 20261201 },
    );
    // The corruptions must actually exercise both kinds of failure.
    expect(bookErrors).toBeGreaterThan(30);
    expect(accountFailures).toBeGreaterThan(30);
  }, 240_000);
});
