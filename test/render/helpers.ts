/**
 * Shared set-up of the render and print tests: the demo book's run
 * (figures, HTML) in a temporary folder, and outcomes altered on purpose
 * (a hostile client name, figures that are not available).
 */
import { mkdtemp } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Figures } from '../../src/analysis/figures.ts';
import { renderRunHtml } from '../../src/render/index.ts';
import { type AccountOutcome, type RunResult, computeRun, runDirOf, writeAccountFigures } from '../../src/run/build.ts';

export const DEMO_BOOK = fileURLToPath(new URL('../../data/demo', import.meta.url));
export const DEMO_PERIOD = '2026-Q3';

/** A client name meant to break things: markup, quotes, ampersands, right-to-left text, 200+ characters. */
export const HOSTILE_CLIENT = `<script>alert("x")</script> "Quoted" & Sons <img src=x onerror=alert(1)> עברית العربية ${'W'.repeat(60)} ${'Long name '.repeat(10)}`.slice(0, 200);

let demo: Promise<RunResult> | null = null;

/** The demo book computed once per test file. */
export function demoResult(): Promise<RunResult> {
  demo ??= computeRun({ bookDir: DEMO_BOOK, period: DEMO_PERIOD, accounts: null });
  return demo;
}

export async function temporaryDir(prefix: string): Promise<string> {
  return mkdtemp(path.join(tmpdir(), `quarterline-${prefix}-`));
}

/** Writes figures.json and the HTML of a run into a fresh folder; returns the run folder. */
export async function writeDemoRun(result: RunResult, prefix: string): Promise<string> {
  const runDir = runDirOf(await temporaryDir(prefix), result.period);
  await writeAccountFigures(result, runDir);
  await renderRunHtml(result, runDir, result.timings);
  return runDir;
}

/** A copy of an outcome under a new account id, with changed figures. */
export function variant(outcome: AccountOutcome, account: string, change: (figures: Figures) => Figures): AccountOutcome {
  const figures = change({ ...outcome.figures!, account });
  return { ...outcome, account, client: figures.client, figures };
}

/** Text from the book that must stay text: markup in an asset-class label, a holding's name and a transaction note. */
export const HOSTILE_LABEL = '<script>alert(2)</script>Equities & "Co"';

/** The outcome with the hostile client name, and markup in a class label (charts too), a name and a note. */
export function hostile(outcome: AccountOutcome, account = 'HOSTILE-1'): AccountOutcome {
  return variant(outcome, account, (figures) => ({
    ...figures,
    client: HOSTILE_CLIENT,
    allocation: figures.allocation.map((row, i) => (i === 0 ? { ...row, label: HOSTILE_LABEL } : row)),
    holdings: figures.holdings.map((row, i) => (i === figures.holdings.length - 1 ? { ...row, name: `<b onmouseover="x()">${row.name}</b>` } : row)),
    activity: figures.activity.map((row, i) => (i === 0 ? { ...row, note: '<a href="javascript:alert(3)">click</a>' } : row)),
  }));
}

/** The outcome with every nullable figure null and the notes that explain why. */
export function unavailable(outcome: AccountOutcome, account = 'NULLS-1'): AccountOutcome {
  return variant(outcome, account, (figures) => ({
    ...figures,
    returns: {
      period: { ...figures.returns.period!, mwr: null, excess_arithmetic: null, excess_geometric: null, benchmark: null },
      ytd: null,
      '1y': null,
      '3y': null,
      '5y': null,
      since_inception: { ...figures.returns.since_inception!, twr_gross: null },
    },
    realised_risk: null,
    expected_risk: null,
    shortfall: null,
    optimal_mix: null,
    frontier: null,
    benchmark: { ...figures.benchmark, expected_return: null, volatility: null },
    growth: [],
    checks: figures.checks.map((check) => (check.id.startsWith('shortfall.') ? { id: check.id, status: 'n/a' as const, detail: 'no covariance estimate for EQ-TEST' } : check)),
    notes: [
      'Realised risk needs at least 12 complete months since inception; this account has 3',
      'Expected risk is unavailable: no covariance estimate for EQ-TEST',
      'period: the money-weighted return is unavailable: its cash flows have no unique rate (no root, or several)',
      'period: the benchmark return is unavailable: index IX-TEST has no level on or before 2026-06-30',
      'since_inception: the gross TWR is unavailable: a test reason',
      'The daily net return index is unavailable: a test reason for the growth chart',
    ],
  }));
}

/** The run with extra outcomes added (sorted by account like computeRun's). */
export function withOutcomes(result: RunResult, extra: readonly AccountOutcome[]): RunResult {
  const outcomes = [...result.outcomes, ...extra].sort((a, b) => (a.account < b.account ? -1 : a.account > b.account ? 1 : 0));
  return { ...result, outcomes };
}

/** Visible text of an HTML page, roughly: tags removed, entities for < > & " kept as characters. */
export function visibleText(html: string): string {
  return html
    .replace(/<(script|style|title|desc)[^>]*>[\s\S]*?<\/\1>/g, ' ')
    .replace(/<[^>]+>/g, ' ')
    .replace(/&lt;/g, '<').replace(/&gt;/g, '>').replace(/&quot;/g, '"').replace(/&#39;/g, "'").replace(/&amp;/g, '&')
    .replace(/\s+/g, ' ');
}

/** Text with every kind of space (NBSP, narrow NBSP) as a plain space, runs collapsed. */
export function normaliseSpaces(text: string): string {
  return text.replace(/[\u00a0\u202f\u2009\s]+/g, ' ');
}
