import { describe, expect, it } from 'vitest';
import { dayOf, isoDate, parseIsoDate } from '../../src/dates.ts';
import {
  BUSINESS_DAYS_PER_YEAR,
  businessDayOnOrAfter,
  businessDayOnOrBefore,
  businessDaysBetween,
  gbmStep,
  isBusinessDay,
  meanRevertingStep,
  roundTo,
  simulateFxPaths,
  simulatePricePaths,
} from '../../src/synth/prices.ts';
import { createRandom } from '../../src/synth/random.ts';

function logReturns(levels: Float64Array): number[] {
  const result: number[] = [];
  for (let index = 1; index < levels.length; index++) result.push(Math.log(levels[index]! / levels[index - 1]!));
  return result;
}

function mean(values: readonly number[]): number {
  return values.reduce((sum, value) => sum + value, 0) / values.length;
}

function sampleStandardDeviation(values: readonly number[]): number {
  const centre = mean(values);
  return Math.sqrt(values.reduce((sum, value) => sum + (value - centre) ** 2, 0) / (values.length - 1));
}

function correlation(left: readonly number[], right: readonly number[]): number {
  const leftMean = mean(left);
  const rightMean = mean(right);
  let covariance = 0;
  let leftSquares = 0;
  let rightSquares = 0;
  left.forEach((value, index) => {
    const a = value - leftMean;
    const b = right[index]! - rightMean;
    covariance += a * b;
    leftSquares += a * a;
    rightSquares += b * b;
  });
  return covariance / Math.sqrt(leftSquares * rightSquares);
}

describe('business days', () => {
  it('are Monday to Friday', () => {
    // 2026-09-26 is a Saturday, 2026-09-27 a Sunday, 2026-09-28 a Monday (calendar).
    expect(isBusinessDay(parseIsoDate('2026-09-25')!)).toBe(true);
    expect(isBusinessDay(parseIsoDate('2026-09-26')!)).toBe(false);
    expect(isBusinessDay(parseIsoDate('2026-09-27')!)).toBe(false);
    expect(isBusinessDay(parseIsoDate('2026-09-28')!)).toBe(true);
    expect(isoDate(businessDayOnOrBefore(parseIsoDate('2024-03-31')!))).toBe('2024-03-29');
    expect(isoDate(businessDayOnOrAfter(parseIsoDate('2024-03-30')!))).toBe('2024-04-01');
  });

  it('count as NumPy counts weekdays', () => {
    // python3 -c "import numpy as np; print(np.busday_count('2024-01-01','2025-01-01'))"  -> 262
    expect(businessDaysBetween(dayOf(2024, 1, 1), dayOf(2024, 12, 31)).length).toBe(262);
    // python3 -c "import numpy as np; print(np.busday_count('2020-07-01','2026-10-01'))"  -> 1631
    expect(businessDaysBetween(dayOf(2020, 7, 1), dayOf(2026, 9, 30)).length).toBe(1631);
    // 365.25 × 5 / 7 (average weekdays a year)
    expect(BUSINESS_DAYS_PER_YEAR).toBeCloseTo(260.89285714285717, 12);
  });
});

