/**
 * Realised figures against an independent implementation of the methods.
 *
 * test/reference/realised_reference.py is a separate Python/NumPy/SciPy
 * implementation of docs/spec/methods.md ("Periods and windows" to
 * "Realised risk"), written without reading our sources (MWR by
 * scipy.optimize.brentq). Its outputs are stored in test/reference/expected/;
 * each was produced by the command in REFERENCES below, e.g.
 *
 *   python3 test/reference/realised_reference.py test/fixtures/reference-books/leap-year 2024 \
 *     > test/reference/expected/leap-year-2024.json
 *
 * When the demo book is regenerated, rerun those commands and review the diff.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { computeRun } from '../../src/run/build.ts';
import type { Figures } from '../../src/analysis/figures.ts';

const REFERENCES = [
  { book: 'test/fixtures/reference-books/month-fx', period: '2025-03', file: 'month-fx-2025-03.json' },
  { book: 'test/fixtures/reference-books/leap-year', period: '2024', file: 'leap-year-2024.json' },
  { book: 'test/fixtures/reference-books/quarter-edges', period: '2025-Q2', file: 'quarter-edges-2025-Q2.json' },
  { book: 'data/demo', period: '2026-Q3', file: 'demo-2026-Q3.json' },
  { book: 'data/demo', period: '2025-02', file: 'demo-2025-02.json' },
];

/** Tolerances: tighter than the contract's 1e-6 on returns and 0.01 on money. */
const RETURN_TOLERANCE = 1e-9;
const MONEY_TOLERANCE = 1e-6;

const WINDOW_KEYS = ['twr_net', 'twr_gross', 'mwr', 'benchmark', 'excess_arithmetic', 'excess_geometric'] as const;
const RISK_KEYS = ['volatility', 'tracking_error', 'information_ratio', 'sharpe', 'max_drawdown'] as const;

function close(actual: number | null | undefined, expected: number | null | undefined, tolerance: number, label: string): void {
  if (expected === null || expected === undefined) {
    expect(actual ?? null, label).toBeNull();
    return;
  }
  expect(actual, label).not.toBeNull();
  expect(Math.abs(actual! - expected), `${label}: ${actual} vs reference ${expected}`).toBeLessThanOrEqual(tolerance * Math.max(1, Math.abs(expected)));
}

describe.each(REFERENCES)('$book $period against the independent reference', async ({ book, period, file }) => {
  const reference = JSON.parse(readFileSync(`test/reference/expected/${file}`, 'utf8')) as {
    accounts: Record<string, {
      inception: string;
      value: Record<string, number>;
      returns: Record<string, (Record<string, number | null | string | boolean>) | null>;
      realised_risk: Record<string, number | string> | null;
    } | { error: string }>;
  };
  const result = await computeRun({ bookDir: book, period, accounts: null });
  const figuresById = new Map(result.outcomes.map((outcome) => [outcome.account, outcome.figures]));

  for (const [account, expected] of Object.entries(reference.accounts)) {
    it(`agrees on ${account}`, () => {
      const figures = figuresById.get(account) as Figures | null | undefined;
      if ('error' in expected) {
        expect(figures ?? null, `${account} fails in the reference: ${expected.error}`).toBeNull();
        return;
      }
      expect(figures, `${account} reported`).toBeTruthy();
      expect(figures!.inception).toBe(expected.inception);
      for (const key of ['start', 'end', 'net_external_flows', 'income', 'fees', 'taxes'] as const) {
        close(figures!.value[key], expected.value[key], MONEY_TOLERANCE, `${account} value.${key}`);
      }
      for (const [window, expectedWindow] of Object.entries(expected.returns)) {
        const actualWindow = figures!.returns[window as keyof Figures['returns']];
        if (expectedWindow === null) {
          expect(actualWindow, `${account} ${window}`).toBeNull();
          continue;
        }
        expect(actualWindow?.start, `${account} ${window}.start`).toBe(expectedWindow['start']);
        expect(actualWindow?.annualised, `${account} ${window}.annualised`).toBe(expectedWindow['annualised']);
        for (const key of WINDOW_KEYS) {
          close(actualWindow?.[key], expectedWindow[key] as number | null, RETURN_TOLERANCE, `${account} ${window}.${key}`);
        }
      }
      if (expected.realised_risk === null) {
        expect(figures!.realised_risk).toBeNull();
      } else {
        expect(figures!.realised_risk?.months).toBe(expected.realised_risk['months']);
        for (const key of RISK_KEYS) {
          close(figures!.realised_risk?.[key], expected.realised_risk[key] as number, RETURN_TOLERANCE, `${account} realised_risk.${key}`);
        }
      }
    });
  }
});
