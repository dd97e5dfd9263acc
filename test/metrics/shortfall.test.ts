/**
 * Tests of src/metrics/shortfall.ts.
 *
 * Reference values: scipy.stats.norm and scipy.stats.lognorm (SciPy 1.17.1),
 * from test/reference/shortfall_scipy.py, whose docstring gives the exact
 * expression per basis; run as
 *
 *   python3 test/reference/shortfall_scipy.py
 *
 * and pasted below. Its seeded Monte Carlo column (10^6 simulated paths of
 * lognormal years) agrees with each lognormal value to within two standard
 * errors, which checks the definition of the event, not just the algebra.
 */
import { describe, expect, it } from 'vitest';
import type { ShortfallBasis, ShortfallRule } from '../../src/book/types.ts';
import { MetricError } from '../../src/errors.ts';
import {
  lognormalShortfallProbability,
  shortfallHolds,
  shortfallLine,
  shortfallProbability,
  shortfallQuantile,
  shortfallSlack,
} from '../../src/metrics/shortfall.ts';

const rule = (basis: ShortfallBasis, threshold: number, horizonYears: number, confidence: number): ShortfallRule => ({
  basis,
  threshold,
  horizonYears,
  confidence,
});

// [name, rule, mu, sigma, scipy probability, scipy quantile, scipy lognormal probability]
const SCIPY: Array<[string, ShortfallRule, number, number, number, number | null, number]> = [
  ['average-5y', rule('average', -0.02, 5, 0.95), 0.06, 0.12, 0.06801856405707181, -0.02827210854961372, 0.07653853361749445],
  ['average-1y', rule('average', -0.05, 1, 0.9), 0.05, 0.1, 0.15865525393145707, -0.07815515655446005, 0.15726999480196596],
  ['cumulative-5y', rule('cumulative', 0.1, 5, 0.9), 0.06, 0.12, 0.22802827012512805, -0.043876370067480464, 0.25761479107342355],
  ['cumulative-10y-loss', rule('cumulative', -0.2, 10, 0.95), 0.04, 0.15, 0.1029516053660341, -0.380222581813336, 0.12939357518624273],
  ['every_year-3y', rule('every_year', -0.1, 3, 0.8), 0.06, 0.12, 0.2494340298865948, null, 0.2256756172443126],
  ['average-2.5y', rule('average', 0, 2.5, 0.75), 0.03, 0.08, 0.27661498332853524, -0.004126781904921918, 0.29414072498250915],
];

describe('shortfallProbability, shortfallQuantile and lognormalShortfallProbability against SciPy', () => {
  for (const [name, r, mu, sigma, probability, quantile, lognormal] of SCIPY) {
    it(name, () => {
      expect(Math.abs(shortfallProbability(r, mu, sigma) - probability)).toBeLessThan(1e-12 * probability);
      const q = shortfallQuantile(r, mu, sigma);
      if (quantile === null) expect(q).toBeNull();
      else expect(Math.abs(q! - quantile)).toBeLessThan(1e-13);
      expect(Math.abs(lognormalShortfallProbability(r, mu, sigma) - lognormal)).toBeLessThan(1e-11 * lognormal);
    });
  }
  it('every_year with a one-year probability near 3e-14 (scipy: 3.190891672910404e-13; lognormal 3.130688712831843e-15)', () => {
    // Absolute tolerance: normalCdf is accurate to ~1e-16 absolute, not relative, this far in the tail.
    const r = rule('every_year', -0.1, 10, 0.99);
    expect(Math.abs(shortfallProbability(r, 0.05, 0.02) - 3.190891672910404e-13)).toBeLessThan(1e-15);
    expect(Math.abs(lognormalShortfallProbability(r, 0.05, 0.02) - 3.130688712831843e-15)).toBeLessThan(1e-15);
  });
});

