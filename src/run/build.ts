/**
 * A reporting run: load the book, compute every selected account, write the
 * outputs. The CLI calls these; nothing here reads argv or prints.
 */
import { rm } from 'node:fs/promises';
import path from 'node:path';
import { loadBook } from '../book/load.ts';
import type { Account, Book } from '../book/types.ts';
import { type Day, isoDate, monthEndOffset } from '../dates.ts';
import { AccountError, type Diagnostic, UsageError } from '../errors.ts';
import { MarketData } from '../ledger/market.ts';
import { inceptionOf } from '../ledger/ledger.ts';
import { type RunContext, computeAccountFigures } from '../analysis/account.ts';
import type { Figures } from '../analysis/figures.ts';
import { type Period, parsePeriod } from '../analysis/periods.ts';
import type { RiskFreeSource } from '../analysis/performance.ts';
import { createForwardEstimator } from '../analysis/expected.ts';
import { stableJson, writeFileAtomic } from './files.ts';
import { renderOverview } from './overview.ts';

export interface AccountOutcome {
  readonly account: string;
  readonly client: string | null;
  readonly status: 'reported' | 'failed';
  readonly errors: ReadonlyArray<{ readonly file: string; readonly line: number | null; readonly message: string }>;
  readonly breaches: number;
  readonly pdf: boolean;
  readonly figures: Figures | null;
}

export interface RunResult {
  readonly book: Book;
  readonly period: Period;
  readonly outcomes: readonly AccountOutcome[];
  readonly timings: { load: number; compute: number; html: number; pdf: number };
}

export interface RunOptions {
  readonly bookDir: string;
  readonly period: string;
  /** Account ids to report; all when null. */
  readonly accounts: readonly string[] | null;
}

/** Seconds since `start` (from performance.now()), to the millisecond. */
function secondsSince(start: number): number {
  return Math.round(performance.now() - start) / 1000;
}

function toErrorRows(diagnostics: readonly Diagnostic[]): AccountOutcome['errors'] {
  return diagnostics.map((diagnostic) => ({ file: diagnostic.file, line: diagnostic.line, message: diagnostic.message }));
}

/** Instruments and currencies whose data an account's figures depend on. */
function dependencies(book: Book, account: Account): { instruments: Set<string>; currencies: Set<string> } {
  const instruments = new Set<string>();
  const currencies = new Set<string>([account.baseCurrency]);
  for (const row of book.transactions.get(account.id) ?? []) {
    currencies.add(row.currency);
    if (row.instrument) {
      instruments.add(row.instrument);
      const instrument = book.instruments.get(row.instrument);
      if (instrument) currencies.add(instrument.currency);
    }
  }
  const mandate = book.mandates.get(account.mandate);
  for (const component of mandate?.benchmark ?? []) instruments.add(component.index);
  for (const assetClass of book.settings.assetClasses.values()) instruments.add(assetClass.proxy);
  if (book.settings.riskFree.kind === 'index') instruments.add(book.settings.riskFree.instrument);
  for (const id of instruments) {
    const instrument = book.instruments.get(id);
    if (instrument) currencies.add(instrument.currency);
  }
  return { instruments, currencies };
}

/** The error diagnostics that stop an account: its own, and those of data it depends on. */
export function blockingDiagnostics(book: Book, account: Account): Diagnostic[] {
  const { instruments, currencies } = dependencies(book, account);
  return book.diagnostics.filter((diagnostic) => {
    if (diagnostic.severity !== 'error') return false;
    switch (diagnostic.scope.kind) {
      case 'book': return false;
      case 'account': return diagnostic.scope.account === account.id;
      case 'instrument': return instruments.has(diagnostic.scope.instrument);
      case 'currency': return currencies.has(diagnostic.scope.currency);
    }
  });
}

/** The calendar range the market tables must cover for these accounts. */
function marketRange(book: Book, accounts: readonly Account[], period: Period): { firstDay: Day; lastDay: Day } {
  let firstDay = monthEndOffset(period.endDay, -(book.settings.estimation.windowMonths + 1));
  for (const account of accounts) {
    const rows = book.transactions.get(account.id) ?? [];
    if (rows[0]) firstDay = Math.min(firstDay, rows[0].day);
    const inception = inceptionOf(account, rows);
    if (inception !== null) firstDay = Math.min(firstDay, inception - 1);
  }
  return { firstDay: Math.min(firstDay, period.startDay), lastDay: period.endDay };
}

