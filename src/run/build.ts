/**
 * A reporting run: load the book, compute every selected account, write the
 * outputs. The CLI calls these; nothing here reads argv or prints.
 */
import { createHash } from 'node:crypto';
import { readFile, readdir, rm } from 'node:fs/promises';
import path from 'node:path';
import { loadBook } from '../book/load.ts';
import type { Account, Book } from '../book/types.ts';
import { type Day, monthEndOffset } from '../dates.ts';
import { AccountError, type Diagnostic, UsageError } from '../errors.ts';
import { MarketData } from '../ledger/market.ts';
import { inceptionOf } from '../ledger/ledger.ts';
import { type RunContext, computeAccountFigures } from '../analysis/account.ts';
import type { Figures } from '../analysis/figures.ts';
import { type Period, parsePeriod } from '../analysis/periods.ts';
import type { RiskFreeSource } from '../analysis/performance.ts';
import { createForwardEstimator } from '../analysis/expected.ts';
import { TEMPORARY_MARKER, isSafeAccountId, stableJson, writeFileAtomic } from './files.ts';
import { type Progress, silentProgress } from './progress.ts';
import { writeOverview } from '../render/index.ts';
import { formatDiagnostic } from '../errors.ts';

export interface AccountOutcome {
  readonly account: string;
  readonly client: string | null;
  readonly status: 'reported' | 'failed';
  readonly errors: ReadonlyArray<{ readonly file: string; readonly line: number | null; readonly column?: string; readonly message: string }>;
  readonly breaches: number;
  readonly pdf: boolean;
  readonly figures: Figures | null;
}

export interface RunResult {
  readonly book: Book;
  readonly period: Period;
  readonly shard: Shard | null;
  readonly outcomes: readonly AccountOutcome[];
  /** Seconds per stage; compute_expected_risk is the part of compute spent on estimation, shortfall and the optimal mix. */
  readonly timings: { load: number; compute: number; compute_expected_risk: number; html: number; pdf: number };
}

export interface Shard {
  /** 1-based shard number k of `count`. */
  readonly index: number;
  readonly count: number;
}

export interface RunOptions {
  readonly bookDir: string;
  readonly period: string;
  /** Account ids to report; all when null. */
  readonly accounts: readonly string[] | null;
  /** Report only this deterministic share of the (selected) accounts. */
  readonly shard?: Shard | null;
  readonly progress?: Progress;
}

/**
 * The shard an account belongs to: the first 32 bits of SHA-256 of its id,
 * modulo the shard count, plus one. Depends on the id alone, so adding or
 * removing other accounts never moves an account to another shard.
 */
export function shardOf(account: string, count: number): number {
  return (createHash('sha256').update(account).digest().readUInt32BE(0) % count) + 1;
}

/** Seconds since `start` (from performance.now()), to the millisecond. */
function secondsSince(start: number): number {
  return Math.round(performance.now() - start) / 1000;
}

