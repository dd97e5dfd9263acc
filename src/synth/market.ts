/**
 * The simulated market of a generated book: business days, published prices
 * and exchange rates, and the income schedule (dividends and coupons), all
 * indexed by business day (index 0 = the first day of the history).
 */
import { type Day, dayOf, isoDate, parseIsoDate, ymd } from '../dates.ts';
import { CLASS_FACTORS, FIRM_CURRENCY, FX_PAIRS, type InstrumentSpec } from './house.ts';
import { businessDayOnOrAfter, businessDayOnOrBefore, businessDaysBetween, simulateFxPaths, simulatePricePaths } from './prices.ts';
import { createRandom } from './random.ts';

/** A payment per unit held, due on a business day. */
export interface IncomeEvent {
  readonly instrument: InstrumentSpec;
  readonly type: 'dividend' | 'interest';
  /** Cash per unit of quantity in the instrument's currency (per unit of nominal for a coupon). */
  readonly perUnit: number;
}

export interface Market {
  readonly days: Int32Array;
  readonly instruments: ReadonlyMap<string, InstrumentSpec>;
  /** Published prices per instrument by day index (NaN = no price that day). */
  readonly prices: ReadonlyMap<string, Float64Array>;
  /** Published rates per `EUR/XXX` pair by day index. */
  readonly fx: ReadonlyMap<string, Float64Array>;
  /** Index of a business day, or −1 for a weekend or a day outside the history. */
  indexOf(day: Day): number;
  /** The index of an ISO date that must be a business day inside the history. */
  indexOfDate(iso: string): number;
  /** The published price on that day, NaN when there is none. */
  price(instrument: string, dayIndex: number): number;
  /** The latest published price on or before that day (NaN before the first). */
  priceOnOrBefore(instrument: string, dayIndex: number): number;
  /** One unit of `from` in `to` on that day, through the firm's currency. */
  fxRate(from: string, to: string, dayIndex: number): number;
  /** Dividends and coupons due that day. */
  incomeOn(dayIndex: number): readonly IncomeEvent[];
  /** True on the last business day of a calendar quarter. */
  isQuarterEnd(dayIndex: number): boolean;
  /** Index of the last published price of an instrument. */
  lastPriceIndex(instrument: string): number;
}

function requireDate(iso: string, what: string): Day {
  const day = parseIsoDate(iso);
  if (day === null) throw new RangeError(`${what} must be an ISO date YYYY-MM-DD, got ${iso}`);
  return day;
}

/**
 * Simulates the market for `instruments` over the business days from
 * `firstDate` to `lastDate`, from the `prices` and `fx` streams of `seed`.
 */
