import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { normalCdf, normalDensity, normalQuantile } from '../../src/metrics/normal.ts';

const FAST_CHECK_SEED = 20260701;

describe('normalCdf against the standard normal table', () => {
  // Source: Abramowitz & Stegun (1964), Handbook of Mathematical Functions,
  // table 26.1, P(x) to the 15 decimals the table gives. Quoted from memory,
  // cross-checked with scipy.stats.norm (SciPy 1.17.1):
  //   python3 -c "from scipy.stats import norm; [print(z, repr(norm.cdf(z))) for z in (0.5, 1.0, 1.5, 1.96, 2.0, 2.5, 3.0)]"
  //   0.5 0.6914624612740131, 1.0 0.8413447460685429, 1.5 0.9331927987311419,
  //   1.96 0.9750021048517795, 2.0 0.9772498680518208, 2.5 0.9937903346742238,
  //   3.0 0.9986501019683699
  // Tolerance: half a unit in the 15th decimal (rounding of the table) plus 5e-16
  // for the computation.
  const table: ReadonlyArray<readonly [number, number]> = [
    [0.5, 0.691462461274013],
    [1.0, 0.841344746068543],
    [1.5, 0.933192798731142],
    [1.96, 0.975002104851780],
    [2.0, 0.977249868051821],
    [2.5, 0.993790334674224],
    [3.0, 0.998650101968370],
  ];
  it.each(table)('Φ(%f) = %f', (z, probability) => {
    expect(Math.abs(normalCdf(z) - probability)).toBeLessThanOrEqual(1e-15);
  });

  it('Φ(0) = 1/2 exactly and φ(0) = 1/√(2π) (definition)', () => {
    expect(normalCdf(0)).toBe(0.5);
    // Source: Abramowitz & Stegun (1964), eq. 26.2.1 at z = 0.
    expect(normalDensity(0)).toBeCloseTo(0.3989422804014327, 15);
  });
});

describe('normalQuantile against the table of percentage points', () => {
  // Source: percentage points of the standard normal distribution as tabulated
  // in Abramowitz & Stegun (1964), chapter 26, to 10 decimals. Quoted from
  // memory (table number not checked), cross-checked with scipy.stats.norm (SciPy 1.17.1):
  //   python3 -c "from scipy.stats import norm; [print(p, repr(norm.ppf(p))) for p in (0.9, 0.95, 0.975, 0.99, 0.995)]"
  //   0.9 1.2815515655446004, 0.95 1.6448536269514722, 0.975 1.959963984540054,
  //   0.99 2.3263478740408408, 0.995 2.5758293035489004
  // Tolerance: half a unit in the 10th decimal.
  const percentagePoints: ReadonlyArray<readonly [number, number]> = [
    [0.9, 1.2815515655],
    [0.95, 1.644853627],
    [0.975, 1.9599639845],
    [0.99, 2.326347874],
    [0.995, 2.5758293035],
  ];
  it.each(percentagePoints)('Φ⁻¹(%f) = %f', (probability, quantile) => {
    expect(Math.abs(normalQuantile(probability) - quantile)).toBeLessThanOrEqual(5e-11);
  });

  it('refuses probabilities outside (0, 1)', () => {
    expect(() => normalQuantile(0)).toThrow('normalQuantile requires 0 < p < 1, got 0');
    expect(() => normalQuantile(1)).toThrow('normalQuantile requires 0 < p < 1, got 1');
  });
});

describe('normal distribution properties (fast-check, seeded)', () => {
  it('symmetry: Φ(−z) = 1 − Φ(z)', () => {
    fc.assert(
      fc.property(fc.double({ min: -8, max: 8, noNaN: true }), (z) => {
        expect(Math.abs(normalCdf(-z) - (1 - normalCdf(z)))).toBeLessThanOrEqual(2e-16);
      }),
      { seed: FAST_CHECK_SEED, numRuns: 500 },
    );
  });

  it('round trip: Φ(Φ⁻¹(p)) = p to 1e-15 absolute', () => {
    // Absolute, not relative: normalCdf loses relative precision in the far lower
    // tail (documented in normal.ts; about 5e-8 relative at p = 1e-9).
    fc.assert(
      fc.property(fc.double({ min: 1e-9, max: 1 - 1e-9, noNaN: true }), (probability) => {
        const roundTrip = normalCdf(normalQuantile(probability));
        expect(Math.abs(roundTrip - probability)).toBeLessThanOrEqual(1e-15);
      }),
      { seed: FAST_CHECK_SEED, numRuns: 500 },
    );
  });
});
