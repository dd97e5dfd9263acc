/**
 * The HTML of a run: one statement per reported account
 * (RUN/accounts/ID/index.html), the adviser overview (RUN/index.html) and
 * the shared assets (RUN/assets/). Every file is written atomically; the
 * same input gives byte-identical files (nothing here reads the clock
 * except to time itself).
 */
import path from 'node:path';
import type { PrintItem } from '../print/index.ts';
import { overviewView, type PdfState } from '../report/overview.ts';
import { type StatementView, statementTitle, statementView } from '../report/statement.ts';
import { formatterFor } from '../report/format.ts';
import { isoDate } from '../dates.ts';
import { formatDiagnostic } from '../errors.ts';
import { parsePeriod } from '../analysis/periods.ts';
import type { AccountOutcome, RunResult } from '../run/build.ts';
import { isSafeAccountId, writeFileAtomic } from '../run/files.ts';
import { runAssets } from './assets.ts';
import { renderChartSvg } from './charts.ts';
import { type StatementPage, renderOverviewPage, renderStatementPages } from './eleventy.ts';
import { RenderError } from './errors.ts';

export type RunTimings = RunResult['timings'];

/** The outcome of printing one account's PDF, as printStatements reports it. */
export type PdfOutcome = { readonly ok: boolean; readonly error?: string };

export interface RenderOptions {
  /** PDF results by account; without it the overview links a PDF where the outcome says one was printed. */
  readonly pdf?: ReadonlyMap<string, PdfOutcome>;
  /** Called after each statement page is built (view and charts), with the count done and the total. */
  readonly onProgress?: (done: number, total: number) => void;
}

/** Statements rendered per Eleventy pass; bounds memory on large books. */
const BATCH_SIZE = 200;

/** Where an account's outputs live in a run folder. */
export function statementPaths(runDir: string, account: string): { readonly dir: string; readonly html: string; readonly pdf: string; readonly figures: string } {
  const dir = path.join(runDir, 'accounts', account);
  return { dir, html: path.join(dir, 'index.html'), pdf: path.join(dir, 'statement.pdf'), figures: path.join(dir, 'figures.json') };
}

/** The accounts of a run that get a statement: reported, with figures and a file-name-safe id. */
function statementOutcomes(result: RunResult): Array<RunResult['outcomes'][number] & { figures: NonNullable<RunResult['outcomes'][number]['figures']> }> {
  return result.outcomes.filter((outcome): outcome is typeof outcome & { figures: NonNullable<typeof outcome.figures> } =>
    outcome.status === 'reported' && outcome.figures !== null && isSafeAccountId(outcome.account));
}

function settingsOf(result: RunResult): { firm: RunResult['book']['settings']['firm']; cautions: readonly string[] | null } {
  return { firm: result.book.settings.firm, cautions: result.book.settings.cautions };
}

/** Renders a statement's charts to SVG and attaches them to its view. */
async function withCharts(view: StatementView): Promise<StatementPage> {
  const format = formatterFor(view.locale);
  const svg = async (chart: StatementView['performance']['growth'], id: string): Promise<string> =>
    chart ? renderChartSvg(chart, format, `chart-${id}`) : '';
  return {
    ...view,
    svg: {
      growth: await svg(view.performance.growth, 'growth'),
      allocation: await svg(view.holdings.chart, 'allocation'),
      riskReturn: await svg(view.risk.riskReturn, 'risk-return'),
      distribution: await svg(view.risk.distribution, 'distribution'),
    },
  };
}

/** The view of one account's statement with its charts; errors name the account. */
async function statementPage(result: RunResult, outcome: ReturnType<typeof statementOutcomes>[number]): Promise<StatementPage> {
  try {
    return await withCharts(statementView(outcome.figures, settingsOf(result)));
  } catch (error) {
    throw new RenderError(`the statement of ${outcome.account} could not be rendered: ${error instanceof Error ? error.message : String(error)}`, { cause: error });
  }
}

/**
 * What the overview is made from: a run's outcomes and timings, the firm's
 * name and locale. A merged set of shards has no book, only these.
 */
export interface OverviewSource {
  /** The period label, e.g. 2026-Q3. */
  readonly period: string;
  readonly firm: string;
  readonly outcomes: readonly AccountOutcome[];
  readonly timings: RunTimings;
  /** The firm's locale (book.yaml); default: the first reported account's, else en-GB. */
  readonly locale?: string;
  /** Warnings about the book, one line each. */
  readonly warnings?: readonly string[];
}

/** The overview source of a whole run. */
export function overviewSourceOf(result: RunResult, timings: RunTimings): OverviewSource {
  return {
    period: result.period.label,
    firm: result.book.settings.firm.name,
    outcomes: result.outcomes,
    timings,
    locale: result.book.settings.locale,
    warnings: result.book.diagnostics.filter((d) => d.severity === 'warning').map(formatDiagnostic),
  };
}