/** Loads the book and computes every selected account. Throws BookError or UsageError when the run cannot start. */
export async function computeRun(options: RunOptions): Promise<RunResult> {
  const period = parsePeriod(options.period);
  if (!period) throw new UsageError(`--period "${options.period}" is not a period; write YYYY-Qn (2026-Q3), YYYY-MM (2026-09) or YYYY (2026)`);
  const loadStart = performance.now();
  const book = await loadBook(options.bookDir);
  const known = new Set([...book.accounts.map((account) => account.id), ...book.rejectedAccounts]);
  if (options.accounts) {
    const unknown = options.accounts.filter((id) => !known.has(id));
    if (unknown.length > 0) throw new UsageError(`--accounts names accounts that are not in ${path.join(options.bookDir, 'accounts.csv')}: ${unknown.join(', ')}`);
  }
  const wanted = (id: string): boolean => options.accounts === null || options.accounts.includes(id);
  const selected = book.accounts.filter((account) => wanted(account.id));
  const range = marketRange(book, selected, period);
  const market = new MarketData(book, range.firstDay, range.lastDay);
  const riskFreeSetting = book.settings.riskFree;
  const riskFree: RiskFreeSource = riskFreeSetting.kind === 'rate'
    ? riskFreeSetting
    : { kind: 'index', instrument: riskFreeSetting.instrument, levelAt: (day) => market.priceOn(riskFreeSetting.instrument, day)?.price ?? null };
  const load = secondsSince(loadStart);

  const computeStart = performance.now();
  const context: RunContext = {
    book,
    market,
    period,
    riskFree,
    forward: createForwardEstimator(book, market, period),
  };
  const outcomes: AccountOutcome[] = [];
  for (const id of book.rejectedAccounts.filter(wanted)) {
    const diagnostics = book.diagnostics.filter((d) => d.severity === 'error' && d.scope.kind === 'account' && d.scope.account === id);
    outcomes.push({ account: id, client: null, status: 'failed', errors: toErrorRows(diagnostics), breaches: 0, pdf: false, figures: null });
  }
  for (const account of selected) {
    const blocking = blockingDiagnostics(book, account);
    if (blocking.length > 0) {
      outcomes.push({ account: account.id, client: account.client, status: 'failed', errors: toErrorRows(blocking), breaches: 0, pdf: false, figures: null });
      continue;
    }
    try {
      const figures = computeAccountFigures(context, account);
      const breaches = figures.checks.filter((check) => check.status === 'breach').length;
      outcomes.push({ account: account.id, client: account.client, status: 'reported', errors: [], breaches, pdf: false, figures });
    } catch (error) {
      const errors = error instanceof AccountError
        ? toErrorRows(error.diagnostics)
        : [{ file: 'accounts.csv', line: account.line, message: `Internal error while computing ${account.id}: ${error instanceof Error ? error.message : String(error)}; please report this with the book` }];
      outcomes.push({ account: account.id, client: account.client, status: 'failed', errors, breaches: 0, pdf: false, figures: null });
    }
  }
  outcomes.sort((a, b) => (a.account < b.account ? -1 : a.account > b.account ? 1 : 0));
  return { book, period, outcomes, timings: { load, compute: secondsSince(computeStart), html: 0, pdf: 0 } };
}

/** A file-name-safe account id (accounts.csv ids are checked, but rejected rows may carry anything). */
export function isSafeAccountId(id: string): boolean {
  return /^[A-Za-z0-9._-]{1,64}$/.test(id) && id !== '.' && id !== '..';
}

/** Writes figures.json per account, the overview and run.json under OUT/P. */
export async function writeRun(result: RunResult, outDir: string, started: Date): Promise<string> {
  const runDir = path.join(outDir, result.period.label);
  const htmlStart = performance.now();
  for (const outcome of result.outcomes) {
    if (!isSafeAccountId(outcome.account)) continue;
    const accountDir = path.join(runDir, 'accounts', outcome.account);
    if (outcome.figures) {
      await writeFileAtomic(path.join(accountDir, 'figures.json'), stableJson(outcome.figures));
    } else {
      // A failed account keeps no statement from an earlier run: the folder shows this run only.
      await rm(accountDir, { recursive: true, force: true });
    }
  }
  const timings = { ...result.timings, html: secondsSince(htmlStart) };
  await writeFileAtomic(path.join(runDir, 'index.html'), renderOverview(result, timings));
  const record = {
    period: result.period.label,
    book: path.resolve(result.book.dir),
    started: started.toISOString(),
    seconds: Math.round((Date.now() - started.getTime())) / 1000,
    period_start: isoDate(result.period.startDay),
    period_end: isoDate(result.period.endDay),
    accounts: result.outcomes.map((outcome) => ({
      account: outcome.account,
      status: outcome.status,
      errors: outcome.errors,
      breaches: outcome.breaches,
      pdf: outcome.pdf,
    })),
    warnings: result.book.diagnostics.filter((d) => d.severity === 'warning').map((d) => ({ file: d.file, line: d.line, message: d.message })),
    timings,
  };
  await writeFileAtomic(path.join(runDir, 'run.json'), stableJson(record));
  return runDir;
}
