import { describe, expect, it } from 'vitest';
import { MetricError } from '../../src/errors.ts';
import {
  annualisedFromMonthly,
  annualisedVolatility,
  informationRatio,
  maxDrawdown,
  sharpeRatio,
  trackingError,
} from '../../src/metrics/realised.ts';

/** |actual − expected| ≤ tolerance · |expected|. */
function expectRelativelyClose(actual: number, expected: number, tolerance: number): void {
  expect(Math.abs(actual - expected), `actual ${actual}, expected ${expected}`).toBeLessThanOrEqual(
    tolerance * Math.abs(expected),
  );
}

// Fifteen months of portfolio, benchmark and risk-free monthly returns (made up).
const PORTFOLIO = [0.021, -0.013, 0.034, 0.008, -0.027, 0.015, 0.042, -0.006, 0.011, -0.019, 0.025, 0.003, 0.017, -0.032, 0.028];
const BENCHMARK = [0.018, -0.01, 0.029, 0.011, -0.022, 0.012, 0.035, -0.004, 0.009, -0.015, 0.021, 0.006, 0.014, -0.026, 0.023];
const RISK_FREE = [
  0.0021, 0.0021, 0.0022, 0.0022, 0.0023, 0.0023, 0.0024, 0.0024, 0.0025, 0.0025, 0.0026, 0.0026, 0.0027, 0.0027, 0.0028,
];

/*
 * Reference values: NumPy 2.4.6, with the definitions of methods.md (realised risk):
 *
 *   python3 - <<'EOF'
 *   import numpy as np
 *   p = np.array([0.021, -0.013, 0.034, 0.008, -0.027, 0.015, 0.042, -0.006, 0.011, -0.019, 0.025, 0.003, 0.017, -0.032, 0.028])
 *   b = np.array([0.018, -0.010, 0.029, 0.011, -0.022, 0.012, 0.035, -0.004, 0.009, -0.015, 0.021, 0.006, 0.014, -0.026, 0.023])
 *   f = np.array([0.0021, 0.0021, 0.0022, 0.0022, 0.0023, 0.0023, 0.0024, 0.0024, 0.0025, 0.0025, 0.0026, 0.0026, 0.0027, 0.0027, 0.0028])
 *   n = len(p)
 *   ann = lambda r: np.prod(1 + r) ** (12 / n) - 1
 *   vol = np.std(p, ddof=1) * np.sqrt(12)
 *   te = np.std(p - b, ddof=1) * np.sqrt(12)
 *   print('vol', repr(float(vol)))
 *   print('te', repr(float(te)))
 *   print('annp', repr(float(ann(p))), 'annb', repr(float(ann(b))), 'annf', repr(float(ann(f))))
 *   print('ir', repr(float((ann(p) - ann(b)) / te)))
 *   print('sharpe', repr(float((ann(p) - ann(f)) / vol)))
 *   idx = np.concatenate([[1.0], np.cumprod(1 + p)])
 *   print('mdd', repr(float(np.max(1 - idx / np.maximum.accumulate(idx)))))
 *   EOF
 *
 * printed:
 *   vol 0.07764608351819353
 *   te 0.014685269587486055
 *   annp 0.08600811442110445 annb 0.0818169428984763 annf 0.029511525259471538
 *   ir 0.2853996991788038
 *   sharpe 0.7276167270998929
 *   mdd 0.03199999999999992
 * Tolerance: 1e-12 relative.
 */
describe('realised risk against NumPy', () => {
  it('annualised volatility = np.std(p, ddof=1) × √12', () => {
    expectRelativelyClose(annualisedVolatility(PORTFOLIO), 0.07764608351819353, 1e-12);
  });

  it('tracking error = np.std(p − b, ddof=1) × √12', () => {
    expectRelativelyClose(trackingError(PORTFOLIO, BENCHMARK), 0.014685269587486055, 1e-12);
  });

  it('annualised return = Π(1 + r)^(12/n) − 1', () => {
    expectRelativelyClose(annualisedFromMonthly(PORTFOLIO), 0.08600811442110445, 1e-12);
    expectRelativelyClose(annualisedFromMonthly(BENCHMARK), 0.0818169428984763, 1e-12);
    expectRelativelyClose(annualisedFromMonthly(RISK_FREE), 0.029511525259471538, 1e-12);
  });

  it('information ratio = (annualised R_p − annualised R_b) / TE', () => {
    expectRelativelyClose(informationRatio(PORTFOLIO, BENCHMARK), 0.2853996991788038, 1e-12);
  });

  it('Sharpe ratio = (annualised R_p − annualised R_f) / volatility', () => {
    expectRelativelyClose(sharpeRatio(PORTFOLIO, RISK_FREE), 0.7276167270998929, 1e-12);
  });

  it('maximum drawdown of the chain-linked index matches NumPy', () => {
    const index = [1];
    for (const monthly of PORTFOLIO) index.push((index[index.length - 1] as number) * (1 + monthly));
    expectRelativelyClose(maxDrawdown(index), 0.03199999999999992, 1e-12);
  });
});