describe('the safety-first line mu = q + z_c sigma', () => {
  // z_c to four decimals as printed in a standard normal table (Abramowitz & Stegun 1964,
  // ch. 26; values reproduced from memory, confirmed by scipy.stats.norm.ppf(c):
  // 0.6744897501960817, 0.8416212335729143, 1.2815515655446004).
  const TABLE: Array<[number, number]> = [
    [0.75, 0.6745],
    [0.8, 0.8416],
    [0.9, 1.2816],
  ];
  for (const [confidence, z] of TABLE) {
    for (const threshold of [0.03, 0.06, 0.09]) {
      it(`c = ${confidence}, q = ${threshold}: slope z_c from the table, and points on the line have P = 1 - c`, () => {
        const r = rule('average', threshold, 1, confidence);
        const line = shortfallLine(r);
        expect(line.intercept).toBe(threshold);
        expect(Math.abs(line.slope - z)).toBeLessThanOrEqual(0.5e-4);
        for (const sigma of [0.02, 0.1, 0.25]) {
          const mu = line.intercept + line.slope * sigma;
          // Common practice: the line is the set where the rule binds, P = 1 - c exactly.
          expect(Math.abs(shortfallProbability(r, mu, sigma) - (1 - confidence))).toBeLessThan(1e-14);
          expect(shortfallQuantile(r, mu, sigma)).toBeCloseTo(threshold, 14);
          expect(shortfallHolds(r, mu, sigma)).toBe(true);
          expect(shortfallHolds(r, mu - 1e-6, sigma)).toBe(false);
          expect(shortfallProbability(r, mu - 1e-6, sigma)).toBeGreaterThan(1 - confidence);
        }
      });
    }
  }

  it('average over h years: slope z_c / sqrt(h); points on it have P = 1 - c', () => {
    const r = rule('average', -0.02, 5, 0.95);
    const line = shortfallLine(r);
    expect(line.slope).toBeCloseTo(1.6448536269514722 / Math.sqrt(5), 14); // scipy: norm.ppf(0.95)
    for (const sigma of [0.05, 0.15]) {
      expect(shortfallProbability(r, line.intercept + line.slope * sigma, sigma)).toBeCloseTo(0.05, 14);
    }
  });

  it('cumulative: intercept q/h, slope z_c / sqrt(h); points on it have P = 1 - c', () => {
    const r = rule('cumulative', 0.1, 5, 0.9);
    const line = shortfallLine(r);
    expect(line.intercept).toBeCloseTo(0.02, 16);
    expect(line.slope).toBeCloseTo(1.2815515655446004 / Math.sqrt(5), 14);
    for (const sigma of [0.05, 0.15]) {
      expect(shortfallProbability(r, line.intercept + line.slope * sigma, sigma)).toBeCloseTo(0.1, 14);
    }
  });

  it('every_year: slope z at the per-year confidence c^(1/h) (scipy: norm.ppf(c**(1/h))); points on it have P = 1 - c', () => {
    const cases: Array<[ShortfallRule, number]> = [
      [rule('every_year', -0.05, 3, 0.9), 1.8182807674634986],
      [rule('every_year', -0.1, 10, 0.99), 3.0888901014508092],
    ];
    for (const [r, slope] of cases) {
      const line = shortfallLine(r);
      expect(line.intercept).toBe(r.threshold);
      expect(Math.abs(line.slope - slope)).toBeLessThan(1e-12);
      for (const sigma of [0.05, 0.15]) {
        const mu = line.intercept + line.slope * sigma;
        expect(Math.abs(shortfallProbability(r, mu, sigma) - (1 - r.confidence))).toBeLessThan(1e-13);
        expect(shortfallSlack(r, mu, sigma)).toBeCloseTo(0, 15);
      }
    }
  });
});

describe('edge cases', () => {
  it('a certain return (sigma = 0) is a point mass: P is 1 below the threshold, else 0', () => {
    expect(shortfallProbability(rule('average', 0.02, 5, 0.9), 0.01, 0)).toBe(1);
    expect(shortfallProbability(rule('cumulative', 0.02, 5, 0.9), 0.01, 0)).toBe(0); // 5 x 1 % = 5 % is not below 2 %
    expect(shortfallProbability(rule('every_year', 0.02, 5, 0.9), 0.03, 0)).toBe(0);
    expect(lognormalShortfallProbability(rule('average', 0.02, 5, 0.9), 0.01, 0)).toBe(1);
  });
  it('a lognormal return cannot fall to -100 %: P = 0 for a threshold of -1 or below', () => {
    expect(lognormalShortfallProbability(rule('cumulative', -1, 5, 0.9), 0.05, 0.3)).toBe(0);
  });
  it('every_year over one year equals the average basis over one year', () => {
    const p = shortfallProbability(rule('average', -0.05, 1, 0.9), 0.05, 0.12);
    expect(shortfallProbability(rule('every_year', -0.05, 1, 0.9), 0.05, 0.12)).toBeCloseTo(p, 15);
  });
});

describe('refusals', () => {
  it('bad rules and arguments, one wording', () => {
    expect(() => shortfallProbability(rule('average', 0, 0, 0.9), 0.05, 0.1)).toThrow(
      new MetricError('shortfallProbability requires a horizon of more than 0 years, got 0'),
    );
    expect(() => shortfallLine(rule('average', 0, 5, 1))).toThrow(
      new MetricError('shortfallLine requires a confidence between 0 and 1 (exclusive), got 1'),
    );
    expect(() => shortfallProbability(rule('average', 0, 5, 0.9), 0.05, -0.1)).toThrow(
      new MetricError('shortfallProbability requires a finite volatility of at least 0, got -0.1'),
    );
    expect(() => lognormalShortfallProbability(rule('average', 0, 5, 0.9), -1, 0.1)).toThrow(
      new MetricError('lognormalShortfallProbability requires an expected return above −1, got -1'),
    );
  });
});
