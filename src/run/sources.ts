/**
 * Content hashes that decide whether a statement must be rendered or
 * printed again: a statement's source hash covers its figures, the firm's
 * settings shown on it, and the code and templates that make it. A rerun
 * with nothing changed skips every statement whose HTML and PDF were made
 * from the same source hash; a run killed half-way redoes only what it had
 * not finished.
 */
import { createHash } from 'node:crypto';
import { readFile, readdir } from 'node:fs/promises';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Settings } from '../book/types.ts';
import { writeFileAtomic } from './files.ts';

/** The sidecar beside a statement recording what its HTML and PDF were made from. */
export const SOURCES_FILE = '.sources.json';

export interface StatementSources {
  /** Source hash of the index.html in the folder, when it is current. */
  readonly html?: string;
  /** Source hash of the statement.pdf in the folder, when it is current. */
  readonly pdf?: string;
}

const PROJECT_ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');

/** Files whose content shapes a statement: sources, templates, the lock file of the libraries. */
async function codeFiles(): Promise<string[]> {
  const files: string[] = [path.join(PROJECT_ROOT, 'package-lock.json'), path.join(PROJECT_ROOT, '.eleventy.js')];
  for (const folder of ['src', 'templates']) {
    for (const entry of await readdir(path.join(PROJECT_ROOT, folder), { recursive: true, withFileTypes: true })) {
      if (entry.isFile()) files.push(path.join(entry.parentPath, entry.name));
    }
  }
  return files.sort();
}

/** SHA-256 over the code and templates that make statements (computed once per run). */
export async function codeVersion(): Promise<string> {
  const hash = createHash('sha256');
  for (const file of await codeFiles()) {
    hash.update(path.relative(PROJECT_ROOT, file)).update('\0').update(await readFile(file)).update('\0');
  }
  return hash.digest('hex');
}

/** The source hash of one statement. */
export function statementSource(code: string, figuresJson: string, settings: Pick<Settings, 'firm' | 'cautions' | 'locale'>): string {
  return createHash('sha256')
    .update(code).update('\0')
    .update(JSON.stringify([settings.firm, settings.cautions, settings.locale])).update('\0')
    .update(figuresJson)
    .digest('hex');
}

/** Reads a statement folder's sidecar; empty when absent or unreadable. */
export async function readSources(accountDir: string): Promise<StatementSources> {
  try {
    const parsed = JSON.parse(await readFile(path.join(accountDir, SOURCES_FILE), 'utf8')) as StatementSources;
    return { ...(typeof parsed.html === 'string' ? { html: parsed.html } : {}), ...(typeof parsed.pdf === 'string' ? { pdf: parsed.pdf } : {}) };
  } catch {
    return {};
  }
}

export async function writeSources(accountDir: string, sources: StatementSources): Promise<void> {
  await writeFileAtomic(path.join(accountDir, SOURCES_FILE), `${JSON.stringify(sources)}\n`);
}