describe('price steps', () => {
  it('gbmStep matches the exact GBM transition computed independently', () => {
    // python3 -c "import math; dt=1/(365.25*5/7); print(repr(100*math.exp((0.07-0.5*0.15**2)*dt+0.15*math.sqrt(dt)*1.2)))"
    //   -> 101.14340710462098
    expect(gbmStep(100, 0.07, 0.15, 1 / BUSINESS_DAYS_PER_YEAR, 1.2)).toBeCloseTo(101.14340710462098, 10);
  });

  it('meanRevertingStep matches the exact Ornstein–Uhlenbeck transition computed independently', () => {
    // python3 -c "import math; dt=1/(365.25*5/7); x=math.log(1.03); d=math.exp(-1.5*dt);
    //   sd=0.05*math.sqrt((1-d*d)/(2*1.5)); print(repr(100*math.exp(x*d+sd*(-0.8))))"  -> 102.72856144178849
    expect(meanRevertingStep(103, 100, 1.5, 0.05, 1 / BUSINESS_DAYS_PER_YEAR, -0.8)).toBeCloseTo(102.72856144178849, 10);
    expect(() => meanRevertingStep(100, 100, 0, 0.05, 0.01, 0)).toThrow('meanRevertingStep requires a positive reversion speed, got 0');
  });

  it('roundTo rounds half away from zero as the decimal is written', () => {
    // python3: Decimal('1.005').quantize(Decimal('0.01'), ROUND_HALF_UP) -> 1.01; '2.675' -> 2.68; '-1.005' -> -1.01;
    //          Decimal('1234.56785').quantize(Decimal('0.0001'), ROUND_HALF_UP) -> 1234.5679
    expect(roundTo(1.005, 2)).toBe(1.01);
    expect(roundTo(2.675, 2)).toBe(2.68);
    expect(roundTo(-1.005, 2)).toBe(-1.01);
    expect(roundTo(1234.56785, 4)).toBe(1234.5679);
    expect(roundTo(0.1 + 0.2, 6)).toBe(0.3);
  });
});

