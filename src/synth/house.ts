/**
 * What the demo book and the synthetic books share: the asset classes with
 * their assumptions and simulated dynamics, the total-return indices, the
 * four mandates, the currencies and the cautions. Everything here is
 * invented; the index names say "Synthetic" so that no reader mistakes them
 * for published indices.
 */
import type { Instrument, InstrumentKind } from '../book/types.ts';
import type { FactorSpec, FxPathSpec, PathDynamics } from './prices.ts';

export const FIRM_CURRENCY = 'EUR';

/** An asset class as book.yaml declares it, plus how its market factor moves. */
export interface AssetClassSpec {
  readonly id: string;
  readonly label: string;
  /** Index instrument id of the class proxy. */
  readonly proxy: string;
  /** The firm's capital-market assumption (annual, decimal). */
  readonly expectedReturn: number;
  /** κ of the class factor (see prices.ts). */
  readonly globalLoading: number;
}

export const ASSET_CLASSES: readonly AssetClassSpec[] = [
  { id: 'cash', label: 'Cash', proxy: 'IX-CASH-EUR', expectedReturn: 0.02, globalLoading: 0 },
  { id: 'bonds', label: 'Bonds', proxy: 'IX-BD-GOV', expectedReturn: 0.035, globalLoading: -0.2 },
  { id: 'equity', label: 'Equities', proxy: 'IX-EQ-WORLD', expectedReturn: 0.07, globalLoading: 0.9 },
  { id: 'property', label: 'Property', proxy: 'IX-PROP', expectedReturn: 0.055, globalLoading: 0.6 },
];

export const CLASS_FACTORS: readonly FactorSpec[] = ASSET_CLASSES.map((assetClass) => ({ id: assetClass.id, globalLoading: assetClass.globalLoading }));

/** How an instrument's price moves and what it pays. */
export interface PriceModel {
  readonly factorLoading: number;
  readonly annualDrift: number;
  readonly annualVolatility: number;
  readonly startLevel: number;
  readonly dynamics: PathDynamics;
  readonly decimals: number;
  /** ISO date of the first published price (a listing or launch); default the first day. */
  readonly firstDate?: string;
  /** ISO date of the last published price (a suspension); default the last day. */
  readonly lastDate?: string;
}

export type IncomeModel =
  /** Dividends (or fund distributions): per unit, the annual yield on the pay day's price split evenly over the pay months; paid on the first business day on or after the 15th. */
  | { readonly kind: 'dividend'; readonly annualYield: number; readonly months: readonly number[] }
  /** A fixed annual coupon on the nominal, paid on the first business day on or after its anniversary. */
  | { readonly kind: 'coupon'; readonly rate: number; readonly month: number; readonly day: number };

export type { InstrumentKind };

/** An instrument as the generator models it: the book's instrument (without its file line) plus how it moves and pays. */
export interface InstrumentSpec extends Omit<Instrument, 'line'> {
  readonly price: PriceModel;
  readonly income: IncomeModel | null;
}

function index(id: string, name: string, assetClass: string, drift: number, volatility: number, loading: number, startLevel: number): InstrumentSpec {
  return {
    id,
    name,
    assetClass,
    currency: FIRM_CURRENCY,
    kind: 'index',
    multiplier: 1,
    proxy: null,
    price: { factorLoading: loading, annualDrift: drift, annualVolatility: volatility, startLevel, dynamics: { kind: 'gbm' }, decimals: 4 },
    income: null,
  };
}

