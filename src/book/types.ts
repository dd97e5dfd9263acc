/**
 * The book: the typed, validated content of one book folder (see the book
 * format in docs/book-format.md). Produced by `loadBook`, read by every
 * later stage, never mutated.
 */
import type { Day } from '../dates.ts';
import type { Diagnostic } from '../errors.ts';

export interface Firm {
  readonly name: string;
  readonly address: string | null;
  readonly email: string | null;
  readonly phone: string | null;
  readonly regulatoryNote: string | null;
}

export interface AssetClass {
  readonly id: string;
  readonly label: string;
  /** Instrument id of the index that stands for the class. */
  readonly proxy: string;
  /** The firm's annual capital-market assumption (decimal); null = historical mean of the proxy. */
  readonly expectedReturn: number | null;
}

export type RiskFree =
  | { readonly kind: 'rate'; readonly annualRate: number }
  | { readonly kind: 'index'; readonly instrument: string };

export interface Estimation {
  readonly windowMonths: number;
  readonly minMonths: number;
  readonly shrinkage: 'none' | 'ledoit-wolf';
}

/** How realised returns are computed: true daily TWR (default) or monthly Modified Dietz chain-linked. */
export type ReturnMethod = 'daily' | 'modified-dietz';

export interface Settings {
  readonly firm: Firm;
  readonly locale: string;
  readonly riskFree: RiskFree;
  readonly staleAfterDays: number;
  readonly estimation: Estimation;
  readonly returnMethod: ReturnMethod;
  /** In book.yaml order; always contains `cash`. */
  readonly assetClasses: ReadonlyMap<string, AssetClass>;
  /** Paragraphs from book.yaml, or null for the built-in defaults. */
  readonly cautions: readonly string[] | null;
}

export type ShortfallBasis = 'average' | 'cumulative' | 'every_year';

export interface ShortfallRule {
  /** Annual return threshold q (decimal; −0.10 = a loss of 10 %). */
  readonly threshold: number;
  readonly horizonYears: number;
  /** Confidence c: the rule holds when P(shortfall) ≤ 1 − c. */
  readonly confidence: number;
  readonly basis: ShortfallBasis;
}

export interface Mandate {
  readonly id: string;
  readonly label: string;
  /** Index instrument id → weight; weights sum to 1. In mandates.yaml order. */
  readonly benchmark: ReadonlyArray<{ readonly index: string; readonly weight: number }>;
  readonly riskAversion: number;
  /** Asset class → [min, max]; classes not listed are [0, 0]. In mandates.yaml order. */
  readonly allocation: ReadonlyMap<string, readonly [number, number]>;
  readonly maxPosition: number | null;
  readonly maxVolatility: number | null;
  readonly maxTrackingError: number | null;
  readonly shortfall: readonly ShortfallRule[];
}

export interface Account {
  readonly id: string;
  readonly client: string;
  readonly mandate: string;
  readonly baseCurrency: string;
  readonly adviser: string | null;
  readonly email: string | null;
  readonly inception: Day | null;
  readonly locale: string | null;
  /** Line in accounts.csv. */
  readonly line: number;
}

export type InstrumentKind = 'security' | 'fund' | 'index';

export interface Instrument {
  readonly id: string;
  readonly name: string;
  readonly assetClass: string;
  readonly currency: string;
  readonly kind: InstrumentKind;
  readonly multiplier: number;
  readonly proxy: string | null;
  readonly line: number;
}

/** A dated series, sorted by day, one value per day (a later duplicate row is an error). */
export interface Series {
  readonly days: Int32Array;
  readonly values: Float64Array;
  /** prices.csv / fx.csv line of each point. */
  readonly lines: Int32Array;
}

export type TransactionType =
  | 'deposit' | 'withdrawal' | 'transfer_in' | 'transfer_out'
  | 'buy' | 'sell' | 'dividend' | 'interest' | 'fee' | 'tax';

export interface Transaction {
  readonly account: string;
  readonly day: Day;
  readonly type: TransactionType;
  readonly instrument: string | null;
  /** Non-negative; 0 when not applicable. */
  readonly quantity: number;
  readonly price: number;
  readonly fees: number;
  /** As given (non-negative) or null when the column is empty. */
  readonly amount: number | null;
  /** Resolved: the row's currency, else the instrument's (trades and transfers) or the account's base (cash rows). */
  readonly currency: string;
  readonly note: string;
  /** Line in transactions.csv. */
  readonly line: number;
}

export interface HoldingRow {
  readonly account: string;
  readonly day: Day;
  readonly instrument: string;
  readonly quantity: number;
  readonly line: number;
}

export interface Book {
  /** The folder as given on the command line. */
  readonly dir: string;
  readonly settings: Settings;
  readonly mandates: ReadonlyMap<string, Mandate>;
  /** Valid accounts, in accounts.csv order. */
  readonly accounts: readonly Account[];
  readonly instruments: ReadonlyMap<string, Instrument>;
  /** Instrument id → its price (or index level) series. */
  readonly prices: ReadonlyMap<string, Series>;
  /** `FROM/TO` → quoted rate series for that direct pair, as in fx.csv. */
  readonly fx: ReadonlyMap<string, Series>;
  /** Account id → its transactions sorted by day, then file line. */
  readonly transactions: ReadonlyMap<string, readonly Transaction[]>;
  /** Account id → its holdings.csv rows; empty map when the file is absent. */
  readonly holdings: ReadonlyMap<string, readonly HoldingRow[]>;
  readonly hasHoldingsFile: boolean;
  /** Every warning and every non-fatal error (scoped to an account, instrument or currency). */
  readonly diagnostics: readonly Diagnostic[];
  /**
   * Account ids that appear somewhere in the book but could not be loaded as
   * accounts (an invalid accounts.csv row, or transactions for an unknown
   * account); each is reported as failed with its diagnostics.
   */
  readonly rejectedAccounts: readonly string[];
}
