/**
 * Sharded runs merged equal a single run: the same accounts, the same
 * figures byte for byte, the same run record (but for times) and overview.
 */
import { mkdtemp, readFile, readdir } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { main } from '../../src/cli.ts';
import { shardOf } from '../../src/run/build.ts';
import { silentProgress } from '../../src/run/progress.ts';

const io = { out: () => {}, err: () => {}, progress: () => silentProgress };

async function filesUnder(root: string): Promise<Map<string, string>> {
  const files = new Map<string, string>();
  for (const entry of await readdir(root, { recursive: true, withFileTypes: true })) {
    if (entry.isFile()) {
      const full = path.join(entry.parentPath, entry.name);
      files.set(path.relative(root, full), await readFile(full, 'utf8'));
    }
  }
  return files;
}

/** The run record without what legitimately differs between runs (times and the shard count). */
function comparableRecord(text: string): unknown {
  const { started: _started, seconds: _seconds, timings: _timings, shards: _shards, ...rest } = JSON.parse(text);
  return rest;
}

describe('sharded runs', () => {
  it('assigns each account to one shard by its id alone', () => {
    expect(shardOf('TF-1001', 4)).toBe(shardOf('TF-1001', 4));
    const counts = [0, 0, 0, 0];
    for (let i = 0; i < 4000; i++) counts[shardOf(`ACC-${i}`, 4) - 1]!++;
    for (const count of counts) expect(count).toBeGreaterThan(850); // roughly even
  });

  it('merged, equal a single run', async () => {
    const single = await mkdtemp(path.join(tmpdir(), 'quarterline-single-'));
    const sharded = await mkdtemp(path.join(tmpdir(), 'quarterline-sharded-'));
    expect(await main(['build', 'data/demo', '--period', '2026-Q3', '--out', single, '--no-pdf'], io)).toBe(0);
    for (const k of [1, 2, 3]) {
      expect(await main(['build', 'data/demo', '--period', '2026-Q3', '--out', sharded, '--no-pdf', '--shard', `${k}/3`], io)).toBe(0);
    }
    // Merging before every shard has run is refused; here all have.
    expect(await main(['merge', path.join(sharded, '2026-Q3')], io)).toBe(0);

    const a = await filesUnder(path.join(single, '2026-Q3'));
    const b = await filesUnder(path.join(sharded, '2026-Q3'));
    const accountFiles = (files: Map<string, string>) => [...files.keys()].filter((name) => name.startsWith('accounts')).sort();
    expect(accountFiles(b)).toEqual(accountFiles(a));
    expect(accountFiles(a).length).toBeGreaterThanOrEqual(12);
    for (const name of accountFiles(a)) expect(b.get(name), name).toBe(a.get(name));
    expect(comparableRecord(b.get('run.json')!)).toEqual(comparableRecord(a.get('run.json')!));
    // Stage timings differ between runs; everything else on the overview must not.
    const withoutTimings = (html: string) => html.replace(/<section aria-labelledby="h-timings">[\s\S]*?<\/section>/, '');
    expect(withoutTimings(a.get('index.html')!)).not.toBe(a.get('index.html'));
    expect(withoutTimings(b.get('index.html')!)).toBe(withoutTimings(a.get('index.html')!));
  });

  it('refuses to merge while a shard is missing', async () => {
    const out = await mkdtemp(path.join(tmpdir(), 'quarterline-partial-'));
    await main(['build', 'data/demo', '--period', '2026-Q3', '--out', out, '--no-pdf', '--shard', '1/2'], io);
    let err = '';
    const code = await main(['merge', path.join(out, '2026-Q3')], { ...io, err: (text: string) => { err += text; } });
    expect(code).toBe(2);
    expect(err).toContain('shards 2/2 have not finished');
  });
});
