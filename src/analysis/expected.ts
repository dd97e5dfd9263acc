/**
 * Expected (ex-ante) risk at the period end (methods: "Expected risk" to
 * "Optimal mix and efficient frontier").
 *
 * Estimation runs once per base currency for the whole run: monthly simple
 * returns in that currency for every instrument, index and cash currency of
 * the book over the trailing window, proxy-filled, then one covariance
 * matrix. Each account then only reads the rows it holds. The class-level
 * frontier and optimal mix run once per (mandate, base currency).
 */
import type { Account, Book, Mandate, ShortfallRule } from '../book/types.ts';
import { type Day, isoDate, monthEndOffset } from '../dates.ts';
import type { MarketData } from '../ledger/market.ts';
import { annualisedCovariance } from '../metrics/covariance.ts';
import { efficientFrontier, optimalMix } from '../metrics/optimise.ts';
import { portfolioRisk, riskContributions } from '../metrics/risk.ts';
import {
  lognormalShortfallProbability,
  shortfallHolds,
  shortfallProbability,
  shortfallQuantile,
} from '../metrics/shortfall.ts';
import { mean } from '../metrics/statistics.ts';
import { cashInstrumentId } from './account.ts';
import type { Check, HoldingFigure, OptimalMix, ShortfallFigure } from './figures.ts';
import type { ForwardLooking } from './forward.ts';
import type { Period } from './periods.ts';
import { formatWeight } from './wording.ts';

/** Points on the class-level efficient frontier (the contract asks for at least 30). */
export const FRONTIER_POINTS = 40;

/** One base currency's estimates: ids, μ and Σ over the whole universe. */
export interface CurrencyEstimates {
  readonly currency: string;
  readonly months: number;
  readonly firstMonthEnd: string;
  readonly lastMonthEnd: string;
  readonly index: ReadonlyMap<string, number>;
  readonly expectedReturns: readonly number[];
  readonly covariance: readonly (readonly number[])[];
  readonly shrinkageIntensity: number | null;
  /** Why an asset has no estimate (its row is absent from `index`). */
  readonly unavailable: ReadonlyMap<string, string>;
  /** How each asset's returns were obtained, for notes. */
  readonly proxied: ReadonlyMap<string, { readonly proxy: string; readonly months: number }>;
  /** Monthly base-currency returns of each asset (same order as `index`). */
  readonly monthly: ReadonlyMap<string, Float64Array>;
}

interface ClassLevelResult {
  readonly classes: readonly string[];
  readonly mix: OptimalMix;
  readonly frontier: ReadonlyArray<{ readonly volatility: number; readonly expected_return: number }>;
}

function describe(error: unknown): string {
  return error instanceof Error ? error.message : String(error);
}

/** Month-end closes of the trailing window, oldest first (window + 1 boundaries). */
export function estimationMonthEnds(periodEnd: Day, windowMonths: number): Day[] {
  const ends: Day[] = [];
  for (let back = windowMonths; back >= 0; back--) ends.push(monthEndOffset(periodEnd, -back));
  return ends;
}

/**
 * Monthly simple returns in base currency: (1 + r_local)(1 + r_fx) − 1 from
 * month-end prices (latest on or before each month end) and month-end FX.
 * Entry k is NaN when the instrument has no price on or before month end k − 1
 * (its history has not started: not one of its own months).
 */
function baseCurrencyReturns(market: MarketData, instrument: string, currency: string, base: string, monthEnds: readonly Day[]): Float64Array {
  const returns = new Float64Array(monthEnds.length - 1).fill(Number.NaN);
  const fx = market.fx(currency, base);
  for (let k = 1; k < monthEnds.length; k++) {
    const start = market.priceOn(instrument, monthEnds[k - 1]!);
    const end = market.priceOn(instrument, monthEnds[k]!);
    const fxStart = fx.rate(monthEnds[k - 1]!);
    const fxEnd = fx.rate(monthEnds[k]!);
    if (!start || !end || Number.isNaN(fxStart) || Number.isNaN(fxEnd)) continue;
    returns[k - 1] = (end.price / start.price) * (fxEnd / fxStart) - 1;
  }
  return returns;
}

