/**
 * A small, hand-made figures.json for view-model tests: one account with
 * two classes, a one-year shortfall rule and a five-year cumulative one.
 * The numbers are invented but consistent: end = start + flows +
 * investment result (1 000 000 + 50 000 + 30 000 = 1 080 000).
 */
import type { Figures } from '../../src/analysis/figures.ts';
import type { WindowFigures } from '../../src/analysis/performance.ts';

function window(start: string, annualised: boolean, net: number, benchmark: number): WindowFigures {
  return {
    start, end: '2026-09-30', days: 92, annualised,
    twr_net: net, twr_gross: net + 0.002, mwr: net - 0.001, benchmark,
    excess_arithmetic: net - benchmark, excess_geometric: (1 + net) / (1 + benchmark) - 1,
  };
}

export function sampleFigures(overrides: Partial<Figures> = {}): Figures {
  return {
    account: 'T-1',
    client: 'Ada Example',
    mandate: 'balanced',
    mandate_label: 'Balanced',
    base_currency: 'EUR',
    adviser: 'Ben Adviser',
    locale: 'en-GB',
    inception: '2020-01-15',
    return_method: 'daily',
    period: { label: '2026-Q3', start: '2026-06-30', end: '2026-09-30' },
    value: { start: 1_000_000, end: 1_080_000, net_external_flows: 50_000, income: 4_000, fees: 2_500, taxes: 500, investment_result: 30_000 },
    returns: {
      period: window('2026-06-30', false, 0.0275, 0.0250),
      ytd: window('2025-12-31', false, 0.061, 0.058),
      '1y': window('2025-09-30', true, 0.081, 0.092),
      '3y': window('2023-09-30', true, 0.055, 0.051),
      '5y': window('2021-09-30', true, 0.047, 0.049),
      since_inception: window('2020-01-14', true, 0.052, 0.050),
    },
    realised_risk: { months: 36, first_month: '2023-10', last_month: '2026-09', volatility: 0.09, tracking_error: 0.03, information_ratio: 0.2, sharpe: 0.5, max_drawdown: 0.12 },
    expected_risk: { expected_return: 0.06, volatility: 0.12, tracking_error: 0.04, var95_1y: 0.1373824352341767, cvar95_1y: 0.1875 },
    shortfall: [
      { threshold: -0.1, horizon_years: 1, confidence: 0.95, basis: 'average', probability: 0.0912, probability_lognormal: 0.085, quantile: -0.137, holds: false },
      { threshold: -0.05, horizon_years: 5, confidence: 0.9, basis: 'cumulative', probability: 0.04, probability_lognormal: 0.045, quantile: 0.01, holds: true },
    ],
    holdings: [
      { instrument: 'CASH:EUR', name: 'Cash (EUR)', asset_class: 'cash', kind: 'cash', quantity: 80_000.123, price: 1, price_date: '2026-09-30', currency: 'EUR', multiplier: 1, fx_rate: 1, value: 80_000.123, weight: 0.0740741, stale: false },
      { instrument: 'EQ-A', name: 'Alpha Industries', asset_class: 'equity', kind: 'security', quantity: 1000, price: 600, price_date: '2026-09-30', currency: 'EUR', multiplier: 1, fx_rate: 1, value: 600_000, weight: 0.5555556, stale: false },
      { instrument: 'EQ-B', name: 'Beta & Sons <Holdings>', asset_class: 'equity', kind: 'security', quantity: 400, price: 999.9999, price_date: '2026-09-01', currency: 'EUR', multiplier: 1, fx_rate: 1, value: 399_999.877, weight: 0.3703703, stale: true },
    ],
    allocation: [
      { asset_class: 'cash', label: 'Cash', weight: 0.0740741, min: 0, max: 0.1, risk_contribution: 0 },
      { asset_class: 'equity', label: 'Equities', weight: 0.9259259, min: 0.3, max: 0.7, risk_contribution: 0.12 },
    ],
    optimal_mix: { feasible: true, weights: { cash: 0.3, equity: 0.7 }, expected_return: 0.05, volatility: 0.09, utility: 0.03 },
    frontier: [
      { volatility: 0.03, expected_return: 0.025 },
      { volatility: 0.06, expected_return: 0.04 },
      { volatility: 0.09, expected_return: 0.05 },
    ],
    benchmark: { components: [{ index: 'IX-EQ', name: 'World Equity Index', weight: 0.6 }, { index: 'IX-CASH', name: 'Cash Index', weight: 0.4 }], expected_return: 0.05, volatility: 0.1 },
    growth: [
      { month_end: '2020-01-14', account: 1, benchmark: 1 },
      { month_end: '2020-01-31', account: 1.01, benchmark: 1.005 },
      { month_end: '2026-09-30', account: 1.3543, benchmark: 1.3011 },
    ],
    activity: [
      { date: '2026-07-01', type: 'deposit', instrument: null, quantity: null, price: null, fees: null, amount: 50_000, currency: 'EUR', note: 'Top-up' },
      { date: '2026-08-15', type: 'buy', instrument: 'EQ-A', quantity: 10, price: 590, fees: 12.5, amount: -5912.5, currency: 'EUR', note: '' },
      { date: '2026-09-15', type: 'dividend', instrument: 'EQ-B', quantity: 0, price: null, fees: null, amount: 4000, currency: 'EUR', note: 'Dividend' },
    ],
    checks: [
      { id: 'stale_prices', status: 'breach', detail: 'priced with a quote older than 7 days', figures: { stale_after_days: 7, instruments: [{ instrument: 'EQ-B', price_date: '2026-09-01' }] } },
      { id: 'allocation.cash', status: 'pass', detail: 'Cash: 7.41 %', figures: { weight: 0.0740741, min: 0, max: 0.1 } },
      { id: 'allocation.equity', status: 'breach', detail: 'Equities: 92.59 %', figures: { weight: 0.9259259, min: 0.3, max: 0.7 } },
      { id: 'shortfall.0', status: 'breach', detail: 'average annual return over 1 year below -10.00 %', figures: { probability: 0.0912, limit: 0.05, quantile: -0.137 } },
      { id: 'shortfall.1', status: 'pass', detail: 'total return over 5 years below -5.00 %', figures: { probability: 0.04, limit: 0.1, quantile: 0.01 } },
      { id: 'max_position', status: 'pass', detail: 'largest position', figures: { limit: 0.6, largest: 0.5555556, over: [] } },
      { id: 'reconciliation', status: 'n/a', detail: 'the book has no holdings.csv' },
    ],
    notes: [],
    ...overrides,
  };
}
