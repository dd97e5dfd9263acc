/**
 * Tests of src/metrics/risk.ts.
 *
 * Reference values from NumPy 2.4.6 / SciPy 1.17.1, computed by this script
 * (same data as below; four instruments and two benchmark indices in one Σ):
 *
 *   import numpy as np
 *   from scipy.stats import norm
 *   from scipy.integrate import quad
 *   vol = np.array([0.18, 0.22, 0.06, 0.01, 0.16, 0.05])
 *   corr = np.array([[1, .7, .1, 0, .9, .1], [.7, 1, .05, 0, .75, .05], [.1, .05, 1, .2, .1, .9],
 *                    [0, 0, .2, 1, 0, .2], [.9, .75, .1, 0, 1, .1], [.1, .05, .9, .2, .1, 1]])
 *   S = corr * np.outer(vol, vol)
 *   mu = np.array([0.07, 0.08, 0.03, 0.015, 0.065, 0.028])
 *   w = np.array([0.35, 0.25, 0.3, 0.1, 0, 0]); b = np.array([0, 0, 0, 0, 0.6, 0.4])
 *   mp = w @ mu; sp = np.sqrt(w @ S @ w); te = np.sqrt((w - b) @ S @ (w - b))
 *   z = norm.ppf(0.95)
 *   print(mp, sp, te, -(mp - z * sp), -(mp - sp * norm.pdf(z) / 0.05))
 *   print(w * (S @ w) / sp)                                   # Euler contributions
 *   loss = norm(loc=-mp, scale=sp)                            # expected shortfall by integration
 *   print(quad(lambda x: x * loss.pdf(x), loss.ppf(0.95), np.inf)[0] / 0.05)
 *
 * Output: 0.055 0.11181681447796658 0.048301138702933295 0.12892229284824322 0.17564597531838363
 *         [0.05820144340887458 0.049187593347901806 0.004386639006753789 4.113871443642697e-05 0 0]
 *         0.17564597531838358
 */
import { describe, expect, it } from 'vitest';
import { MetricError } from '../../src/errors.ts';
import { portfolioRisk, riskContributions } from '../../src/metrics/risk.ts';

const VOL = [0.18, 0.22, 0.06, 0.01, 0.16, 0.05];
const CORR = [
  [1, 0.7, 0.1, 0, 0.9, 0.1],
  [0.7, 1, 0.05, 0, 0.75, 0.05],
  [0.1, 0.05, 1, 0.2, 0.1, 0.9],
  [0, 0, 0.2, 1, 0, 0.2],
  [0.9, 0.75, 0.1, 0, 1, 0.1],
  [0.1, 0.05, 0.9, 0.2, 0.1, 1],
];
const SIGMA = CORR.map((row, i) => row.map((c, j) => c * VOL[i]! * VOL[j]!));
const MU = [0.07, 0.08, 0.03, 0.015, 0.065, 0.028];
const WEIGHTS = [0.35, 0.25, 0.3, 0.1, 0, 0];
const BENCHMARK = [0, 0, 0, 0, 0.6, 0.4];

describe('portfolioRisk against NumPy/SciPy', () => {
  it('expected return, volatility, tracking error, VaR and CVaR at 95 %', () => {
    const risk = portfolioRisk(WEIGHTS, MU, SIGMA, BENCHMARK);
    expect(risk.expectedReturn).toBeCloseTo(0.055, 15);
    expect(risk.volatility).toBeCloseTo(0.11181681447796658, 15);
    expect(risk.trackingError).toBeCloseTo(0.048301138702933295, 15);
    expect(risk.var95).toBeCloseTo(0.12892229284824322, 14);
    expect(risk.cvar95).toBeCloseTo(0.17564597531838363, 14);
    // The closed form equals the integral definition of expected shortfall (scipy quad: 0.17564597531838358).
    expect(risk.cvar95).toBeCloseTo(0.17564597531838358, 13);
  });
  it('a portfolio equal to its benchmark has zero tracking error', () => {
    expect(portfolioRisk(BENCHMARK, MU, SIGMA, BENCHMARK).trackingError).toBe(0);
  });
});

describe('riskContributions (Euler)', () => {
  it('match NumPy w * (S @ w) / sigma_p and sum to sigma_p', () => {
    const expected = [0.05820144340887458, 0.049187593347901806, 0.004386639006753789, 4.113871443642697e-5, 0, 0];
    const contributions = riskContributions(WEIGHTS, SIGMA);
    contributions.forEach((c, i) => expect(c).toBeCloseTo(expected[i]!, 15));
    const total = contributions.reduce((sum, c) => sum + c, 0);
    expect(total).toBeCloseTo(portfolioRisk(WEIGHTS, MU, SIGMA, BENCHMARK).volatility, 15);
  });
  it('a zero-variance portfolio has zero contributions (the limit of the formula)', () => {
    expect(riskContributions([1, 0], [[0, 0], [0, 0.04]])).toEqual([0, 0]);
  });
});

describe('refusals', () => {
  it('mismatched lengths, non-finite input, an asymmetric or indefinite matrix', () => {
    expect(() => portfolioRisk([0.5, 0.5], [0.05], [[0.04, 0], [0, 0.04]], [1, 0])).toThrow(
      new MetricError('portfolioRisk requires 2 expected returns, got 1'),
    );
    expect(() => portfolioRisk([0.5, Number.NaN], [0.05, 0.06], [[0.04, 0], [0, 0.04]], [1, 0])).toThrow(
      new MetricError('portfolioRisk requires finite weights, got NaN at 1'),
    );
    expect(() => riskContributions([0.5, 0.5], [[0.04, 0.01], [0, 0.04]])).toThrow(
      new MetricError('riskContributions requires a symmetric covariance matrix, got 0.01 at (0, 1) and 0 at (1, 0)'),
    );
    expect(() => riskContributions([1, -1], [[0.04, 0.05], [0.05, 0.04]])).toThrow(MetricError);
  });
});