/** Builds the estimates of one base currency over every asset of the book. */
export function estimateCurrency(book: Book, market: MarketData, period: Period, base: string): CurrencyEstimates {
  const { windowMonths, minMonths, shrinkage } = book.settings.estimation;
  const monthEnds = estimationMonthEnds(period.endDay, windowMonths);
  const months = monthEnds.length - 1;
  const raw = new Map<string, Float64Array>();
  const rawOf = (id: string): Float64Array => {
    let series = raw.get(id);
    if (!series) {
      const instrument = book.instruments.get(id)!;
      series = baseCurrencyReturns(market, id, instrument.currency, base, monthEnds);
      raw.set(id, series);
    }
    return series;
  };
  const unavailable = new Map<string, string>();
  const proxied = new Map<string, { proxy: string; months: number }>();
  const series = new Map<string, Float64Array>();

  const complete = (values: Float64Array): boolean => values.every((value) => !Number.isNaN(value));
  for (const instrument of book.instruments.values()) {
    const own = rawOf(instrument.id);
    const ownMonths = own.reduce((count, value) => count + (Number.isNaN(value) ? 0 : 1), 0);
    if (ownMonths === months) {
      series.set(instrument.id, own);
      continue;
    }
    const proxyId = instrument.proxy ?? book.settings.assetClasses.get(instrument.assetClass)!.proxy;
    const proxy = proxyId === instrument.id ? null : rawOf(proxyId);
    if (!proxy || !complete(proxy)) {
      unavailable.set(instrument.id, `${instrument.id} has ${ownMonths} of the ${months} months of prices the estimate needs and its proxy ${proxyId} cannot fill them; add prices back to ${isoDate(monthEnds[0]!)} for ${proxyId}, or lower estimation.window_months in book.yaml`);
      continue;
    }
    const filled = ownMonths < minMonths
      ? Float64Array.from(proxy)
      : Float64Array.from(own, (value, k) => (Number.isNaN(value) ? proxy[k]! : value));
    proxied.set(instrument.id, { proxy: proxyId, months: ownMonths < minMonths ? months : months - ownMonths });
    series.set(instrument.id, filled);
  }

  // Cash: base-currency cash earns the cash proxy's own returns; foreign cash
  // compounds them with its FX return against the base currency.
  const cashProxy = book.settings.assetClasses.get('cash')!.proxy;
  const cashProxyCurrency = book.instruments.get(cashProxy)!.currency;
  const cashLocal = baseCurrencyReturns(market, cashProxy, cashProxyCurrency, cashProxyCurrency, monthEnds);
  const currencies = new Set<string>([base]);
  for (const instrument of book.instruments.values()) currencies.add(instrument.currency);
  for (const rows of book.transactions.values()) for (const row of rows) currencies.add(row.currency);
  for (const currency of [...currencies].sort()) {
    const id = cashInstrumentId(currency);
    if (!complete(cashLocal)) {
      unavailable.set(id, `the cash proxy ${cashProxy} has no price on or before some month end of the ${months}-month estimation window, which starts at ${isoDate(monthEnds[0]!)}`);
      continue;
    }
    const fx = market.fx(currency, base);
    const returns = new Float64Array(months);
    let ok = true;
    for (let k = 1; k <= months && ok; k++) {
      const fxStart = fx.rate(monthEnds[k - 1]!);
      const fxEnd = fx.rate(monthEnds[k]!);
      if (Number.isNaN(fxStart) || Number.isNaN(fxEnd)) ok = false;
      else returns[k - 1] = (1 + cashLocal[k - 1]!) * (fxEnd / fxStart) - 1;
    }
    if (ok) series.set(id, returns);
    else unavailable.set(id, `no ${currency}/${base} rate at every month end of the estimation window`);
  }

  const ids = [...series.keys()];
  const cashLine = cashInstrumentId(base);
  if (!series.has(cashLine)) {
    throw new RangeError(`${unavailable.get(cashLine) ?? 'the cash proxy has no returns'}; the estimation needs ${months} months of prices before ${isoDate(period.endDay)} (estimation.window_months in book.yaml): add older prices, or lower window_months to the history the book has`);
  }
  const index = new Map(ids.map((id, position) => [id, position]));
  const matrix = Array.from({ length: months }, (_, k) => ids.map((id) => series.get(id)![k]!));
  const covariance = annualisedCovariance(matrix, shrinkage);

  const classReturn = new Map<string, number>();
  for (const [id, assetClass] of book.settings.assetClasses) {
    if (assetClass.expectedReturn !== null) classReturn.set(id, assetClass.expectedReturn);
    else {
      const proxySeries = id === 'cash' ? series.get(cashInstrumentId(base)) : series.get(assetClass.proxy);
      if (proxySeries) classReturn.set(id, 12 * mean(proxySeries));
    }
  }
  const expectedReturns = ids.map((id) => {
    const assetClass = id.startsWith('CASH:') ? 'cash' : book.instruments.get(id)!.assetClass;
    return classReturn.get(assetClass) ?? Number.NaN;
  });
  return {
    currency: base,
    months,
    firstMonthEnd: isoDate(monthEnds[0]!),
    lastMonthEnd: isoDate(monthEnds[months]!),
    index,
    expectedReturns,
    covariance: covariance.matrix,
    shrinkageIntensity: covariance.shrinkageIntensity,
    unavailable,
    proxied,
    monthly: series,
  };
}