export function simulateMarket(instruments: readonly InstrumentSpec[], firstDate: string, lastDate: string, seed: number): Market {
  const days = businessDaysBetween(requireDate(firstDate, 'history start'), requireDate(lastDate, 'history end'));
  if (days.length < 2) throw new RangeError(`the history from ${firstDate} to ${lastDate} has fewer than two business days`);
  const firstDay = days[0]!;
  const lastDay = days[days.length - 1]!;
  const indexByOffset = new Int32Array(lastDay - firstDay + 1).fill(-1);
  days.forEach((day, dayIndex) => {
    indexByOffset[day - firstDay] = dayIndex;
  });
  const indexOf = (day: Day): number => (day < firstDay || day > lastDay ? -1 : indexByOffset[day - firstDay]!);
  const indexOfDate = (iso: string): number => {
    const dayIndex = indexOf(requireDate(iso, 'a scenario date'));
    if (dayIndex < 0) throw new RangeError(`${iso} is not a business day inside the history ${isoDate(firstDay)} … ${isoDate(lastDay)}`);
    return dayIndex;
  };
  const windowIndex = (iso: string | undefined, fallback: number): number => {
    if (iso === undefined) return fallback;
    const day = requireDate(iso, 'a price window date');
    return indexOf(businessDayOnOrAfter(Math.max(day, firstDay)));
  };

  const byId = new Map(instruments.map((instrument) => [instrument.id, instrument]));
  if (byId.size !== instruments.length) throw new Error('Internal error: duplicate instrument id in a generated book; please report this');
  const prices = simulatePricePaths(
    createRandom(seed, 'prices'),
    days.length,
    CLASS_FACTORS,
    instruments.map((instrument) => ({
      id: instrument.id,
      factor: instrument.assetClass,
      factorLoading: instrument.price.factorLoading,
      annualDrift: instrument.price.annualDrift,
      annualVolatility: instrument.price.annualVolatility,
      startLevel: instrument.price.startLevel,
      dynamics: instrument.price.dynamics,
      decimals: instrument.price.decimals,
      firstIndex: windowIndex(instrument.price.firstDate, 0),
      lastIndex: instrument.price.lastDate === undefined ? days.length - 1 : indexOf(businessDayOnOrBefore(requireDate(instrument.price.lastDate, 'a price window date'))),
    })),
  );
  const fx = simulateFxPaths(createRandom(seed, 'fx'), days.length, FX_PAIRS);

  const carried = new Map<string, Float64Array>();
  const lastPrice = new Map<string, number>();
  for (const [id, series] of prices) {
    const carriedSeries = new Float64Array(series.length);
    let latest = Number.NaN;
    for (let dayIndex = 0; dayIndex < series.length; dayIndex++) {
      const value = series[dayIndex]!;
      if (!Number.isNaN(value)) {
        latest = value;
        lastPrice.set(id, dayIndex);
      }
      carriedSeries[dayIndex] = latest;
    }
    carried.set(id, carriedSeries);
  }

  const seriesOf = (table: ReadonlyMap<string, Float64Array>, id: string): Float64Array => {
    const series = table.get(id);
    if (!series) throw new Error(`Internal error: no simulated prices for ${id}; please report this`);
    return series;
  };
  const eurRate = (currency: string, dayIndex: number): number => {
    if (currency === FIRM_CURRENCY) return 1;
    const series = fx.get(`${FIRM_CURRENCY}/${currency}`);
    if (!series) throw new Error(`Internal error: no simulated rate for ${FIRM_CURRENCY}/${currency}; please report this`);
    return series[dayIndex]!;
  };

  const income = buildIncomeSchedule(instruments, days, indexOf, (id, dayIndex) => seriesOf(prices, id)[dayIndex]!);
  const quarterEnds = new Set<number>();
  for (let dayIndex = 0; dayIndex < days.length; dayIndex++) {
    const { month } = ymd(days[dayIndex]!);
    const next = days[dayIndex + 1];
    if (month % 3 === 0 && (next === undefined ? isQuarterEndBusinessDay(days[dayIndex]!) : ymd(next).month !== month)) quarterEnds.add(dayIndex);
  }

  return {
    days,
    instruments: byId,
    prices,
    fx,
    indexOf,
    indexOfDate,
    price: (id, dayIndex) => seriesOf(prices, id)[dayIndex]!,
    priceOnOrBefore: (id, dayIndex) => seriesOf(carried, id)[dayIndex]!,
    fxRate: (from, to, dayIndex) => (from === to ? 1 : eurRate(to, dayIndex) / eurRate(from, dayIndex)),
    incomeOn: (dayIndex) => income.get(dayIndex) ?? [],
    isQuarterEnd: (dayIndex) => quarterEnds.has(dayIndex),
    lastPriceIndex: (id) => lastPrice.get(id) ?? -1,
  };
}

/** True when `day` is the last business day of a quarter month. */
function isQuarterEndBusinessDay(day: Day): boolean {
  const { year, month } = ymd(day);
  if (month % 3 !== 0) return false;
  return businessDayOnOrBefore(dayOf(year, month + 1, 0)) === day;
}

/** Dividends on the first business day on or after the 15th of each pay month; coupons on the first business day on or after their anniversary. */
function buildIncomeSchedule(
  instruments: readonly InstrumentSpec[],
  days: Int32Array,
  indexOf: (day: Day) => number,
  publishedPrice: (id: string, dayIndex: number) => number,
): Map<number, IncomeEvent[]> {
  const schedule = new Map<number, IncomeEvent[]>();
  const add = (dayIndex: number, event: IncomeEvent): void => {
    const list = schedule.get(dayIndex);
    if (list) list.push(event);
    else schedule.set(dayIndex, [event]);
  };
  const firstYear = ymd(days[0]!).year;
  const lastYear = ymd(days[days.length - 1]!).year;
  for (const instrument of instruments) {
    const model = instrument.income;
    if (model === null || instrument.kind === 'index') continue;
    for (let year = firstYear; year <= lastYear; year++) {
      if (model.kind === 'dividend') {
        for (const month of model.months) {
          const dayIndex = indexOf(businessDayOnOrAfter(dayOf(year, month, 15)));
          if (dayIndex < 0) continue;
          const price = publishedPrice(instrument.id, dayIndex);
          if (Number.isNaN(price)) continue; // not listed yet, or suspended: nothing is declared
          const perUnit = Math.round((price * instrument.multiplier * model.annualYield * 10_000) / model.months.length) / 10_000;
          if (perUnit > 0) add(dayIndex, { instrument, type: 'dividend', perUnit });
        }
      } else {
        const dayIndex = indexOf(businessDayOnOrAfter(dayOf(year, model.month, Math.min(model.day, 28))));
        if (dayIndex >= 0) add(dayIndex, { instrument, type: 'interest', perUnit: model.rate });
      }
    }
  }
  return schedule;
}
