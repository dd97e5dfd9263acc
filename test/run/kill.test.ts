/**
 * A build killed at any moment (kill -9 of quarterline and its Chromium)
 * and then run again finishes with a complete output folder identical to an
 * uninterrupted run's, and no temporary file is left behind.
 */
import { spawn } from 'node:child_process';
import { existsSync, readFileSync, readdirSync } from 'node:fs';
import { mkdtemp, readFile, readdir } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { TEMPORARY_MARKER } from '../../src/run/files.ts';

const BUILD = (out: string): string[] => ['bin/quarterline.js', 'build', 'data/demo', '--period', '2026-Q3', '--out', out, '--jobs', '2'];

/** The pids of a process and all its descendants, from /proc. */
function descendants(root: number): number[] {
  const children = new Map<number, number[]>();
  for (const entry of readdirSync('/proc')) {
    if (!/^\d+$/.test(entry)) continue;
    try {
      const parent = Number(/PPid:\s+(\d+)/.exec(readFileSync(`/proc/${entry}/status`, 'utf8'))?.[1]);
      children.set(parent, [...(children.get(parent) ?? []), Number(entry)]);
    } catch {
      // gone already
    }
  }
  const all: number[] = [];
  const stack = [root];
  while (stack.length > 0) {
    const pid = stack.pop()!;
    all.push(pid);
    stack.push(...(children.get(pid) ?? []));
  }
  return all;
}

function run(args: string[]): Promise<number> {
  return new Promise((resolve, reject) => {
    const child = spawn('node', args, { stdio: 'ignore' });
    child.on('error', reject);
    child.on('exit', (code) => resolve(code ?? -1));
  });
}

/** Starts a build and kills it and every process under it with SIGKILL once `ready` says so. */
function runAndKill(args: string[], ready: () => boolean): Promise<'killed' | 'finished'> {
  return new Promise((resolve, reject) => {
    const child = spawn('node', args, { stdio: 'ignore' });
    child.on('error', reject);
    let killed = false;
    const poll = setInterval(() => {
      if (!ready()) return;
      clearInterval(poll);
      killed = true;
      for (const pid of descendants(child.pid!).reverse()) {
        try { process.kill(pid, 'SIGKILL'); } catch { /* already gone */ }
      }
    }, 20);
    child.on('exit', () => {
      clearInterval(poll);
      resolve(killed ? 'killed' : 'finished');
    });
  });
}

async function files(root: string): Promise<Map<string, Buffer>> {
  const found = new Map<string, Buffer>();
  for (const entry of await readdir(root, { recursive: true, withFileTypes: true })) {
    if (entry.isFile()) found.set(path.relative(root, path.join(entry.parentPath, entry.name)), await readFile(path.join(entry.parentPath, entry.name)));
  }
  return found;
}

function pdfCount(runDir: string): number {
  const accounts = path.join(runDir, 'accounts');
  if (!existsSync(accounts)) return 0;
  return readdirSync(accounts).filter((id) => existsSync(path.join(accounts, id, 'statement.pdf'))).length;
}

/** Without what legitimately differs between two runs: times in run.json and on the overview. */
function comparable(name: string, content: Buffer): string | Buffer {
  if (name === 'run.json') {
    const { started: _s, seconds: _d, timings: _t, ...rest } = JSON.parse(content.toString('utf8'));
    return JSON.stringify(rest);
  }
  if (name === 'index.html') return content.toString('utf8').replace(/<section aria-labelledby="h-timings">[\s\S]*?<\/section>/, '');
  return content;
}

describe('a build killed mid-run', () => {
  it('is completed by the next run, identical to an uninterrupted run', async () => {
    const reference = await mkdtemp(path.join(tmpdir(), 'quarterline-whole-'));
    expect(await run(BUILD(reference))).toBe(0);
    const referenceFiles = await files(path.join(reference, '2026-Q3'));

    const interrupted = await mkdtemp(path.join(tmpdir(), 'quarterline-killed-'));
    const runDir = path.join(interrupted, '2026-Q3');
    // First killed while computing or rendering, then again while printing.
    expect(await runAndKill(BUILD(interrupted), () => existsSync(path.join(runDir, 'accounts')))).toBe('killed');
    expect(await runAndKill(BUILD(interrupted), () => pdfCount(runDir) >= 4)).toBe('killed');
    expect(pdfCount(runDir)).toBeLessThan(12);
    expect(await run(BUILD(interrupted))).toBe(0);

    const rerunFiles = await files(runDir);
    expect([...rerunFiles.keys()].filter((name) => name.includes(TEMPORARY_MARKER))).toEqual([]);
    expect([...rerunFiles.keys()].sort()).toEqual([...referenceFiles.keys()].sort());
    for (const [name, content] of referenceFiles) {
      expect(comparable(name, rerunFiles.get(name)!), name).toEqual(comparable(name, content));
    }
  }, 240_000);
});
