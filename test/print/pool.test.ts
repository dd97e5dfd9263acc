/**
 * The print pool: at most `jobs` at a time, one retry per item, a failed
 * item recorded while the others go on, and hung attempts cut off.
 */
import { describe, expect, it } from 'vitest';
import { TimeoutError, runPool, withTimeout } from '../../src/print/pool.ts';

const sleep = (ms: number): Promise<void> => new Promise((resolve) => setTimeout(resolve, ms));

describe('runPool', () => {
  it('runs at most `jobs` attempts at once and reports progress after each item', async () => {
    let running = 0;
    let most = 0;
    const progress: number[] = [];
    const results = await runPool(['a', 'b', 'c', 'd', 'e'], {
      jobs: 2,
      keyOf: (item) => item,
      attempt: async (item) => {
        running++;
        most = Math.max(most, running);
        await sleep(5);
        running--;
        return item.toUpperCase();
      },
      onProgress: (done, total) => progress.push(done * 10 + total),
    });
    expect(most).toBe(2);
    expect([...results.values()].map((outcome) => outcome.value)).toEqual(['A', 'B', 'C', 'D', 'E']);
    expect(progress).toEqual([15, 25, 35, 45, 55]);
  });

  it('retries a failed attempt once and keeps the retry\'s result', async () => {
    const attempts: string[] = [];
    const results = await runPool(['crash-once', 'fine'], {
      jobs: 1,
      keyOf: (item) => item,
      attempt: async (item, _worker, attemptNumber) => {
        attempts.push(`${item}#${attemptNumber}`);
        if (item === 'crash-once' && attemptNumber === 1) throw new Error('Target closed');
        return 'printed';
      },
    });
    expect(attempts).toEqual(['crash-once#1', 'crash-once#2', 'fine#1']);
    expect(results.get('crash-once')).toEqual({ ok: true, value: 'printed' });
  });

  it('records an item that fails twice, with both errors, and goes on with the others', async () => {
    const results = await runPool(['bad', 'good'], {
      jobs: 2,
      keyOf: (item) => item,
      attempt: async (item, _worker, attemptNumber) => {
        if (item === 'bad') throw new Error(`crash ${attemptNumber}`);
        return 'printed';
      },
    });
    expect(results.get('bad')).toEqual({ ok: false, error: 'crash 1; the retry failed too: crash 2' });
    expect(results.get('good')).toEqual({ ok: true, value: 'printed' });
  });

  it('refuses a pool of no workers', async () => {
    await expect(runPool(['a'], { jobs: 0, keyOf: (item) => item, attempt: async () => 1 })).rejects.toThrow('runPool requires jobs ≥ 1, got 0');
  });
});

describe('withTimeout', () => {
  it('cuts off a hung attempt and says what did not finish', async () => {
    let cutOff = false;
    const hung = new Promise<never>(() => undefined);
    await expect(withTimeout(hung, 20, 'printing A-1', () => { cutOff = true; })).rejects.toThrow(new TimeoutError(20, 'printing A-1'));
    expect(cutOff).toBe(true);
    await expect(withTimeout(hung, 20, 'printing A-1')).rejects.toThrow('printing A-1 did not finish within 20 ms');
  });
  it('passes a prompt result through', async () => {
    await expect(withTimeout(Promise.resolve(7), 1000, 'x')).resolves.toBe(7);
  });
});
