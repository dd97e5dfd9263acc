/**
 * figures.json: every figure of one account's statement, machine-readable.
 * Keys follow the output contract (docs/outputs.md); keys are never renamed
 * or dropped, extra keys may be added. Returns are decimals, money is in the
 * account's base currency, nothing is rounded.
 */
import type { RealisedRisk, WindowFigures, MonthlyPoint } from './performance.ts';
import type { WindowId } from './periods.ts';

export type CheckStatus = 'pass' | 'breach' | 'n/a';

export interface Check {
  readonly id: string;
  readonly status: CheckStatus;
  readonly detail: string;
  /** The figures behind the verdict (limit, value, instruments …). */
  readonly figures?: Readonly<Record<string, unknown>>;
}

export interface HoldingFigure {
  readonly instrument: string;
  readonly name: string;
  readonly asset_class: string;
  readonly kind: 'security' | 'fund' | 'cash';
  readonly quantity: number;
  readonly price: number;
  readonly price_date: string;
  readonly currency: string;
  readonly multiplier: number;
  readonly fx_rate: number;
  readonly value: number;
  readonly weight: number | null;
  readonly stale: boolean;
}

export interface AllocationFigure {
  readonly asset_class: string;
  readonly label: string;
  readonly weight: number | null;
  readonly min: number;
  readonly max: number;
  readonly risk_contribution: number | null;
}

export interface ExpectedRisk {
  readonly expected_return: number;
  readonly volatility: number;
  readonly tracking_error: number;
  readonly var95_1y: number;
  readonly cvar95_1y: number;
}

export interface ShortfallFigure {
  readonly threshold: number;
  readonly horizon_years: number;
  readonly confidence: number;
  readonly basis: 'average' | 'cumulative' | 'every_year';
  readonly probability: number;
  readonly probability_lognormal: number;
  readonly quantile: number | null;
  readonly holds: boolean;
}

export interface OptimalMix {
  readonly feasible: boolean;
  readonly weights: Readonly<Record<string, number>>;
  readonly expected_return: number;
  readonly volatility: number;
  readonly utility: number;
}

export interface ActivityFigure {
  readonly date: string;
  readonly type: string;
  readonly instrument: string | null;
  readonly quantity: number | null;
  readonly price: number | null;
  readonly fees: number | null;
  readonly amount: number;
  readonly currency: string;
  readonly note: string;
}

export interface Figures {
  readonly account: string;
  readonly client: string;
  readonly mandate: string;
  readonly mandate_label: string;
  readonly base_currency: string;
  readonly adviser: string | null;
  readonly locale: string;
  readonly inception: string;
  readonly return_method: 'daily' | 'modified-dietz';
  readonly period: { readonly label: string; readonly start: string; readonly end: string };
  readonly value: {
    readonly start: number;
    readonly end: number;
    readonly net_external_flows: number;
    readonly income: number;
    readonly fees: number;
    readonly taxes: number;
    /** end − start − net external flows: market movement, income, fees and taxes together. */
    readonly investment_result: number;
  };
  readonly returns: Readonly<Record<WindowId, WindowFigures | null>>;
  readonly realised_risk: RealisedRisk | null;
  readonly expected_risk: ExpectedRisk | null;
  readonly shortfall: readonly ShortfallFigure[] | null;
  readonly holdings: readonly HoldingFigure[];
  readonly allocation: readonly AllocationFigure[];
  readonly optimal_mix: OptimalMix | null;
  readonly frontier: ReadonlyArray<{ readonly volatility: number; readonly expected_return: number }> | null;
  readonly benchmark: {
    readonly components: ReadonlyArray<{ readonly index: string; readonly name: string; readonly weight: number }>;
    readonly expected_return: number | null;
    readonly volatility: number | null;
  };
  readonly growth: readonly MonthlyPoint[];
  readonly activity: readonly ActivityFigure[];
  readonly checks: readonly Check[];
  readonly notes: readonly string[];
}
