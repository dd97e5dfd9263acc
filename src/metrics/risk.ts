/**
 * Expected (ex-ante) risk of a portfolio from its weights, the expected
 * returns and the annual covariance matrix: expected return, volatility,
 * tracking error, normal VaR and CVaR, and Euler risk contributions.
 *
 * All vectors are indexed alike (one entry per instrument or index series,
 * all in one covariance matrix); all figures are annual decimals.
 */
import { MetricError } from '../errors.ts';
import { normalDensity, normalQuantile } from './normal.ts';

export interface PortfolioRisk {
  /** μ_p = wᵀμ. */
  readonly expectedReturn: number;
  /** σ_p = √(wᵀΣw). */
  readonly volatility: number;
  /** √((w − b)ᵀΣ(w − b)). */
  readonly trackingError: number;
  /** One-year 95 % Value at Risk as a positive loss fraction: −(μ_p − z₀.₉₅ σ_p). */
  readonly var95: number;
  /** One-year 95 % expected shortfall (CVaR) as a positive loss fraction: −(μ_p − σ_p φ(z₀.₉₅)/0.05). */
  readonly cvar95: number;
}

const VAR_CONFIDENCE = 0.95;

/**
 * Ex-ante portfolio risk.
 * Formulas: μ_p = wᵀμ; σ_p = √(wᵀΣw); tracking error = √((w − b)ᵀΣ(w − b));
 * VaR₉₅ = −(μ_p − z₀.₉₅ σ_p); CVaR₉₅ = −(μ_p − σ_p φ(z₀.₉₅)/0.05),
 * with z₀.₉₅ = Φ⁻¹(0.95) and φ the standard normal density.
 * Convention: annual horizon, normally distributed portfolio return, losses
 * reported as positive fractions (a negative VaR means a gain at that
 * confidence). A quadratic form that comes out negative by rounding only
 * (down to −1e-14 × the scale of its terms) is read as 0; beyond that Σ is
 * not positive semi-definite and the input is refused.
 * Sources: Markowitz (1952), "Portfolio selection", J. Finance 7(1), 77–91,
 * for μ_p and σ_p; Jorion (2007), Value at Risk, 3rd ed., ch. 5 (normal VaR);
 * Acerbi & Tasche (2002), "On the coherence of expected shortfall", J. Banking
 * & Finance 26(7), 1487–1503 (expected shortfall of the normal distribution).
 */
export function portfolioRisk(
  weights: readonly number[],
  mu: readonly number[],
  sigma: readonly (readonly number[])[],
  benchmarkWeights: readonly number[],
): PortfolioRisk {
  const n = weights.length;
  checkVector('portfolioRisk', 'weights', weights, n);
  checkVector('portfolioRisk', 'expected returns', mu, n);
  checkVector('portfolioRisk', 'benchmark weights', benchmarkWeights, n);
  checkCovariance('portfolioRisk', sigma, n);
  let expectedReturn = 0;
  for (let i = 0; i < n; i++) expectedReturn += weights[i]! * mu[i]!;
  const volatility = Math.sqrt(variance('portfolioRisk', weights, sigma));
  const active = weights.map((w, i) => w - benchmarkWeights[i]!);
  const trackingError = Math.sqrt(variance('portfolioRisk', active, sigma));
  const z = normalQuantile(VAR_CONFIDENCE);
  return {
    expectedReturn,
    volatility,
    trackingError,
    var95: -(expectedReturn - z * volatility),
    cvar95: -(expectedReturn - (volatility * normalDensity(z)) / (1 - VAR_CONFIDENCE)),
  };
}

/**
 * Euler risk contributions to volatility.
 * Formula: RC_i = w_i (Σw)_i / σ_p with σ_p = √(wᵀΣw); the contributions sum
 * to σ_p (Euler's theorem for the homogeneous function σ_p(w)).
 * Convention: absolute contributions in volatility units (not percentages);
 * a zero-variance portfolio (σ_p = 0, hence Σw = 0 for a positive
 * semi-definite Σ) gets all-zero contributions, the limit of the formula.
 * Source: Tasche (1999), "Risk contributions and performance measurement",
 * TU München working paper; Litterman (1996), "Hot spots and hedges",
 * J. Portfolio Management 23, 52–75.
 */
export function riskContributions(weights: readonly number[], sigma: readonly (readonly number[])[]): number[] {
  const n = weights.length;
  checkVector('riskContributions', 'weights', weights, n);
  checkCovariance('riskContributions', sigma, n);
  const volatility = Math.sqrt(variance('riskContributions', weights, sigma));
  if (volatility === 0) return weights.map(() => 0);
  return weights.map((w, i) => {
    let marginal = 0;
    for (let j = 0; j < n; j++) marginal += sigma[i]![j]! * weights[j]!;
    return (w * marginal) / volatility;
  });
}

/** wᵀΣw with the rounding guard described in portfolioRisk. */
function variance(caller: string, w: readonly number[], sigma: readonly (readonly number[])[]): number {
  let sum = 0;
  let magnitude = 0;
  for (let i = 0; i < w.length; i++) {
    if (w[i] === 0) continue;
    for (let j = 0; j < w.length; j++) {
      const term = w[i]! * sigma[i]![j]! * w[j]!;
      sum += term;
      magnitude += Math.abs(term);
    }
  }
  if (sum >= 0) return sum;
  if (sum >= -1e-14 * magnitude) return 0;
  throw new MetricError(`${caller} requires a positive semi-definite covariance matrix, got a variance of ${sum}`);
}

function checkVector(caller: string, name: string, vector: readonly number[], n: number): void {
  if (n === 0) throw new MetricError(`${caller} requires at least 1 weight, got 0`);
  if (vector.length !== n) throw new MetricError(`${caller} requires ${n} ${name}, got ${vector.length}`);
  vector.forEach((value, i) => {
    if (!Number.isFinite(value)) throw new MetricError(`${caller} requires finite ${name}, got ${value} at ${i}`);
  });
}

function checkCovariance(caller: string, sigma: readonly (readonly number[])[], n: number): void {
  if (sigma.length !== n || sigma.some((row) => row.length !== n)) {
    throw new MetricError(`${caller} requires an ${n} × ${n} covariance matrix`);
  }
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      const value = sigma[i]![j]!;
      if (!Number.isFinite(value)) throw new MetricError(`${caller} requires a finite covariance matrix, got ${value} at (${i}, ${j})`);
      if (Math.abs(value - sigma[j]![i]!) > 1e-12 * Math.max(Math.abs(value), Math.abs(sigma[j]![i]!), 1e-300)) {
        throw new MetricError(`${caller} requires a symmetric covariance matrix, got ${value} at (${i}, ${j}) and ${sigma[j]![i]} at (${j}, ${i})`);
      }
    }
  }
}