/** The total-return indices: one proxy per asset class and the other benchmark components. */
export const INDICES: readonly InstrumentSpec[] = [
  index('IX-CASH-EUR', 'Synthetic Euro Cash Index (total return)', 'cash', 0.02, 0.001, 1, 100),
  index('IX-BD-GOV', 'Synthetic Euro Government Bond Index (total return)', 'bonds', 0.03, 0.05, 1, 250),
  index('IX-BD-CORP', 'Synthetic Euro Corporate Bond Index (total return)', 'bonds', 0.035, 0.06, 0.9, 180),
  index('IX-EQ-WORLD', 'Synthetic World Equity Index (total return)', 'equity', 0.075, 0.15, 1, 1000),
  index('IX-EQ-EUROPE', 'Synthetic Europe Equity Index (total return)', 'equity', 0.065, 0.17, 0.9, 500),
  index('IX-PROP', 'Synthetic Listed Property Index (total return)', 'property', 0.055, 0.13, 1, 300),
];

export const RISK_FREE_INDEX = 'IX-CASH-EUR';

/** Exchange rates, all quoted from the firm's currency, so that any other pair needs a cross via EUR. */
export const FX_PAIRS: readonly FxPathSpec[] = [
  { pair: 'EUR/USD', startRate: 1.12, annualVolatility: 0.07, decimals: 5 },
  { pair: 'EUR/GBP', startRate: 0.9, annualVolatility: 0.06, decimals: 5 },
  { pair: 'EUR/CHF', startRate: 1.07, annualVolatility: 0.05, decimals: 5 },
];

/** Dividend withholding tax by the paying instrument's currency (an invented rule of the demo world). */
export const DIVIDEND_WITHHOLDING: Readonly<Record<string, number>> = { USD: 0.15, CHF: 0.35 };

export type ShortfallBasis = 'average' | 'cumulative' | 'every_year';

export interface MandateSpec {
  readonly id: string;
  readonly label: string;
  readonly benchmark: Readonly<Record<string, number>>;
  readonly riskAversion: number;
  readonly allocation: Readonly<Record<string, readonly [number, number]>>;
  readonly maxPosition?: number;
  readonly maxVolatility?: number;
  readonly maxTrackingError?: number;
  readonly shortfall: ReadonlyArray<{ readonly threshold: number; readonly horizonYears: number; readonly confidence: number; readonly basis: ShortfallBasis }>;
  /** Annual management fee charged quarterly (a quarter of it on the value at each quarter end). */
  readonly annualFee: number;
}

export const MANDATES: readonly MandateSpec[] = [
  {
    id: 'cautious',
    label: 'Cautious',
    benchmark: { 'IX-CASH-EUR': 0.1, 'IX-BD-GOV': 0.45, 'IX-BD-CORP': 0.25, 'IX-EQ-WORLD': 0.2 },
    riskAversion: 10,
    allocation: { cash: [0.02, 0.3], bonds: [0.45, 0.85], equity: [0.05, 0.3], property: [0, 0.05] },
    maxPosition: 0.1,
    maxVolatility: 0.07,
    shortfall: [{ threshold: -0.1, horizonYears: 1, confidence: 0.95, basis: 'average' }],
    annualFee: 0.006,
  },
  {
    id: 'balanced',
    label: 'Balanced',
    benchmark: { 'IX-BD-GOV': 0.3, 'IX-BD-CORP': 0.15, 'IX-EQ-WORLD': 0.45, 'IX-PROP': 0.1 },
    riskAversion: 6,
    allocation: { cash: [0, 0.2], bonds: [0.25, 0.6], equity: [0.3, 0.6], property: [0, 0.15] },
    maxTrackingError: 0.08,
    shortfall: [{ threshold: -0.05, horizonYears: 5, confidence: 0.9, basis: 'cumulative' }],
    annualFee: 0.008,
  },
  {
    id: 'growth',
    label: 'Growth',
    benchmark: { 'IX-EQ-WORLD': 0.5, 'IX-EQ-EUROPE': 0.2, 'IX-BD-GOV': 0.2, 'IX-PROP': 0.1 },
    riskAversion: 4,
    allocation: { cash: [0, 0.15], bonds: [0.05, 0.35], equity: [0.5, 0.85], property: [0, 0.15] },
    maxPosition: 0.15,
    maxVolatility: 0.16,
    maxTrackingError: 0.1,
    shortfall: [{ threshold: -0.2, horizonYears: 3, confidence: 0.9, basis: 'every_year' }],
    annualFee: 0.009,
  },
  {
    id: 'adventurous',
    label: 'Adventurous',
    benchmark: { 'IX-EQ-WORLD': 0.7, 'IX-EQ-EUROPE': 0.2, 'IX-BD-CORP': 0.1 },
    riskAversion: 2,
    allocation: { cash: [0, 0.1], bonds: [0, 0.2], equity: [0.7, 1], property: [0, 0.1] },
    maxPosition: 0.15,
    shortfall: [
      { threshold: -0.25, horizonYears: 1, confidence: 0.95, basis: 'average' },
      { threshold: -0.3, horizonYears: 2, confidence: 0.9, basis: 'every_year' },
    ],
    annualFee: 0.01,
  },
];