describe('maxDrawdown worked by hand', () => {
  it('finds the deepest of several falls', () => {
    // Index 1 → 1.2 → 0.96 → 1.08 → 1.5 → 1.125 → 1.35:
    //   fall from the peak 1.2 to 0.96:  (1.2 − 0.96)/1.2  = 0.24/1.2  = 0.20
    //   fall from the peak 1.5 to 1.125: (1.5 − 1.125)/1.5 = 0.375/1.5 = 0.25  (the largest)
    //   1.35 is a partial recovery, not a new peak.
    expect(maxDrawdown([1, 1.2, 0.96, 1.08, 1.5, 1.125, 1.35])).toBe(0.25);
  });

  it('is 0 for an index that never falls and 1 for a total loss', () => {
    expect(maxDrawdown([1, 1, 1.01, 1.05])).toBe(0);
    expect(maxDrawdown([1])).toBe(0);
    expect(maxDrawdown([1, 1.1, 0])).toBe(1);
  });

  it('refuses an empty or non-positive-start index and negative levels', () => {
    expect(() => maxDrawdown([])).toThrow('maxDrawdown requires at least 1 index value, got 0');
    expect(() => maxDrawdown([0, 1])).toThrow('maxDrawdown requires a positive starting index, got 0');
    expect(() => maxDrawdown([1, -0.2])).toThrow('maxDrawdown requires index values ≥ 0, got -0.2 at index 1');
  });
});

describe('realised risk refuses short or unusable records', () => {
  const sevenMonths = PORTFOLIO.slice(0, 7);

  it('requires at least 12 monthly returns, in one wording', () => {
    expect(() => trackingError(sevenMonths, BENCHMARK.slice(0, 7))).toThrow(MetricError);
    expect(() => trackingError(sevenMonths, BENCHMARK.slice(0, 7))).toThrow(
      'trackingError requires at least 12 monthly returns, got 7',
    );
    expect(() => annualisedVolatility(sevenMonths)).toThrow('annualisedVolatility requires at least 12 monthly returns, got 7');
    expect(() => informationRatio(sevenMonths, BENCHMARK.slice(0, 7))).toThrow(
      'informationRatio requires at least 12 monthly returns, got 7',
    );
    expect(() => sharpeRatio(sevenMonths, RISK_FREE.slice(0, 7))).toThrow('sharpeRatio requires at least 12 monthly returns, got 7');
    expect(() => annualisedFromMonthly(sevenMonths)).toThrow('annualisedFromMonthly requires at least 12 monthly returns, got 7');
  });

  it('accepts exactly 12 months', () => {
    // 12 months: no annualisation exponent, Π(1 + r)^(12/12) − 1 is the plain linked return.
    const twelve = PORTFOLIO.slice(0, 12);
    const linked = twelve.reduce((growth, monthly) => growth * (1 + monthly), 1) - 1;
    expectRelativelyClose(annualisedFromMonthly(twelve), linked, 1e-13);
  });

  it('refuses series of different lengths and non-finite months', () => {
    expect(() => trackingError(PORTFOLIO, BENCHMARK.slice(0, 14))).toThrow(
      'trackingError requires series of equal length, got 15 and 14',
    );
    const withGap = [...PORTFOLIO];
    withGap[4] = Number.NaN;
    expect(() => annualisedVolatility(withGap)).toThrow('annualisedVolatility requires finite monthly returns, got NaN at index 4');
  });

  it('refuses a zero tracking error or a zero volatility', () => {
    expect(() => informationRatio(PORTFOLIO, PORTFOLIO)).toThrow('informationRatio requires a positive tracking error, got 0');
    const flat = new Array<number>(12).fill(0.002);
    expect(() => sharpeRatio(flat, RISK_FREE.slice(0, 12))).toThrow('sharpeRatio requires a positive volatility, got 0');
  });
});
