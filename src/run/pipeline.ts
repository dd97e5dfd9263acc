/**
 * The whole reporting run, stage by stage: compute → figures.json →
 * statements (HTML) → PDFs → run record → overview. A statement whose
 * source hash (figures, firm settings, code) is unchanged since its HTML or
 * PDF was made is not made again, so a rerun with nothing changed, or a
 * rerun after a crash, only does what is missing.
 */
import { existsSync } from 'node:fs';
import path from 'node:path';
import { ChromiumNotFoundError, printStatements } from '../print/index.ts';
import { overviewSourceOf, printItemsFor, renderStatements, statementPaths, writeOverview } from '../render/index.ts';
import { type AccountOutcome, type RunOptions, type RunResult, computeRun, runDirOf, writeAccountFigures, writeRunRecord } from './build.ts';
import { type Progress, silentProgress } from './progress.ts';
import { codeVersion, readSources, statementSource, writeSources } from './sources.ts';

export interface BuildOptions extends RunOptions {
  readonly outDir: string;
  /** Print PDFs (the default); false keeps figures, HTML and the overview only. */
  readonly pdf: boolean;
  /** Pages printing at once in the one browser. */
  readonly jobs: number;
  /** Seconds before a statement's print is abandoned (then retried once). */
  readonly printTimeoutSeconds?: number;
}

export interface BuildResult {
  readonly result: RunResult;
  readonly runDir: string;
  /** Set when the PDF step as a whole could not run (e.g. no Chromium); the HTML is kept. */
  readonly pdfStepError: string | null;
  /** Statements made in this run (the rest were current already). */
  readonly rendered: number;
  readonly printed: number;
}

function seconds(start: number): number {
  return Math.round(performance.now() - start) / 1000;
}

function failedOutcome(outcome: AccountOutcome, file: string, message: string): AccountOutcome {
  return { ...outcome, status: 'failed', errors: [{ file, line: null, message }], pdf: false };
}

/** Runs a whole build; throws BookError / UsageError when the run cannot start. */
export async function runBuild(options: BuildOptions): Promise<BuildResult> {
  const started = new Date();
  const progress: Progress = options.progress ?? silentProgress;
  const computed = await computeRun(options);
  const runDir = runDirOf(options.outDir, computed.period);
  const timings = { ...computed.timings };

  const htmlStart = performance.now();
  const figuresJson = await writeAccountFigures(computed, runDir);
  const code = await codeVersion();
  const settings = computed.book.settings;
  const sourceOf = new Map([...figuresJson].map(([account, json]) => [account, statementSource(code, json, settings)]));
  const recorded = new Map(await Promise.all([...sourceOf.keys()].map(async (account) =>
    [account, await readSources(statementPaths(runDir, account).dir)] as const)));
  const htmlCurrent = (account: string): boolean =>
    recorded.get(account)?.html === sourceOf.get(account) && existsSync(statementPaths(runDir, account).html);
  const toRender = new Set([...sourceOf.keys()].filter((account) => !htmlCurrent(account)));
  progress.start('render', toRender.size);
  const rendered = await renderStatements(computed, runDir, toRender, (done) => progress.update(done));
  progress.finish();
  const sources = new Map(recorded);
  for (const account of toRender) {
    if (rendered.failures.has(account)) continue;
    // The HTML changed: the PDF beside it (if any) no longer matches it.
    sources.set(account, { html: sourceOf.get(account)! });
    await writeSources(statementPaths(runDir, account).dir, sources.get(account)!);
  }
  timings.html = seconds(htmlStart);

  let outcomes = computed.outcomes.map((outcome) => {
    const failure = rendered.failures.get(outcome.account);
    return failure ? failedOutcome(outcome, 'templates', `the statement could not be rendered: ${failure}`) : outcome;
  });

  const pdfStart = performance.now();
  let pdfStepError: string | null = null;
  let printed = 0;
  const pdfCurrent = (account: string): boolean =>
    sources.get(account)?.pdf !== undefined && sources.get(account)?.pdf === sourceOf.get(account) && existsSync(statementPaths(runDir, account).pdf);
  if (options.pdf) {
    const reported = new Set(outcomes.filter((outcome) => outcome.status === 'reported').map((outcome) => outcome.account));
    const items = printItemsFor(computed, runDir).filter((item) => reported.has(item.account) && !pdfCurrent(item.account));
    progress.start('print', items.length);
    try {
      const results = await printStatements(items, {
        jobs: options.jobs,
        ...(options.printTimeoutSeconds ? { timeoutMs: options.printTimeoutSeconds * 1000 } : {}),
        onProgress: (done) => progress.update(done),
      });
      for (const [account, outcome] of results) {
        if (!outcome.ok) continue;
        printed++;
        sources.set(account, { ...sources.get(account), pdf: sourceOf.get(account)! });
        await writeSources(statementPaths(runDir, account).dir, sources.get(account)!);
      }
      outcomes = outcomes.map((outcome) => {
        const result = results.get(outcome.account);
        return result && !result.ok ? failedOutcome(outcome, 'statement.pdf', `the PDF could not be printed (tried twice): ${result.error ?? 'unknown error'}`) : outcome;
      });
    } catch (error) {
      if (!(error instanceof ChromiumNotFoundError)) throw error;
      pdfStepError = error.message;
    }
    progress.finish();
  }
  outcomes = outcomes.map((outcome) => ({ ...outcome, pdf: outcome.status === 'reported' && pdfCurrent(outcome.account) }));
  timings.pdf = seconds(pdfStart);

  const result: RunResult = { ...computed, outcomes, timings };
  await writeRunRecord(result, runDir, started);
  if (!result.shard) await writeOverview(overviewSourceOf(result, timings), runDir);
  return { result, runDir, pdfStepError, rendered: toRender.size - rendered.failures.size, printed };
}

/** Where the overview of a run is. */
export function overviewPath(runDir: string): string {
  return path.join(runDir, 'index.html');
}
