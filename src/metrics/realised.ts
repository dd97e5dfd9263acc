/**
 * Realised (ex post) risk of an account: volatility, tracking error,
 * information ratio, Sharpe ratio and maximum drawdown.
 *
 * Conventions: monthly simple returns as decimals over the same calendar
 * months for every series; sample standard deviations (n − 1) scaled by √12;
 * annualised returns Π(1 + r_m)^(12/n) − 1. Volatility, tracking error,
 * information ratio, Sharpe ratio and the annualised return refuse fewer than
 * 12 monthly returns (a shorter record is never annualised) with a MetricError
 * worded `<function> requires at least 12 monthly returns, got 7`.
 */
import { MetricError } from '../errors.ts';
import { linkReturns } from './returns.ts';
import { requireEqualLengths, requireFiniteObservations, sampleStandardDeviation } from './statistics.ts';

/** Fewest monthly returns from which a realised statistic is computed. */
export const MINIMUM_MONTHLY_RETURNS = 12;

const MONTHS_PER_YEAR = 12;

function requireMonthlyReturns(functionName: string, ...series: ReadonlyArray<ArrayLike<number>>): void {
  const first = series[0] as ArrayLike<number>;
  for (const monthly of series) {
    requireEqualLengths(functionName, first, monthly);
    requireFiniteObservations(functionName, monthly, MINIMUM_MONTHLY_RETURNS, 'monthly returns');
  }
}

function differences(minuend: ArrayLike<number>, subtrahend: ArrayLike<number>): Float64Array {
  const result = new Float64Array(minuend.length);
  for (let index = 0; index < minuend.length; index += 1) {
    result[index] = (minuend[index] as number) - (subtrahend[index] as number);
  }
  return result;
}

/**
 * Annualised volatility σ = s(r_m) · √12, s the sample standard deviation of
 * the monthly returns.
 * Convention: sample (n − 1), simple monthly returns, square-root-of-time
 * scaling (exact only for independent returns; the industry's convention).
 * Source: GIPS 2020 Standards for Firms, section 4 (three-year annualised
 * ex-post standard deviation from monthly returns); Bacon (2008), Practical
 * Portfolio Performance Measurement and Attribution, 2nd ed., chapter 4
 * (annualised standard deviation).
 */
export function annualisedVolatility(monthly: ArrayLike<number>): number {
  requireMonthlyReturns('annualisedVolatility', monthly);
  return sampleStandardDeviation(monthly) * Math.sqrt(MONTHS_PER_YEAR);
}

/**
 * Tracking error TE = s(r_p − r_b) · √12: the sample standard deviation of the
 * monthly arithmetic excess returns, annualised by √12.
 * Convention: sample (n − 1), same months for portfolio and benchmark.
 * Source: Bacon (2008), Practical Portfolio Performance Measurement and
 * Attribution, 2nd ed., chapter 4 (tracking error); Grinold & Kahn (2000),
 * Active Portfolio Management, 2nd ed., chapter 5 (active risk).
 */
export function trackingError(portfolioMonthly: ArrayLike<number>, benchmarkMonthly: ArrayLike<number>): number {
  requireMonthlyReturns('trackingError', portfolioMonthly, benchmarkMonthly);
  return sampleStandardDeviation(differences(portfolioMonthly, benchmarkMonthly)) * Math.sqrt(MONTHS_PER_YEAR);
}

/**
 * Annualised return from n monthly returns: Π(1 + r_m)^(12/n) − 1, computed
 * as expm1(12/n · log1p(R)) with R the chain-linked return.
 * Convention: geometric; n ≥ 12 (shorter records are not annualised). A
 * month of −100 % gives −1; a monthly return below −100 % is refused.
 * Source: Bacon (2008), Practical Portfolio Performance Measurement and
 * Attribution, 2nd ed., chapter 2 (annualised return); GIPS 2020 Standards for
 * Firms, section 4 (no annualisation below one year).
 */
