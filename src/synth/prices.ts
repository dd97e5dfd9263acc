/**
 * Synthetic daily market history: business days, price and index-level
 * paths from a factor model, and exchange-rate paths.
 *
 * Model. Every asset class has one market factor; the class factors share a
 * global factor. On each business day t the shocks are
 *
 *   g_t ~ N(0, 1)                                  the global factor
 *   f_c,t = κ_c g_t + √(1 − κ_c²) u_c,t            the factor of class c
 *   z_i,t = ρ_i f_c,t + √(1 − ρ_i²) ε_i,t          the shock of asset i in class c
 *
 * with u, ε independent N(0, 1), so each z_i,t is N(0, 1), two assets of one
 * class have correlation ρ_i ρ_j and of two classes ρ_i ρ_j κ_c κ_d (the
 * single-index structure of Sharpe 1963). The shock drives either a
 * geometric Brownian motion (equities, funds, total-return indices) or a
 * mean-reverting log price (bonds quoted near par). A year has
 * 365.25 × 5/7 ≈ 260.9 business days: only Saturdays and Sundays are closed,
 * there are no holidays.
 */
import { type Day } from '../dates.ts';
import type { Random } from './random.ts';

/** Business days per year when only weekends are closed: 365.25 × 5 / 7. */
export const BUSINESS_DAYS_PER_YEAR = (365.25 * 5) / 7;

/** True for Monday to Friday. Day 0 (1970-01-01) was a Thursday. */
export function isBusinessDay(day: Day): boolean {
  const weekday = (((day + 4) % 7) + 7) % 7; // 0 = Sunday
  return weekday !== 0 && weekday !== 6;
}

/** Every Monday-to-Friday day from `first` to `last`, both included, ascending. */
export function businessDaysBetween(first: Day, last: Day): Int32Array {
  const days: number[] = [];
  for (let day = first; day <= last; day++) if (isBusinessDay(day)) days.push(day);
  return Int32Array.from(days);
}

/** The latest business day on or before `day`. */
export function businessDayOnOrBefore(day: Day): Day {
  let result = day;
  while (!isBusinessDay(result)) result--;
  return result;
}

/** The earliest business day on or after `day`. */
export function businessDayOnOrAfter(day: Day): Day {
  let result = day;
  while (!isBusinessDay(result)) result++;
  return result;
}

/**
 * One step of geometric Brownian motion (exact discretisation).
 * S_{t+Δt} = S_t · exp((μ − σ²/2)·Δt + σ·√Δt·z), with μ the annual drift
 * (expected simple growth rate, continuously compounded: E[S_{t+1y}] = S_t e^μ),
 * σ the annual volatility of log returns, Δt in years and z a standard normal shock.
 * Source: Samuelson (1965), "Rational Theory of Warrant Pricing", Industrial
 * Management Review 6(2); the exact solution as in Glasserman (2003), Monte
 * Carlo Methods in Financial Engineering, eq. 3.2.
 */
export function gbmStep(level: number, annualDrift: number, annualVolatility: number, yearFraction: number, shock: number): number {
  return level * Math.exp((annualDrift - 0.5 * annualVolatility * annualVolatility) * yearFraction + annualVolatility * Math.sqrt(yearFraction) * shock);
}

/**
 * One step of a mean-reverting (Ornstein–Uhlenbeck) log price around an
 * anchor level, for bonds quoted in percent of nominal that stay near par.
 * With x = ln(P / anchor): x_{t+Δt} = x_t·e^(−θΔt) + σ·√((1 − e^(−2θΔt)) / (2θ))·z,
 * the exact transition of dx = −θx dt + σ dW (θ > 0 the speed of reversion
 * per year, σ the annual volatility of x, z a standard normal shock).
 * Source: Uhlenbeck & Ornstein (1930), "On the Theory of the Brownian
 * Motion", Physical Review 36, 823; exact discretisation as in Glasserman
 * (2003), eq. 3.46 (the Vasicek model's transition).
 */
export function meanRevertingStep(
  level: number,
  anchor: number,
  reversionSpeed: number,
  annualVolatility: number,
  yearFraction: number,
  shock: number,
): number {
  if (!(reversionSpeed > 0)) throw new RangeError(`meanRevertingStep requires a positive reversion speed, got ${reversionSpeed}`);
  const decay = Math.exp(-reversionSpeed * yearFraction);
  const deviation = Math.log(level / anchor) * decay;
  const stepVolatility = annualVolatility * Math.sqrt((1 - decay * decay) / (2 * reversionSpeed));
  return anchor * Math.exp(deviation + stepVolatility * shock);
}

/**
 * Rounds half away from zero to `decimals` places, as the decimal written
 * would round: values such as 1.005, stored in binary just below the tie,
 * still round up to 1.01. The fast path scales and rounds; only values within
 * 1e-9 of a tie take the exact route through the shortest decimal string.
 * Convention: roundTiesToAway of IEEE 754-2008 (section 4.3.1), applied to
 * the shortest decimal that reads back as the value.
 */
export function roundTo(value: number, decimals: number): number {
  if (!Number.isFinite(value)) return value;
  const factor = 10 ** decimals;
  const magnitude = Math.abs(value);
  const scaled = magnitude * factor;
  const fraction = scaled - Math.floor(scaled);
  let rounded: number;
  if (Math.abs(fraction - 0.5) > 1e-9 || scaled >= 2 ** 52) {
    rounded = Math.round(scaled);
  } else {
    const text = String(magnitude);
    // Exponent notation (below 1e-6) cannot take a second exponent.
    rounded = Math.round(text.includes('e') ? scaled : Number(`${text}e${decimals}`));
  }
  return (value < 0 ? -rounded : rounded) / factor;
}