/** Picks rows and columns of a matrix. */
function submatrix(matrix: readonly (readonly number[])[], positions: readonly number[]): number[][] {
  return positions.map((i) => positions.map((j) => matrix[i]![j]!));
}

/** The class-level universe of a mandate: each allocation class represented by its proxy (cash by base-currency cash). */
function classLevel(book: Book, estimates: CurrencyEstimates, mandate: Mandate): ClassLevelResult {
  const classes = [...mandate.allocation.keys()];
  const representative = classes.map((id) => (id === 'cash' ? cashInstrumentId(estimates.currency) : book.settings.assetClasses.get(id)!.proxy));
  for (const id of representative) {
    if (!estimates.monthly.has(id)) throw new RangeError(estimates.unavailable.get(id) ?? `no estimate for ${id}`);
  }
  // Σ of the proxies alone, estimated the same way as the instrument-level Σ.
  const matrix = Array.from({ length: estimates.months }, (_, k) => representative.map((id) => estimates.monthly.get(id)![k]!));
  const sigma = annualisedCovariance(matrix, book.settings.estimation.shrinkage).matrix;
  const mu = representative.map((id) => estimates.expectedReturns[estimates.index.get(id)!]!);
  const bounds = classes.map((id) => mandate.allocation.get(id)! as [number, number]);
  const mix = optimalMix({ mu, sigma, bounds, riskAversion: mandate.riskAversion, maxVolatility: mandate.maxVolatility, shortfall: [...mandate.shortfall] });
  const frontier = efficientFrontier(mu, sigma, bounds, FRONTIER_POINTS);
  return {
    classes,
    mix: {
      feasible: mix.feasible,
      weights: Object.fromEntries(classes.map((id, i) => [id, mix.weights[i]!])),
      expected_return: mix.expectedReturn,
      volatility: mix.volatility,
      utility: mix.utility,
    },
    frontier: frontier.map((point) => ({ volatility: point.volatility, expected_return: point.expectedReturn })),
  };
}

function ruleWords(rule: ShortfallRule): string {
  const years = rule.horizonYears === 1 ? '1 year' : `${rule.horizonYears} years`;
  const basis = rule.basis === 'average' ? 'average annual return' : rule.basis === 'cumulative' ? 'total return' : 'return in any single year';
  return `${basis} over ${years} below ${formatWeight(rule.threshold)}`;
}

/**
 * The per-account forward-looking figures. Estimates are computed lazily,
 * once per base currency and once per (mandate, base currency).
 */
