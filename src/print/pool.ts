/**
 * A small work pool: `jobs` workers take items in order; each item gets one
 * attempt and, when it fails (an error or a timeout), one retry; after that
 * its failure is recorded and the others go on.
 */

export interface AttemptOutcome<R> {
  readonly ok: boolean;
  readonly value?: R;
  readonly error?: string;
}

/** Error raised when an attempt outlives its time limit. */
export class TimeoutError extends Error {
  constructor(readonly milliseconds: number, what: string) {
    super(`${what} did not finish within ${milliseconds < 1000 ? `${milliseconds} ms` : `${(milliseconds / 1000).toFixed(1)} s`}`);
    this.name = 'TimeoutError';
  }
}

/** Runs `work` with a time limit; `onTimeout` is called (not awaited) when the limit passes. */
export async function withTimeout<T>(work: Promise<T>, milliseconds: number, what: string, onTimeout?: () => void): Promise<T> {
  let timer: NodeJS.Timeout | undefined;
  const limit = new Promise<never>((_resolve, reject) => {
    timer = setTimeout(() => {
      onTimeout?.();
      reject(new TimeoutError(milliseconds, what));
    }, milliseconds);
  });
  try {
    return await Promise.race([work, limit]);
  } finally {
    clearTimeout(timer);
    // A hung attempt may still settle later; its result is ignored.
    work.catch(() => undefined);
  }
}

export function describeError(error: unknown): string {
  return error instanceof Error ? error.message : String(error);
}

/**
 * Processes every item with at most `jobs` at a time. `attempt(item, worker, n)`
 * (n = 1, then 2 for the retry) resolves with the item's value or rejects.
 * Results are keyed by `keyOf(item)`; progress is reported after each item.
 */
export async function runPool<T, R>(
  items: readonly T[],
  options: {
    readonly jobs: number;
    readonly keyOf: (item: T) => string;
    readonly attempt: (item: T, worker: number, attemptNumber: 1 | 2) => Promise<R>;
    readonly onProgress?: (done: number, total: number) => void;
  },
): Promise<Map<string, AttemptOutcome<R>>> {
  if (!Number.isInteger(options.jobs) || options.jobs < 1) throw new RangeError(`runPool requires jobs ≥ 1, got ${options.jobs}`);
  const results = new Map<string, AttemptOutcome<R>>();
  let next = 0;
  let done = 0;
  const worker = async (workerIndex: number): Promise<void> => {
    while (next < items.length) {
      const item = items[next++]!;
      let outcome: AttemptOutcome<R>;
      try {
        outcome = { ok: true, value: await options.attempt(item, workerIndex, 1) };
      } catch (first) {
        try {
          outcome = { ok: true, value: await options.attempt(item, workerIndex, 2) };
        } catch (second) {
          outcome = { ok: false, error: `${describeError(first)}; the retry failed too: ${describeError(second)}` };
        }
      }
      results.set(options.keyOf(item), outcome);
      done += 1;
      options.onProgress?.(done, items.length);
    }
  };
  await Promise.all(Array.from({ length: Math.min(options.jobs, items.length) }, (_, i) => worker(i)));
  return results;
}