describe('simulatePricePaths', () => {
  const years = 20;
  const dayCount = Math.round(years * BUSINESS_DAYS_PER_YEAR);
  const factors = [
    { id: 'equity', globalLoading: 0.9 },
    { id: 'property', globalLoading: 0.6 },
    { id: 'bonds', globalLoading: -0.2 },
  ];
  const gbm = { kind: 'gbm' } as const;
  const paths = simulatePricePaths(createRandom(2024, 'price-test'), dayCount, factors, [
    { id: 'EQ-A', factor: 'equity', factorLoading: 0.8, annualDrift: 0.07, annualVolatility: 0.2, startLevel: 100, dynamics: gbm, decimals: 8 },
    { id: 'EQ-B', factor: 'equity', factorLoading: 0.6, annualDrift: 0.07, annualVolatility: 0.3, startLevel: 50, dynamics: gbm, decimals: 8 },
    { id: 'EQ-INDEX', factor: 'equity', factorLoading: 1, annualDrift: 0.07, annualVolatility: 0.15, startLevel: 1000, dynamics: gbm, decimals: 8 },
    { id: 'PROP-INDEX', factor: 'property', factorLoading: 1, annualDrift: 0.05, annualVolatility: 0.13, startLevel: 300, dynamics: gbm, decimals: 8 },
    { id: 'CASH', factor: 'bonds', factorLoading: 0, annualDrift: 0.03, annualVolatility: 0.01, startLevel: 100, dynamics: gbm, decimals: 8 },
    {
      id: 'BOND', factor: 'bonds', factorLoading: 0.6, annualDrift: 0, annualVolatility: 0.05, startLevel: 101, decimals: 8,
      dynamics: { kind: 'mean-reverting', anchor: 100, reversionSpeed: 1.5 },
    },
    {
      id: 'LISTED', factor: 'equity', factorLoading: 0.7, annualDrift: 0.07, annualVolatility: 0.2, startLevel: 20, dynamics: gbm, decimals: 2,
      firstIndex: 100, lastIndex: 200,
    },
  ]);
  const returns = (id: string): number[] => logReturns(paths.get(id)!);

  it('gives each path its annual volatility (sample sd of daily log returns × √260.9, within 4 %)', () => {
    // Standard error of a sample sd is about σ/√(2n) ≈ 1 % of σ for n ≈ 5,200 days.
    for (const [id, volatility] of [['EQ-A', 0.2], ['EQ-B', 0.3], ['EQ-INDEX', 0.15], ['CASH', 0.01]] as const) {
      const annualised = sampleStandardDeviation(returns(id)) * Math.sqrt(BUSINESS_DAYS_PER_YEAR);
      expect(Math.abs(annualised / volatility - 1)).toBeLessThan(0.04);
    }
  });

  it('gives the single-index correlations ρᵢρⱼ within a class and ρᵢρⱼκ_cκ_d across classes (Sharpe 1963)', () => {
    // Standard error of a correlation is about (1 − r²)/√n ≈ 0.01 here; tolerance 0.04.
    expect(Math.abs(correlation(returns('EQ-A'), returns('EQ-B')) - 0.48)).toBeLessThan(0.04);
    expect(Math.abs(correlation(returns('EQ-A'), returns('EQ-INDEX')) - 0.8)).toBeLessThan(0.04);
    expect(Math.abs(correlation(returns('EQ-INDEX'), returns('PROP-INDEX')) - 0.9 * 0.6)).toBeLessThan(0.04);
    expect(Math.abs(correlation(returns('EQ-INDEX'), returns('CASH')))).toBeLessThan(0.04);
  });

  it('grows a low-volatility path at its drift (mean log return ≈ μ − σ²/2 a year)', () => {
    // Standard error of the annual mean log return: σ/√years = 0.01/√20 ≈ 0.0022.
    const annualMean = mean(returns('CASH')) * BUSINESS_DAYS_PER_YEAR;
    expect(Math.abs(annualMean - (0.03 - 0.5 * 0.01 ** 2))).toBeLessThan(0.01);
  });

  it('keeps a mean-reverting bond near its anchor with the stationary spread σ/√(2θ)', () => {
    const deviations = Array.from(paths.get('BOND')!, (level) => Math.log(level / 100));
    // σ/√(2θ) = 0.05/√3 = 0.02887; the path is autocorrelated (about 2θ·T = 60 independent stretches), so allow 25 %.
    expect(Math.abs(sampleStandardDeviation(deviations) / (0.05 / Math.sqrt(3)) - 1)).toBeLessThan(0.25);
    expect(Math.abs(mean(deviations))).toBeLessThan(0.02);
  });

  it('publishes only inside the listing window, rounded to the given decimals', () => {
    const listed = paths.get('LISTED')!;
    expect(Number.isNaN(listed[99]!)).toBe(true);
    expect(Number.isNaN(listed[201]!)).toBe(true);
    for (let index = 100; index <= 200; index++) expect(Math.round(listed[index]! * 100) / 100).toBe(listed[index]);
  });

  it('is deterministic and independent of the listing window of other paths', () => {
    const spec = { id: 'X', factor: 'equity', factorLoading: 0.5, annualDrift: 0.05, annualVolatility: 0.2, startLevel: 10, dynamics: gbm, decimals: 4 };
    const full = simulatePricePaths(createRandom(9, 'p'), 300, factors, [spec, { ...spec, id: 'Y' }]);
    const windowed = simulatePricePaths(createRandom(9, 'p'), 300, factors, [spec, { ...spec, id: 'Y', firstIndex: 150 }]);
    expect(Array.from(windowed.get('X')!)).toEqual(Array.from(full.get('X')!));
    expect(() => simulatePricePaths(createRandom(9, 'p'), 10, factors, [{ ...spec, factor: 'none' }])).toThrow('price path X names an unknown factor none');
  });
});

describe('simulateFxPaths', () => {
  it('starts at the start rate and has the given volatility', () => {
    const dayCount = Math.round(20 * BUSINESS_DAYS_PER_YEAR);
    const fx = simulateFxPaths(createRandom(4, 'fx-test'), dayCount, [{ pair: 'EUR/USD', startRate: 1.12, annualVolatility: 0.07, decimals: 6 }]);
    const rates = fx.get('EUR/USD')!;
    expect(rates[0]).toBe(1.12);
    const annualised = sampleStandardDeviation(logReturns(rates)) * Math.sqrt(BUSINESS_DAYS_PER_YEAR);
    expect(Math.abs(annualised / 0.07 - 1)).toBeLessThan(0.05);
  });
});
