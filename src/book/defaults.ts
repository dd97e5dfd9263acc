/**
 * Every default and fixed tolerance of the book format, in one place.
 *
 * The loader applies these when a key of book.yaml or mandates.yaml is absent
 * or a cell of an optional CSV column is empty; docs/book-format.md lists
 * them for users. Precedence: these defaults < book.yaml < command-line flags.
 */
import type { Estimation, ReturnMethod, RiskFree, ShortfallBasis } from './types.ts';

export interface BookDefaults {
  readonly locale: string;
  readonly riskFree: RiskFree;
  readonly staleAfterDays: number;
  readonly estimation: Estimation;
  readonly returnMethod: ReturnMethod;
  /** null = the built-in cautions (methods.md, "Default cautions"). */
  readonly cautions: readonly string[] | null;
  /** `basis` of a shortfall rule in mandates.yaml. */
  readonly shortfallBasis: ShortfallBasis;
  /** instruments.csv `multiplier` when empty or the column is absent. */
  readonly instrumentMultiplier: number;
  /** transactions.csv `fees` of a buy or sell when empty or the column is absent. */
  readonly tradeFees: number;
}

export const BOOK_DEFAULTS: BookDefaults = Object.freeze({
  locale: 'en-GB',
  riskFree: Object.freeze({ kind: 'rate', annualRate: 0 }),
  staleAfterDays: 7,
  estimation: Object.freeze({ windowMonths: 60, minMonths: 24, shrinkage: 'ledoit-wolf' }),
  returnMethod: 'daily',
  cautions: null,
  shortfallBasis: 'average',
  instrumentMultiplier: 1,
  tradeFees: 0,
});

/** Tolerances written into the book contract. */
export const BOOK_TOLERANCES = Object.freeze({
  /** Mandate benchmark weights must sum to 1 within this. */
  benchmarkWeightSum: 1e-9,
  /** A buy's or sell's `amount`, when given, must equal the computed cash effect within this (in the row's currency). */
  tradeAmount: 0.01,
  /**
   * Allowance for binary floating point when comparing against the trade
   * tolerance: 100.01 − 100 is 0.010000000000005116 in doubles, which must
   * still count as "within 0.01".
   */
  floatingPointSlack: 1e-9,
});
