/**
 * The standard normal distribution: density, cumulative probability and
 * quantile, with the same three-function shape as the lognormal module.
 */
import jstatModule from 'jstat';

const { jStat } = jstatModule;

/**
 * Standard normal density φ(z) = exp(−z²/2) / √(2π).
 * Source: Abramowitz & Stegun (1964), Handbook of Mathematical Functions, eq. 26.2.1.
 */
export function normalDensity(z: number): number {
  return Math.exp(-0.5 * z * z) / Math.sqrt(2 * Math.PI);
}

/**
 * Standard normal cumulative probability Φ(z) = P(Z ≤ z).
 * Computed by jStat as (1 + erf(z/√2))/2. Precision: absolute error ~1e-16
 * everywhere, but the relative error grows in the far lower tail because of
 * the 1 + erf subtraction (Φ(−8) = 6.22e-16 comes out 6.11e-16). Statements
 * show probabilities to 0.1 %, so this is harmless; do not use it for
 * probabilities below ~1e-12.
 * Source: Abramowitz & Stegun (1964), eq. 26.2.2 and 7.1.2.
 */
export function normalCdf(z: number): number {
  return jStat.normal.cdf(z, 0, 1) as number;
}

/**
 * Standard normal quantile z_p = Φ⁻¹(p) for 0 < p < 1.
 * jStat inverts the complementary error function (Newton-refined), accurate to ~1e-15.
 * Source: Abramowitz & Stegun (1964), table 26.1 for reference values.
 */
export function normalQuantile(p: number): number {
  if (!(p > 0 && p < 1)) throw new RangeError(`normalQuantile requires 0 < p < 1, got ${p}`);
  return jStat.normal.inv(p, 0, 1) as number;
}