function toErrorRows(diagnostics: readonly Diagnostic[]): AccountOutcome['errors'] {
  return diagnostics.map((diagnostic) => ({
    file: diagnostic.file,
    line: diagnostic.line,
    ...(diagnostic.column ? { column: diagnostic.column } : {}),
    message: diagnostic.message,
  }));
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
  (options.progress ?? silentProgress).start('load', 0);
  const book = await loadBook(options.bookDir);
  const known = new Set([...book.accounts.map((account) => account.id), ...book.rejectedAccounts]);
  if (options.accounts) {
    const unknown = options.accounts.filter((id) => !known.has(id));
    if (unknown.length > 0) throw new UsageError(`--accounts names accounts that are not in ${path.join(options.bookDir, 'accounts.csv')}: ${unknown.join(', ')}`);
  }
  const shard = options.shard ?? null;
  const wanted = (id: string): boolean =>
    (options.accounts === null || options.accounts.includes(id)) && (shard === null || shardOf(id, shard.count) === shard.index);
  const progress = options.progress ?? silentProgress;
  const selected = book.accounts.filter((account) => wanted(account.id));
  const range = marketRange(book, selected, period);
  const market = new MarketData(book, range.firstDay, range.lastDay);
  const riskFreeSetting = book.settings.riskFree;
  const riskFree: RiskFreeSource = riskFreeSetting.kind === 'rate'
    ? riskFreeSetting
    : { kind: 'index', instrument: riskFreeSetting.instrument, levelAt: (day) => market.priceOn(riskFreeSetting.instrument, day)?.price ?? null };
  const load = secondsSince(loadStart);
  progress.finish();

  const computeStart = performance.now();
  let forwardMilliseconds = 0;
  const timedForward = (forward: RunContext['forward']): RunContext['forward'] => (account, mandate, holdings) => {
    const start = performance.now();
    try {
      return forward(account, mandate, holdings);
    } finally {
      forwardMilliseconds += performance.now() - start;
    }
  };
  const context: RunContext = {
    book,
    market,
    period,
    riskFree,
    forward: timedForward(createForwardEstimator(book, market, period)),
  };
  const outcomes: AccountOutcome[] = [];
  for (const id of book.rejectedAccounts.filter(wanted)) {
    const diagnostics = book.diagnostics.filter((d) => d.severity === 'error' && d.scope.kind === 'account' && d.scope.account === id);
    outcomes.push({ account: id, client: null, status: 'failed', errors: toErrorRows(diagnostics), breaches: 0, pdf: false, figures: null });
  }
  progress.start('compute', selected.length);
  for (const [done, account] of selected.entries()) {
    progress.update(done);
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
  progress.finish();
  outcomes.sort((a, b) => (a.account < b.account ? -1 : a.account > b.account ? 1 : 0));
  return {
    book,
    period,
    shard,
    outcomes,
    timings: { load, compute: secondsSince(computeStart), compute_expected_risk: Math.round(forwardMilliseconds) / 1000, html: 0, pdf: 0 },
  };
}


/** Removes temporary files a killed run left behind (they carry TEMPORARY_MARKER in their names). */
export async function removeLeftovers(runDir: string): Promise<number> {
  let removed = 0;
  const entries = await readdir(runDir, { recursive: true, withFileTypes: true }).catch(() => []);
  for (const entry of entries) {
    if (entry.isFile() && entry.name.includes(TEMPORARY_MARKER)) {
      await rm(path.join(entry.parentPath, entry.name), { force: true });
      removed++;
    }
  }
  return removed;
}

/** The run record's entry for one account. */
function recordOf(outcome: AccountOutcome) {
  return { account: outcome.account, status: outcome.status, errors: outcome.errors, breaches: outcome.breaches, pdf: outcome.pdf };
}

/** The run folder of a period under an output folder. */
export function runDirOf(outDir: string, period: Period): string {
  return path.join(outDir, period.label);
}

/**
 * Writes every reported account's figures.json (and clears failed accounts'
 * old outputs); returns each written account's figures.json text.
 */
export async function writeAccountFigures(result: RunResult, runDir: string): Promise<Map<string, string>> {
  await removeLeftovers(runDir);
  const written = new Map<string, string>();
  for (const outcome of result.outcomes) {
    if (!isSafeAccountId(outcome.account)) continue;
    const accountDir = path.join(runDir, 'accounts', outcome.account);
    if (outcome.figures) {
      const json = stableJson(outcome.figures);
      await writeFileAtomic(path.join(accountDir, 'figures.json'), json);
      written.set(outcome.account, json);
    } else {
      // A failed account keeps no statement from an earlier run: the folder shows this run only.
      await rm(accountDir, { recursive: true, force: true });
    }
  }
  return written;
}

/** Where a shard's run record goes, beside the run's own files. */
export function shardRecordPath(runDir: string, shard: Shard): string {
  return path.join(runDir, 'shards', `${shard.index}-of-${shard.count}.json`);
}

/**
 * Writes the run record: run.json and the overview for a whole run, or the
 * shard's own record (merged later by `mergeShards`) for a shard.
 */
export async function writeRunRecord(result: RunResult, runDir: string, started: Date): Promise<void> {
  const record = {
    period: result.period.label,
    book: path.resolve(result.book.dir),
    started: started.toISOString(),
    seconds: Math.round(Date.now() - started.getTime()) / 1000,
    accounts: result.outcomes.map(recordOf),
    warnings: result.book.diagnostics.filter((d) => d.severity === 'warning').map((d) => ({ file: d.file, line: d.line, ...(d.column ? { column: d.column } : {}), message: d.message })),
    timings: result.timings,
  };
  if (result.shard) {
    const shardRecord = { ...record, shard: result.shard, firm: result.book.settings.firm.name, locale: result.book.settings.locale };
    await writeFileAtomic(shardRecordPath(runDir, result.shard), stableJson(shardRecord));
    return;
  }
  await writeFileAtomic(path.join(runDir, 'run.json'), stableJson(record));
}

interface ShardRecord {
  readonly period: string;
  readonly book: string;
  readonly started: string;
  readonly seconds: number;
  readonly firm: string;
  readonly locale: string;
  readonly shard: Shard;
  readonly accounts: ReadonlyArray<ReturnType<typeof recordOf>>;
  readonly warnings: ReadonlyArray<{ file: string; line: number | null; column?: string; message: string }>;
  readonly timings: RunResult['timings'];
}

/**
 * Merges the records of shards 1..n of one run into the run's overview and
 * run.json, as a single run would have written them (figures are read back
 * from each account's figures.json). Throws UsageError when a shard is
 * missing or the records disagree.
 */
export async function mergeShards(runDir: string): Promise<{ accounts: number; failed: number }> {
  const shardDir = path.join(runDir, 'shards');
  const names = (await readdir(shardDir).catch(() => [] as string[])).filter((name) => /^\d+-of-\d+\.json$/.test(name));
  if (names.length === 0) throw new UsageError(`${shardDir} holds no shard records; run \`quarterline build … --shard k/n\` for every k first`);
  const records: ShardRecord[] = [];
  for (const name of names) records.push(JSON.parse(await readFile(path.join(shardDir, name), 'utf8')) as ShardRecord);
  const count = records[0]!.shard.count;
  const present = new Set(records.filter((record) => record.shard.count === count).map((record) => record.shard.index));
  const missing = Array.from({ length: count }, (_, i) => i + 1).filter((k) => !present.has(k));
  if (records.some((record) => record.shard.count !== count || record.period !== records[0]!.period)) {
    throw new UsageError(`the shard records in ${shardDir} come from different runs (shard counts or periods differ); remove the stale ones and rerun`);
  }
  if (missing.length > 0) throw new UsageError(`shards ${missing.map((k) => `${k}/${count}`).join(', ')} have not finished; run them, then merge again`);

  const outcomes: AccountOutcome[] = [];
  for (const record of records) {
    for (const entry of record.accounts) {
      const figuresPath = path.join(runDir, 'accounts', entry.account, 'figures.json');
      const figures = entry.status === 'reported' ? (JSON.parse(await readFile(figuresPath, 'utf8')) as Figures) : null;
      outcomes.push({ ...entry, client: figures?.client ?? null, figures });
    }
  }
  outcomes.sort((a, b) => (a.account < b.account ? -1 : a.account > b.account ? 1 : 0));
  const sum = (key: keyof RunResult['timings']): number => Math.round(records.reduce((total, record) => total + record.timings[key], 0) * 1000) / 1000;
  const timings = { load: sum('load'), compute: sum('compute'), compute_expected_risk: sum('compute_expected_risk'), html: sum('html'), pdf: sum('pdf') };
  const startedAt = records.map((record) => record.started).sort()[0]!;
  const finishedAt = Math.max(...records.map((record) => Date.parse(record.started) + record.seconds * 1000));
  const warnings = records[0]!.warnings;
  await writeOverview({
    period: records[0]!.period,
    firm: records[0]!.firm,
    locale: records[0]!.locale,
    outcomes,
    timings,
    warnings: warnings.map((w) => formatDiagnostic({ severity: 'warning', scope: { kind: 'book' }, ...w })),
  }, runDir);
  await writeFileAtomic(path.join(runDir, 'run.json'), stableJson({
    period: records[0]!.period,
    book: records[0]!.book,
    started: startedAt,
    seconds: Math.round(finishedAt - Date.parse(startedAt)) / 1000,
    accounts: outcomes.map(recordOf),
    warnings,
    timings,
    shards: count,
  }));
  return { accounts: outcomes.length, failed: outcomes.filter((outcome) => outcome.status === 'failed').length };
}
