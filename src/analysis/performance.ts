/**
 * Realised performance of one account: the windows' time- and money-weighted
 * returns against the composite benchmark, and the realised risk of the last
 * complete months (methods: "Time-weighted return" to "Realised risk").
 * Pure: reads the account's history and index levels, returns figures and
 * notes; a figure that cannot be computed is null with its reason in notes.
 */
import type { ReturnMethod } from '../book/types.ts';
import { type Day, isoDate, monthEndOffset } from '../dates.ts';
import type { AccountHistory } from '../ledger/ledger.ts';
import { compositeSubperiodReturns } from '../metrics/benchmark.ts';
import {
  annualisedVolatility,
  informationRatio,
  maxDrawdown,
  sharpeRatio,
  trackingError,
} from '../metrics/realised.ts';
import {
  annualiseReturn,
  dailyReturns,
  linkReturns,
  modifiedDietz,
  moneyWeightedReturn,
  moneyWeightedWindowReturn,
} from '../metrics/returns.ts';
import { type Period, WINDOW_IDS, type Window, type WindowId, windowsFor } from './periods.ts';

/** Largest number of trailing complete months used for realised risk. */
export const REALISED_RISK_MONTHS = 36;
/** Fewer complete months than this and realised risk is not shown. */
export const REALISED_RISK_MIN_MONTHS = 12;

export interface BenchmarkSource {
  readonly components: ReadonlyArray<{ readonly index: string; readonly weight: number }>;
  /** Latest level of an index on or before a day; null when there is none. */
  levelAt(index: string, day: Day): number | null;
}

export type RiskFreeSource =
  | { readonly kind: 'rate'; readonly annualRate: number }
  | { readonly kind: 'index'; readonly instrument: string; levelAt(day: Day): number | null };

export interface WindowFigures {
  readonly start: string;
  readonly end: string;
  readonly days: number;
  readonly annualised: boolean;
  readonly twr_net: number | null;
  readonly twr_gross: number | null;
  readonly mwr: number | null;
  readonly benchmark: number | null;
  readonly excess_arithmetic: number | null;
  readonly excess_geometric: number | null;
}

export interface RealisedRisk {
  readonly months: number;
  readonly first_month: string;
  readonly last_month: string;
  readonly volatility: number;
  readonly tracking_error: number | null;
  readonly information_ratio: number | null;
  readonly sharpe: number | null;
  readonly max_drawdown: number;
}

export interface MonthlyPoint {
  /** The month's end close, `YYYY-MM-DD`. */
  readonly month_end: string;
  readonly account: number;
  readonly benchmark: number | null;
}

export interface Performance {
  readonly returns: Record<WindowId, WindowFigures | null>;
  readonly realisedRisk: RealisedRisk | null;
  /** Since-inception growth of the net TWR and the benchmark at each month end (index 1 at inception). */
  readonly growth: readonly MonthlyPoint[];
  readonly notes: readonly string[];
}

interface ReturnSeries {
  /** Return over (startDay, endDay], both closes inside the history. */
  between(startDay: Day, endDay: Day): number;
}

/** The daily true TWRs of an account: r_d from closes and start-of-day flows. */
function dailyReturnsOf(history: AccountHistory, flows: Float64Array): Float64Array {
  return dailyReturns(history.closes[0]!, history.closes.subarray(1), flows.subarray(1));
}

/** Daily true TWR chain-linked over a window, from the account's daily returns. */
function dailyTwrSeries(history: AccountHistory, returns: Float64Array): ReturnSeries {
  return {
    between: (startDay, endDay) =>
      linkReturns(returns.subarray(startDay - history.startDay, endDay - history.startDay)),
  };
}

/** Modified Dietz per calendar month (first partial month from the window start), chain-linked. */
function modifiedDietzSeries(history: AccountHistory, flows: Float64Array): ReturnSeries {
  const subperiodReturn = (from: Day, to: Day): number => {
    const dated: { dayOfPeriod: number; amount: number }[] = [];
    for (let day = from + 1; day <= to; day++) {
      const amount = flows[day - history.startDay]!;
      if (amount !== 0) dated.push({ dayOfPeriod: day - from, amount });
    }
    return modifiedDietz(history.closes[from - history.startDay]!, history.closes[to - history.startDay]!, dated, to - from);
  };
  return {
    between: (startDay, endDay) => {
      const returns: number[] = [];
      let from = startDay;
      for (const boundary of [...monthEndsInside(startDay, endDay), endDay]) {
        returns.push(subperiodReturn(from, boundary));
        from = boundary;
      }
      return linkReturns(returns);
    },
  };
}

/** Month ends strictly after `startDay` and strictly before `endDay`. */
function monthEndsInside(startDay: Day, endDay: Day): Day[] {
  const ends: Day[] = [];
  for (let end = monthEndOffset(startDay + 1, 0); end < endDay; end = monthEndOffset(end, 1)) ends.push(end);
  return ends;
}