export function annualisedFromMonthly(monthly: ArrayLike<number>): number {
  requireMonthlyReturns('annualisedFromMonthly', monthly);
  for (let index = 0; index < monthly.length; index += 1) {
    const value = monthly[index] as number;
    if (value < -1) {
      throw new MetricError(`annualisedFromMonthly requires monthly returns of at least −1, got ${value} at index ${index}`);
    }
  }
  return Math.expm1((MONTHS_PER_YEAR / monthly.length) * Math.log1p(linkReturns(monthly)));
}

/**
 * Information ratio IR = (annualised R_p − annualised R_b) / TE over the same
 * months, the numerator an arithmetic difference of geometric annualised
 * returns and TE the annualised tracking error. A zero tracking error
 * (portfolio identical to its benchmark) is refused.
 * Source: Goodwin (1998), "The Information Ratio", Financial Analysts Journal
 * 54(4); Bacon (2008), Practical Portfolio Performance Measurement and
 * Attribution, 2nd ed., chapter 4 (information ratio, annualised form).
 */
export function informationRatio(portfolioMonthly: ArrayLike<number>, benchmarkMonthly: ArrayLike<number>): number {
  requireMonthlyReturns('informationRatio', portfolioMonthly, benchmarkMonthly);
  const activeRisk = trackingError(portfolioMonthly, benchmarkMonthly);
  if (!(activeRisk > 0)) {
    throw new MetricError(`informationRatio requires a positive tracking error, got ${activeRisk}`);
  }
  return (annualisedFromMonthly(portfolioMonthly) - annualisedFromMonthly(benchmarkMonthly)) / activeRisk;
}

/**
 * Sharpe ratio S = (annualised R_p − annualised R_f) / σ over the same months,
 * R_f the risk-free series' monthly returns (from its month-end levels) and
 * σ the annualised volatility of the portfolio. A zero volatility is refused.
 * Source: Sharpe (1994), "The Sharpe Ratio", Journal of Portfolio Management
 * 21(1) (ex post form); Bacon (2008), Practical Portfolio Performance
 * Measurement and Attribution, 2nd ed., chapter 4 (annualised Sharpe ratio).
 */
export function sharpeRatio(portfolioMonthly: ArrayLike<number>, riskFreeMonthly: ArrayLike<number>): number {
  requireMonthlyReturns('sharpeRatio', portfolioMonthly, riskFreeMonthly);
  const volatility = annualisedVolatility(portfolioMonthly);
  if (!(volatility > 0)) {
    throw new MetricError(`sharpeRatio requires a positive volatility, got ${volatility}`);
  }
  return (annualisedFromMonthly(portfolioMonthly) - annualisedFromMonthly(riskFreeMonthly)) / volatility;
}

/**
 * Maximum drawdown: the largest peak-to-trough fall max_t (P_t − I_t) / P_t of
 * an index I, P_t = max_{s ≤ t} I_s its running peak, as a positive fraction
 * (0.145 = a fall of 14.5 %); 0 when the index never falls. The daily net TWR
 * index starts at 1; the measure does not depend on the starting level, which
 * must be positive. A negative index value (a loss beyond the capital) is refused.
 * Source: Magdon-Ismail & Atiya (2004), "Maximum drawdown", Risk 17(10);
 * Bacon (2008), Practical Portfolio Performance Measurement and Attribution,
 * 2nd ed., chapter 4 (drawdown).
 */
export function maxDrawdown(index: ArrayLike<number>): number {
  requireFiniteObservations('maxDrawdown', index, 1, 'index values');
  const start = index[0] as number;
  if (!(start > 0)) throw new MetricError(`maxDrawdown requires a positive starting index, got ${start}`);
  let peak = start;
  let deepest = 0;
  for (let position = 0; position < index.length; position += 1) {
    const level = index[position] as number;
    if (level < 0) {
      throw new MetricError(`maxDrawdown requires index values ≥ 0, got ${level} at index ${position}`);
    }
    if (level > peak) peak = level;
    else deepest = Math.max(deepest, (peak - level) / peak);
  }
  return deepest;
}