function overviewOf(source: OverviewSource, options: RenderOptions): ReturnType<typeof overviewView> {
  const written = new Set(source.outcomes
    .filter((outcome) => outcome.status === 'reported' && outcome.figures !== null && isSafeAccountId(outcome.account))
    .map((outcome) => outcome.account));
  const pdfOf = (account: string): PdfState => {
    const printed = options.pdf?.get(account);
    if (printed) return printed.ok ? { ok: true } : { ok: false, error: printed.error ?? 'unknown error' };
    const outcome = source.outcomes.find((candidate) => candidate.account === account);
    return outcome?.pdf ? { ok: true } : null;
  };
  const firstFigures = source.outcomes.find((outcome) => outcome.figures)?.figures ?? null;
  const parsed = parsePeriod(source.period);
  const period = firstFigures?.period
    ?? (parsed ? { label: parsed.label, start: isoDate(parsed.startDay), end: isoDate(parsed.endDay) } : null);
  if (!period) throw new RenderError(`Internal error: "${source.period}" is not a period; please report this`);
  return overviewView({
    firm: source.firm,
    locale: source.locale ?? firstFigures?.locale ?? 'en-GB',
    period,
    outcomes: source.outcomes,
    timings: source.timings,
    written,
    pdf: pdfOf,
    warnings: source.warnings ?? [],
  });
}

async function writeAssets(runDir: string): Promise<string[]> {
  const files: string[] = [];
  for (const asset of await runAssets()) {
    const target = path.join(runDir, 'assets', ...asset.name.split('/'));
    await writeFileAtomic(target, asset.content);
    files.push(target);
  }
  return files;
}

async function writePages(runDir: string, pages: ReadonlyArray<{ path: string; content: string }>): Promise<string[]> {
  const files: string[] = [];
  for (const page of pages) {
    const target = path.join(runDir, ...page.path.split('/'));
    await writeFileAtomic(target, page.content);
    files.push(target);
  }
  return files;
}

export interface StatementsRendered {
  readonly seconds: number;
  /** Every file written (absolute paths). */
  readonly files: string[];
  /** Accounts whose statement could not be rendered, with the reason. */
  readonly failures: ReadonlyMap<string, string>;
}

/**
 * Writes the shared assets and accounts/<ID>/index.html for the reported
 * accounts in `only` (every reported account when null). A statement that
 * cannot be rendered is reported in `failures`; the others go on.
 */
export async function renderStatements(
  result: RunResult,
  runDir: string,
  only: ReadonlySet<string> | null,
  onProgress?: (done: number, total: number) => void,
): Promise<StatementsRendered> {
  const start = performance.now();
  const files = await writeAssets(runDir);
  const outcomes = statementOutcomes(result).filter((outcome) => only === null || only.has(outcome.account));
  const failures = new Map<string, string>();
  let built = 0;
  for (let first = 0; first < outcomes.length; first += BATCH_SIZE) {
    const batch: StatementPage[] = [];
    for (const outcome of outcomes.slice(first, first + BATCH_SIZE)) {
      try {
        batch.push(await statementPage(result, outcome));
      } catch (error) {
        failures.set(outcome.account, error instanceof Error ? error.message : String(error));
      }
      onProgress?.(++built, outcomes.length);
    }
    files.push(...await writePages(runDir, await renderStatementPages(batch)));
  }
  return { seconds: Math.round(performance.now() - start) / 1000, files, failures };
}

/**
 * Writes accounts/<ID>/index.html for every reported account, the overview
 * index.html (not for a shard: merging writes it) and the shared assets under runDir. Returns the seconds it
 * took and every file written (absolute paths).
 */
export async function renderRunHtml(result: RunResult, runDir: string, timings: RunTimings, options: RenderOptions = {}): Promise<{ seconds: number; files: string[] }> {
  const start = performance.now();
  const rendered = await renderStatements(result, runDir, null);
  if (rendered.failures.size > 0) throw new RenderError([...rendered.failures.values()].join('; '));
  const files = [...rendered.files];
  // A shard writes its statements only; merging the shards writes the overview.
  if (!result.shard) files.push(...await writePages(runDir, await renderOverviewPage(overviewOf(overviewSourceOf(result, timings), options))));
  return { seconds: Math.round(performance.now() - start) / 1000, files };
}

/**
 * Writes only the overview (RUN/index.html): after printing, with the PDF
 * results and final timings, or after merging shards.
 */
export async function writeOverview(source: OverviewSource, runDir: string, options: RenderOptions = {}): Promise<string> {
  const [page] = await renderOverviewPage(overviewOf(source, options));
  if (!page) throw new RenderError('Internal error: the overview was not rendered; please report this');
  const [file] = await writePages(runDir, [page]);
  return file!;
}

/** What printStatements needs for every statement of a run (reported accounts with safe ids). */
export function printItemsFor(result: RunResult, runDir: string): PrintItem[] {
  return statementOutcomes(result).map((outcome) => {
    const paths = statementPaths(runDir, outcome.account);
    return {
      account: outcome.account,
      htmlPath: paths.html,
      pdfPath: paths.pdf,
      title: statementTitle(outcome.figures),
      author: result.book.settings.firm.name,
      header: {
        firm: result.book.settings.firm.name,
        client: outcome.figures.client,
        account: outcome.account,
        period: outcome.figures.period.label,
      },
    };
  });
}