function describe(error: unknown): string {
  return error instanceof Error ? error.message : String(error);
}

/**
 * Money-weighted return of a window: −V_start at t = 0, −F_i at the close of
 * the day before each flow, +V_end at t = end − start (days); the annual rate
 * for windows of a year or more, the window's own rate below a year.
 */
function windowMoneyWeighted(history: AccountHistory, window: Window): number | null {
  const offset = (day: Day): number => day - history.startDay;
  const cashflows: { t: number; amount: number }[] = [{ t: 0, amount: -history.closes[offset(window.startDay)]! }];
  for (let day = window.startDay + 1; day <= window.endDay; day++) {
    const flow = history.flowsNetOfFees[offset(day)]!;
    if (flow !== 0) cashflows.push({ t: day - 1 - window.startDay, amount: -flow });
  }
  cashflows.push({ t: window.days, amount: history.closes[offset(window.endDay)]! });
  // Below a year the window's own rate is solved for directly: an annual rate
  // of a short window with a large move can overflow.
  return window.days >= 365 ? moneyWeightedReturn(cashflows, window.days) : moneyWeightedWindowReturn(cashflows, window.days);
}

function benchmarkBetween(source: BenchmarkSource, boundaries: readonly Day[]): number[] {
  const levels = source.components.map((component) =>
    boundaries.map((day) => {
      const level = source.levelAt(component.index, day);
      if (level === null) {
        throw new RangeError(`benchmark index ${component.index} has no level on or before ${isoDate(day)} in prices.csv`);
      }
      return level;
    }),
  );
  return compositeSubperiodReturns(source.components.map((component) => component.weight), levels);
}

function riskFreeMonthly(source: RiskFreeSource, monthEnds: readonly Day[]): number[] {
  if (source.kind === 'rate') return monthEnds.slice(1).map(() => (1 + source.annualRate) ** (1 / 12) - 1);
  const levels = monthEnds.map((day) => {
    const level = source.levelAt(day);
    if (level === null) throw new RangeError(`risk-free index ${source.instrument} has no level on or before ${isoDate(day)}`);
    return level;
  });
  return levels.slice(1).map((level, k) => level / levels[k]! - 1);
}

/** Growth of the net TWR index at each boundary: 1 at the since-inception start. */
function growthPoints(
  dailyIndex: Float64Array | null,
  history: AccountHistory,
  benchmark: BenchmarkSource,
  notes: string[],
): MonthlyPoint[] {
  if (!dailyIndex) return [];
  const boundaries = [history.startDay, ...monthEndsInside(history.startDay, history.endDay), history.endDay];
  let benchmarkIndex: number[] | null = null;
  try {
    const subperiods = benchmarkBetween(benchmark, boundaries);
    benchmarkIndex = [1];
    for (const subperiodReturn of subperiods) benchmarkIndex.push(benchmarkIndex[benchmarkIndex.length - 1]! * (1 + subperiodReturn));
  } catch (error) {
    notes.push(`The benchmark's growth since inception is unavailable: ${describe(error)}`);
  }
  return boundaries.map((day, k) => ({
    month_end: isoDate(day),
    account: dailyIndex[day - history.startDay]!,
    benchmark: benchmarkIndex ? benchmarkIndex[k]! : null,
  }));
}

