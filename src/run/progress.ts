/**
 * Progress of a run by stage (load, compute, render, print): a live bar per
 * stage with counts and time left on a terminal (cli-progress), plain
 * periodic lines otherwise (logs, CI, pipes).
 */
import cliProgress from 'cli-progress';

export type Stage = 'load' | 'compute' | 'render' | 'print';

export interface Progress {
  /** Starts a stage of `total` items (0 for a stage without a count). */
  start(stage: Stage, total: number): void;
  /** `done` items of the current stage are finished. */
  update(done: number): void;
  /** The current stage is finished. */
  finish(): void;
}

export const silentProgress: Progress = { start() {}, update() {}, finish() {} };

const LABELS: Record<Stage, string> = { load: 'Loading book', compute: 'Computing figures', render: 'Writing statements', print: 'Printing PDFs' };

/** A live bar on a terminal. */
export function terminalProgress(stream: NodeJS.WriteStream): Progress {
  let bar: cliProgress.SingleBar | null = null;
  return {
    start(stage, total) {
      bar = new cliProgress.SingleBar({
        stream,
        format: `${LABELS[stage].padEnd(20)} {bar} {value}/{total} | {percentage}% | elapsed {duration_formatted} | left {eta_formatted}`,
        hideCursor: true,
        clearOnComplete: false,
        etaBuffer: 50,
      }, cliProgress.Presets.shades_classic);
      bar.start(Math.max(total, 1), 0);
    },
    update(done) {
      bar?.update(done);
    },
    finish() {
      if (bar) {
        bar.update(bar.getTotal());
        bar.stop();
      }
      bar = null;
    },
  };
}

/** Plain lines: one at the start and end of each stage, and one every `everySeconds` in between. */
export function lineProgress(write: (text: string) => void, everySeconds = 10, now: () => number = () => performance.now()): Progress {
  let stage: Stage | null = null;
  let total = 0;
  let started = 0;
  let lastLine = 0;
  let done = 0;
  const line = (): string => {
    const elapsed = (now() - started) / 1000;
    const left = done > 0 && total > done ? ` (about ${Math.ceil((elapsed / done) * (total - done))} s left)` : '';
    return `${LABELS[stage!]}: ${done}/${total}, ${elapsed.toFixed(1)} s${left}\n`;
  };
  return {
    start(next, count) {
      stage = next;
      total = count;
      done = 0;
      started = lastLine = now();
      write(`${LABELS[next]}: started${count > 0 ? `, ${count} to do` : ''}\n`);
    },
    update(count) {
      done = count;
      if (stage && now() - lastLine >= everySeconds * 1000) {
        lastLine = now();
        write(line());
      }
    },
    finish() {
      if (!stage) return;
      done = total;
      write(`${LABELS[stage]}: done in ${((now() - started) / 1000).toFixed(1)} s\n`);
      stage = null;
    },
  };
}