export function createForwardEstimator(
  book: Book,
  market: MarketData,
  period: Period,
): (account: Account, mandate: Mandate, holdings: readonly HoldingFigure[]) => ForwardLooking {
  const byCurrency = new Map<string, CurrencyEstimates | Error>();
  const byMandate = new Map<string, ClassLevelResult | Error>();
  const estimatesFor = (currency: string): CurrencyEstimates | Error => {
    let entry = byCurrency.get(currency);
    if (!entry) {
      try {
        entry = estimateCurrency(book, market, period, currency);
      } catch (error) {
        entry = new Error(`the ${currency} estimates could not be computed: ${describe(error)}`);
      }
      byCurrency.set(currency, entry);
    }
    return entry;
  };
  const classLevelFor = (estimates: CurrencyEstimates, mandate: Mandate): ClassLevelResult | Error => {
    const key = `${mandate.id}\u0000${estimates.currency}`;
    let entry = byMandate.get(key);
    if (!entry) {
      try {
        entry = classLevel(book, estimates, mandate);
      } catch (error) {
        entry = new Error(`the optimal mix and frontier of mandate ${mandate.id} in ${estimates.currency} could not be computed: ${describe(error)}`);
      }
      byMandate.set(key, entry);
    }
    return entry;
  };

  return (account, mandate, holdings) => {
    const notes: string[] = [];
    const unavailableChecks = (reason: string): Check[] => [
      ...(mandate.maxVolatility !== null ? [{ id: 'max_volatility', status: 'n/a' as const, detail: reason }] : []),
      ...(mandate.maxTrackingError !== null ? [{ id: 'max_tracking_error', status: 'n/a' as const, detail: reason }] : []),
      ...mandate.shortfall.map((_rule, i) => ({ id: `shortfall.${i}`, status: 'n/a' as const, detail: reason })),
    ];
    const empty = (reason: string): ForwardLooking => ({
      expectedRisk: null, riskContributionByClass: null, shortfall: null, optimalMix: null, frontier: null, benchmarkRisk: null,
      checks: unavailableChecks(reason), notes: [...notes, `Expected risk is unavailable: ${reason}`],
    });

    const estimates = estimatesFor(account.baseCurrency);
    if (estimates instanceof Error) return empty(estimates.message);
    const classResult = classLevelFor(estimates, mandate);
    if (classResult instanceof Error) notes.push(`The optimal mix is unavailable: ${classResult.message}`);

    const total = holdings.reduce((sum, row) => sum + row.value, 0);
    if (!(total > 0)) return empty('the account has no positive value at the period end');
    const missing = [...holdings.map((row) => row.instrument), ...mandate.benchmark.map((c) => c.index)].filter((id) => !estimates.index.has(id));
    if (missing.length > 0) return empty(missing.map((id) => estimates.unavailable.get(id) ?? `no estimate for ${id}`).join('; '));

    // The quadratic forms run on the held assets and benchmark indices only.
    const assets = [...new Set([...holdings.map((row) => row.instrument), ...mandate.benchmark.map((c) => c.index)])];
    const positions = assets.map((id) => estimates.index.get(id)!);
    const sigma = submatrix(estimates.covariance, positions);
    const mu = positions.map((position) => estimates.expectedReturns[position]!);
    const weights = assets.map((id) => holdings.filter((row) => row.instrument === id).reduce((sum, row) => sum + row.value, 0) / total);
    const benchmarkWeights = assets.map((id) => mandate.benchmark.find((c) => c.index === id)?.weight ?? 0);
    const risk = portfolioRisk(weights, mu, sigma, benchmarkWeights);
    const contributions = riskContributions(weights, sigma);
    const byClass = new Map<string, number>();
    assets.forEach((id, i) => {
      const row = holdings.find((holding) => holding.instrument === id);
      if (row) byClass.set(row.asset_class, (byClass.get(row.asset_class) ?? 0) + contributions[i]!);
    });
    const benchmarkRisk = portfolioRisk(benchmarkWeights, mu, sigma, benchmarkWeights);
    for (const id of assets) {
      const proxy = estimates.proxied.get(id);
      if (proxy) notes.push(`${id}: ${proxy.months} of ${estimates.months} months of its estimation history come from its proxy ${proxy.proxy}`);
    }

    const shortfall: ShortfallFigure[] = mandate.shortfall.map((rule) => ({
      threshold: rule.threshold,
      horizon_years: rule.horizonYears,
      confidence: rule.confidence,
      basis: rule.basis,
      probability: shortfallProbability(rule, risk.expectedReturn, risk.volatility),
      probability_lognormal: lognormalShortfallProbability(rule, risk.expectedReturn, risk.volatility),
      quantile: shortfallQuantile(rule, risk.expectedReturn, risk.volatility),
      holds: shortfallHolds(rule, risk.expectedReturn, risk.volatility),
    }));
    const checks: Check[] = [];
    if (mandate.maxVolatility !== null) {
      checks.push({
        id: 'max_volatility',
        status: risk.volatility > mandate.maxVolatility ? 'breach' : 'pass',
        detail: `expected volatility ${formatWeight(risk.volatility)} a year, limit ${formatWeight(mandate.maxVolatility)}`,
        figures: { value: risk.volatility, limit: mandate.maxVolatility },
      });
    }
    if (mandate.maxTrackingError !== null) {
      checks.push({
        id: 'max_tracking_error',
        status: risk.trackingError > mandate.maxTrackingError ? 'breach' : 'pass',
        detail: `expected tracking error ${formatWeight(risk.trackingError)} a year, limit ${formatWeight(mandate.maxTrackingError)}`,
        figures: { value: risk.trackingError, limit: mandate.maxTrackingError },
      });
    }
    shortfall.forEach((figure, i) => {
      const rule = mandate.shortfall[i]!;
      checks.push({
        id: `shortfall.${i}`,
        status: figure.holds ? 'pass' : 'breach',
        detail: `${ruleWords(rule)}: probability ${formatWeight(figure.probability)}, limit ${formatWeight(1 - rule.confidence)}`,
        figures: { probability: figure.probability, limit: 1 - rule.confidence, quantile: figure.quantile },
      });
    });
    return {
      expectedRisk: {
        expected_return: risk.expectedReturn,
        volatility: risk.volatility,
        tracking_error: risk.trackingError,
        var95_1y: risk.var95,
        cvar95_1y: risk.cvar95,
      },
      riskContributionByClass: byClass,
      shortfall,
      optimalMix: classResult instanceof Error ? null : classResult.mix,
      frontier: classResult instanceof Error ? null : classResult.frontier,
      benchmarkRisk: { expectedReturn: benchmarkRisk.expectedReturn, volatility: benchmarkRisk.volatility },
      checks,
      notes,
    };
  };
}