export const CAUTIONS: readonly string[] = [
  'Past performance is not a reliable guide to future results. The value of investments and any income from them can go down as well as up, and you may get back less than you invested.',
  'Expected returns, volatilities and shortfall probabilities shown in this statement are model estimates. They assume normally distributed returns estimated from past prices and our own long-term assumptions; real markets produce large losses more often than such a model suggests.',
  'Where investments are held in a currency other than your reporting currency, changes in exchange rates can raise or lower their value independently of the investments themselves.',
  'This statement is information about your account, not personal advice. Please discuss any decision with a licensed adviser; the rules and tax treatment of your own jurisdiction apply.',
];

export const ESTIMATION = { window_months: 60, min_months: 24, shrinkage: 'ledoit-wolf' } as const;

export interface FirmSpec {
  readonly name: string;
  readonly address: string;
  readonly email: string;
  readonly phone: string;
  readonly regulatoryNote: string;
}

/** The book.yaml content (as a plain object, keys in the order written). */
export function bookYamlObject(firm: FirmSpec, locale: string): Record<string, unknown> {
  return {
    firm: { name: firm.name, address: firm.address, email: firm.email, phone: firm.phone, regulatory_note: firm.regulatoryNote },
    locale,
    risk_free: RISK_FREE_INDEX,
    stale_after_days: 7,
    estimation: { ...ESTIMATION },
    asset_classes: Object.fromEntries(
      ASSET_CLASSES.map((assetClass) => [assetClass.id, { label: assetClass.label, proxy: assetClass.proxy, expected_return: assetClass.expectedReturn }]),
    ),
    cautions: [...CAUTIONS],
  };
}

/** The mandates.yaml content (as a plain object, keys in the order written). */
export function mandatesYamlObject(): Record<string, unknown> {
  return Object.fromEntries(
    MANDATES.map((mandate) => {
      const entry: Record<string, unknown> = {
        label: mandate.label,
        benchmark: { ...mandate.benchmark },
        risk_aversion: mandate.riskAversion,
        allocation: Object.fromEntries(Object.entries(mandate.allocation).map(([key, range]) => [key, [...range]])),
      };
      if (mandate.maxPosition !== undefined) entry['max_position'] = mandate.maxPosition;
      if (mandate.maxVolatility !== undefined) entry['max_volatility'] = mandate.maxVolatility;
      if (mandate.maxTrackingError !== undefined) entry['max_tracking_error'] = mandate.maxTrackingError;
      entry['shortfall'] = mandate.shortfall.map((rule) => ({
        threshold: rule.threshold,
        horizon_years: rule.horizonYears,
        confidence: rule.confidence,
        basis: rule.basis,
      }));
      return [mandate.id, entry];
    }),
  );
}

export function mandateById(id: string): MandateSpec {
  const mandate = MANDATES.find((candidate) => candidate.id === id);
  if (!mandate) throw new Error(`Internal error: unknown mandate ${id}; please report this`);
  return mandate;
}