/** Computes the performance figures of an account for a period. */
export function computePerformance(
  history: AccountHistory,
  period: Period,
  method: ReturnMethod,
  benchmark: BenchmarkSource,
  riskFreeSource: RiskFreeSource,
): Performance {
  const notes: string[] = [];
  const windows = windowsFor(period, history.startDay);

  // The daily net TWR index (1 at the since-inception start) serves the
  // maximum drawdown and the growth chart under either return method.
  // The net daily returns are computed once and serve both.
  let netDaily: Float64Array | Error;
  try {
    netDaily = dailyReturnsOf(history, history.flowsNetOfFees);
  } catch (error) {
    netDaily = error instanceof Error ? error : new Error(String(error));
  }
  let dailyIndex: Float64Array | null = null;
  if (netDaily instanceof Error) {
    notes.push(`The daily net return index is unavailable: ${describe(netDaily)}`);
  } else {
    dailyIndex = new Float64Array(netDaily.length + 1);
    dailyIndex[0] = 1;
    for (let i = 0; i < netDaily.length; i++) dailyIndex[i + 1] = dailyIndex[i]! * (1 + netDaily[i]!);
  }

  const series = (flows: Float64Array, label: string, daily: () => Float64Array): ReturnSeries | null => {
    try {
      return method === 'modified-dietz' ? modifiedDietzSeries(history, flows) : dailyTwrSeries(history, daily());
    } catch (error) {
      notes.push(`${label} time-weighted returns are unavailable: ${describe(error)}`);
      return null;
    }
  };
  const net = series(history.flowsNetOfFees, 'Net-of-fee', () => {
    if (netDaily instanceof Error) throw netDaily;
    return netDaily;
  });
  const gross = series(history.flowsGrossOfFees, 'Gross-of-fee', () => dailyReturnsOf(history, history.flowsGrossOfFees));

  const returns = {} as Record<WindowId, WindowFigures | null>;
  for (const id of WINDOW_IDS) {
    const window = windows[id];
    if (!window) {
      returns[id] = null;
      continue;
    }
    const annualise = (cumulative: number | null): number | null =>
      cumulative === null ? null : window.annualised ? annualiseReturn(cumulative, window.years) : cumulative;
    const attempt = (label: string, compute: () => number | null): number | null => {
      try {
        return compute();
      } catch (error) {
        notes.push(`${id}: the ${label} is unavailable: ${describe(error)}`);
        return null;
      }
    };
    const twrNet = attempt('net TWR', () => annualise(net ? net.between(window.startDay, window.endDay) : null));
    const twrGross = attempt('gross TWR', () => annualise(gross ? gross.between(window.startDay, window.endDay) : null));
    let mwrFailed = false;
    const mwr = attempt('money-weighted return', () => {
      const value = windowMoneyWeighted(history, window);
      mwrFailed = value === null;
      return value;
    });
    if (mwrFailed) notes.push(`${id}: the money-weighted return is unavailable: its cash flows have no unique rate (no root, or several)`);
    const benchmarkReturn = attempt('benchmark return', () =>
      annualise(linkReturns(benchmarkBetween(benchmark, [window.startDay, ...monthEndsInside(window.startDay, window.endDay), window.endDay]))),
    );
    const both = twrNet !== null && benchmarkReturn !== null;
    returns[id] = {
      start: isoDate(window.startDay),
      end: isoDate(window.endDay),
      days: window.days,
      annualised: window.annualised,
      twr_net: twrNet,
      twr_gross: twrGross,
      mwr,
      benchmark: benchmarkReturn,
      excess_arithmetic: both ? twrNet - benchmarkReturn : null,
      excess_geometric: both ? (1 + twrNet) / (1 + benchmarkReturn) - 1 : null,
    };
  }

  return {
    returns,
    realisedRisk: computeRealisedRisk(history, period, net, dailyIndex, benchmark, riskFreeSource, notes),
    growth: growthPoints(dailyIndex, history, benchmark, notes),
    notes,
  };
}

/**
 * Realised (ex-post) risk over the last complete calendar months, at most
 * REALISED_RISK_MONTHS, all since the since-inception start (a partial first
 * month is left out); null below REALISED_RISK_MIN_MONTHS.
 */
function computeRealisedRisk(
  history: AccountHistory,
  period: Period,
  net: ReturnSeries | null,
  dailyIndex: Float64Array | null,
  benchmark: BenchmarkSource,
  riskFreeSource: RiskFreeSource,
  notes: string[],
): RealisedRisk | null {
  // Month-end closes, oldest first; consecutive pairs bound the complete months.
  const monthEnds: Day[] = [];
  for (let back = 0; back <= REALISED_RISK_MONTHS; back++) {
    const day = monthEndOffset(period.endDay, -back);
    if (day < history.startDay) break;
    monthEnds.unshift(day);
  }
  const months = Math.max(monthEnds.length - 1, 0);
  if (months < REALISED_RISK_MIN_MONTHS) {
    notes.push(`Realised risk needs at least ${REALISED_RISK_MIN_MONTHS} complete months since inception; this account has ${months}`);
    return null;
  }
  if (!net || !dailyIndex) {
    notes.push('Realised risk is unavailable because the net time-weighted returns are');
    return null;
  }
  try {
    const accountMonthly = monthEnds.slice(1).map((end, k) => net.between(monthEnds[k]!, end));
    let benchmarkMonthly: number[] | null = null;
    try {
      benchmarkMonthly = benchmarkBetween(benchmark, monthEnds);
    } catch (error) {
      notes.push(`Realised tracking error and information ratio are unavailable: ${describe(error)}`);
    }
    let riskFreeMonthlyReturns: number[] | null = null;
    try {
      riskFreeMonthlyReturns = riskFreeMonthly(riskFreeSource, monthEnds);
    } catch (error) {
      notes.push(`The Sharpe ratio is unavailable: ${describe(error)}`);
    }
    return {
      months,
      first_month: isoDate(monthEnds[1]!).slice(0, 7),
      last_month: isoDate(monthEnds[months]!).slice(0, 7),
      volatility: annualisedVolatility(accountMonthly),
      tracking_error: benchmarkMonthly ? trackingError(accountMonthly, benchmarkMonthly) : null,
      information_ratio: benchmarkMonthly ? informationRatio(accountMonthly, benchmarkMonthly) : null,
      sharpe: riskFreeMonthlyReturns ? sharpeRatio(accountMonthly, riskFreeMonthlyReturns) : null,
      max_drawdown: maxDrawdown(dailyIndex),
    };
  } catch (error) {
    notes.push(`Realised risk is unavailable: ${describe(error)}`);
    return null;
  }
}