/** A class factor: how strongly it moves with the global factor. */
export interface FactorSpec {
  readonly id: string;
  /** κ: correlation of the class factor with the global factor, in [−1, 1]. */
  readonly globalLoading: number;
}

/** How one price series moves. */
export type PathDynamics =
  | { readonly kind: 'gbm' }
  | { readonly kind: 'mean-reverting'; readonly anchor: number; readonly reversionSpeed: number };

export interface PathSpec {
  readonly id: string;
  /** Id of its class factor (a FactorSpec id). */
  readonly factor: string;
  /** ρ: correlation of its shocks with its class factor, in [0, 1]. */
  readonly factorLoading: number;
  /** μ, annual (GBM only). */
  readonly annualDrift: number;
  /** σ, annual. */
  readonly annualVolatility: number;
  readonly startLevel: number;
  readonly dynamics: PathDynamics;
  /** Decimal places of the published price. */
  readonly decimals: number;
  /** Index of the first business day with a published price (listing); default 0. */
  readonly firstIndex?: number;
  /** Index of the last business day with a published price (e.g. a suspension); default the last day. */
  readonly lastIndex?: number;
}

/**
 * Simulates price paths over `dayCount` consecutive business days with the
 * factor model of this module. Returns, per path id, the published price of
 * each day (rounded to its decimals), NaN outside [firstIndex, lastIndex].
 * The first day's price is the start level; every path is simulated over
 * the whole range whatever its publication window, so a listing date or a
 * suspension does not change any other series.
 */
export function simulatePricePaths(
  random: Random,
  dayCount: number,
  factors: readonly FactorSpec[],
  paths: readonly PathSpec[],
): Map<string, Float64Array> {
  const factorIndex = new Map(factors.map((factor, index) => [factor.id, index]));
  for (const factor of factors) {
    if (!(Math.abs(factor.globalLoading) <= 1)) throw new RangeError(`factor ${factor.id}: global loading must be in [-1, 1], got ${factor.globalLoading}`);
  }
  const pathFactor = paths.map((path) => {
    const index = factorIndex.get(path.factor);
    if (index === undefined) throw new RangeError(`price path ${path.id} names an unknown factor ${path.factor}`);
    if (!(path.factorLoading >= 0 && path.factorLoading <= 1)) throw new RangeError(`price path ${path.id}: factor loading must be in [0, 1], got ${path.factorLoading}`);
    if (!(path.startLevel > 0)) throw new RangeError(`price path ${path.id}: start level must be positive, got ${path.startLevel}`);
    return index;
  });
  const yearFraction = 1 / BUSINESS_DAYS_PER_YEAR;
  const levels = Float64Array.from(paths, (path) => path.startLevel);
  const published = paths.map(() => new Float64Array(dayCount).fill(Number.NaN));
  const factorShocks = new Float64Array(factors.length);
  const idiosyncraticWeights = paths.map((path) => Math.sqrt(1 - path.factorLoading * path.factorLoading));
  const classWeights = factors.map((factor) => Math.sqrt(1 - factor.globalLoading * factor.globalLoading));

  for (let dayIndex = 0; dayIndex < dayCount; dayIndex++) {
    if (dayIndex > 0) {
      const globalShock = random.normal();
      for (let index = 0; index < factors.length; index++) {
        factorShocks[index] = factors[index]!.globalLoading * globalShock + classWeights[index]! * random.normal();
      }
      for (let index = 0; index < paths.length; index++) {
        const path = paths[index]!;
        const shock = path.factorLoading * factorShocks[pathFactor[index]!]! + idiosyncraticWeights[index]! * random.normal();
        const dynamics = path.dynamics;
        levels[index] =
          dynamics.kind === 'gbm'
            ? gbmStep(levels[index]!, path.annualDrift, path.annualVolatility, yearFraction, shock)
            : meanRevertingStep(levels[index]!, dynamics.anchor, dynamics.reversionSpeed, path.annualVolatility, yearFraction, shock);
      }
    }
    for (let index = 0; index < paths.length; index++) {
      const path = paths[index]!;
      if (dayIndex >= (path.firstIndex ?? 0) && dayIndex <= (path.lastIndex ?? dayCount - 1)) {
        published[index]![dayIndex] = roundTo(levels[index]!, path.decimals);
      }
    }
  }
  return new Map(paths.map((path, index) => [path.id, published[index]!]));
}

export interface FxPathSpec {
  /** `FROM/TO`: one unit of FROM is worth the rate in TO. */
  readonly pair: string;
  readonly startRate: number;
  readonly annualVolatility: number;
  readonly decimals: number;
}

/**
 * Exchange-rate paths: driftless geometric random walks,
 * X_{t+Δt} = X_t · exp(σ·√Δt·z − σ²Δt/2) (GBM with μ = 0, see gbmStep),
 * independent across pairs, one rate per business day, rounded to the
 * pair's decimals.
 */
export function simulateFxPaths(random: Random, dayCount: number, pairs: readonly FxPathSpec[]): Map<string, Float64Array> {
  const yearFraction = 1 / BUSINESS_DAYS_PER_YEAR;
  const result = new Map<string, Float64Array>();
  for (const pair of pairs) {
    if (!(pair.startRate > 0)) throw new RangeError(`fx path ${pair.pair}: start rate must be positive, got ${pair.startRate}`);
    const rates = new Float64Array(dayCount);
    let rate = pair.startRate;
    for (let dayIndex = 0; dayIndex < dayCount; dayIndex++) {
      if (dayIndex > 0) rate = gbmStep(rate, 0, pair.annualVolatility, yearFraction, random.normal());
      rates[dayIndex] = roundTo(rate, pair.decimals);
    }
    result.set(pair.pair, rates);
  }
  return result;
}
