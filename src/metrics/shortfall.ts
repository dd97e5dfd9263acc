/**
 * Shortfall rules (safety first): the probability that the portfolio's
 * return over a horizon falls below a threshold, its quantile, whether the
 * rule holds, the lognormal sensitivity, and the rule's line in the μ–σ plane.
 *
 * A rule {threshold q, horizon h years, confidence c, basis} holds when the
 * shortfall probability P ≤ 1 − c. Annual portfolio returns are independent
 * across years with mean μ and volatility σ (annual decimals).
 *
 * Sources: Roy (1952), "Safety first and the holding of assets",
 * Econometrica 20(3), 431–449 (the shortfall probability); Telser (1955),
 * "Safety first and hedging", Review of Economic Studies 23(1), 1–16 (the
 * constraint μ ≥ q + z_c σ).
 */
import type { ShortfallRule } from '../book/types.ts';
import { MetricError } from '../errors.ts';
import { normalCdf, normalQuantile } from './normal.ts';

/** The rule's boundary in the μ–σ plane: the rule holds exactly when μ ≥ intercept + slope·σ. */
export interface ShortfallLine {
  readonly intercept: number;
  readonly slope: number;
}

/** Default tolerance of shortfallHolds, in annual return units (1e-10 = 0.00000001 %). */
export const SHORTFALL_HOLDS_TOLERANCE = 1e-10;

/**
 * Shortfall probability under normal annual returns.
 * Formula, by basis (Φ the standard normal cdf):
 * - average (mean annual return over h years below q): Φ((q − μ)/(σ/√h));
 * - cumulative (sum of the h annual returns below q): Φ((q − μh)/(σ√h));
 * - every_year (any single year of h below q): 1 − (1 − Φ((q − μ)/σ))^h,
 *   computed as −expm1(h·log1p(−p)) so that small probabilities keep their
 *   digits (1 − (1 − p)^h cancels for p below ~1e-8).
 * Convention: returns independent and normal, arithmetic aggregation over
 * the horizon (the cumulative basis adds annual returns, no compounding;
 * see lognormalShortfallProbability for compounding). With σ = 0 the return
 * is certain and P is 1 when it is below q, else 0.
 * Source: Roy (1952), Econometrica 20(3), the shortfall probability and its
 * normal form; the horizon scaling σ/√h of the mean of h independent returns.
 */
export function shortfallProbability(rule: ShortfallRule, mu: number, sigma: number): number {
  checkArguments('shortfallProbability', rule, mu, sigma);
  return probabilityByBasis(rule, rule.threshold, mu, sigma);
}

/**
 * The (1 − c) quantile of the horizon return, the value the rule compares with q.
 * Formula: average μ − z_c σ/√h; cumulative μh − z_c σ√h; every_year has no
 * single horizon return and gives null. z_c = Φ⁻¹(c).
 * Convention: normal annual returns as in shortfallProbability; the rule
 * holds exactly when the quantile ≥ q.
 * Source: Telser (1955), Review of Economic Studies 23(1), the constraint
 * μ − z_c σ ≥ q.
 */
export function shortfallQuantile(rule: ShortfallRule, mu: number, sigma: number): number | null {
  checkArguments('shortfallQuantile', rule, mu, sigma);
  const z = normalQuantile(rule.confidence);
  const h = rule.horizonYears;
  switch (rule.basis) {
    case 'average':
      return mu - (z * sigma) / Math.sqrt(h);
    case 'cumulative':
      return mu * h - z * sigma * Math.sqrt(h);
    case 'every_year':
      return null;
  }
}

/**
 * Whether a shortfall rule holds: P ≤ 1 − c.
 * Formula: evaluated in the equivalent line form μ − intercept − slope·σ ≥ −tolerance
 * (see shortfallLine; the two forms are equivalent because Φ is increasing),
 * which works in return units and does not depend on the cdf's precision in
 * the far tail.
 * Convention: the default tolerance of 1e-10 (annual return) absorbs the
 * rounding of recomputing μ_p and σ_p from weights, so a mix the optimiser
 * put exactly on the line is not reported as a breach.
 * Source: Telser (1955), Review of Economic Studies 23(1).
 */
export function shortfallHolds(
  rule: ShortfallRule,
  mu: number,
  sigma: number,
  tolerance: number = SHORTFALL_HOLDS_TOLERANCE,
): boolean {
  checkArguments('shortfallHolds', rule, mu, sigma);
  if (!(tolerance >= 0)) throw new MetricError(`shortfallHolds requires a tolerance of at least 0, got ${tolerance}`);
  return shortfallSlack(rule, mu, sigma) >= -tolerance;
}

/**
 * Signed distance of (σ, μ) above the rule's line, in return units:
 * μ − intercept − slope·σ; ≥ 0 exactly when the rule holds.
 * Source: see shortfallLine.
 */
export function shortfallSlack(rule: ShortfallRule, mu: number, sigma: number): number {
  checkArguments('shortfallSlack', rule, mu, sigma);
  const line = shortfallLine(rule);
  return mu - line.intercept - line.slope * sigma;
}

/**
 * The rule's line in the μ–σ plane: the rule holds exactly when
 * μ ≥ intercept + slope·σ.
 * Derivation, by basis (z_p = Φ⁻¹(p)):
 * - average: Φ((q − μ)√h/σ) ≤ 1 − c ⇔ μ ≥ q + z_c σ/√h: intercept q, slope z_c/√h;
 * - cumulative: Φ((q − μh)/(σ√h)) ≤ 1 − c ⇔ μh − z_c σ√h ≥ q
 *   ⇔ μ ≥ q/h + z_c σ/√h: intercept q/h, slope z_c/√h;
 * - every_year: 1 − (1 − p)^h ≤ 1 − c ⇔ (1 − p)^h ≥ c ⇔ p ≤ 1 − c^(1/h),
 *   with p = Φ((q − μ)/σ) the one-year probability, ⇔ μ ≥ q + z_{c'} σ with
 *   the per-year confidence c' = c^(1/h): intercept q, slope z_{c'}.
 *   1 − c' is computed as −expm1(ln(c)/h) to keep its digits.
 * Convention: normal annual returns, as in shortfallProbability. For c > ½
 * the slope is positive and the region above the line is a second-order cone
 * in the weights.
 * Source: Telser (1955), Review of Economic Studies 23(1); Roy (1952).
 */
export function shortfallLine(rule: ShortfallRule): ShortfallLine {
  checkRule('shortfallLine', rule);
  const { threshold: q, horizonYears: h, confidence: c } = rule;
  switch (rule.basis) {
    case 'average':
      return { intercept: q, slope: normalQuantile(c) / Math.sqrt(h) };
    case 'cumulative':
      return { intercept: q / h, slope: normalQuantile(c) / Math.sqrt(h) };
    case 'every_year':
      // z_{c'} = −Φ⁻¹(1 − c') with 1 − c' = −expm1(ln c / h).
      return { intercept: q, slope: -normalQuantile(-Math.expm1(Math.log(c) / h)) };
  }
}

/**
 * Shortfall probability under lognormal annual returns (a sensitivity).
 * Moment matching (common practice): the gross annual return G = 1 + R is
 * lognormal, ln G ~ N(m, s²), with the same arithmetic mean and variance as
 * the normal model: E[G] = 1 + μ, Var[G] = σ², which gives
 * s² = ln(1 + σ²/(1 + μ)²) and m = ln(1 + μ) − s²/2. Years are independent.
 * The event, by basis:
 * - average: the h-year geometric-average return (Π G_t)^(1/h) − 1 is below q:
 *   P = Φ((ln(1 + q) − m)/(s/√h));
 * - cumulative: the compounded h-year total return Π G_t − 1 is below q:
 *   P = Φ((ln(1 + q) − hm)/(s√h));
 * - every_year: any single year's return G_t − 1 is below q:
 *   P = 1 − (1 − Φ((ln(1 + q) − m)/s))^h.
 * Convention: requires μ > −1 (a positive expected gross return); a
 * threshold q ≤ −1 (losing everything or more) cannot be undershot, P = 0;
 * with σ = 0 the return is certain (P is 1 or 0).
 * Source: Aitchison & Brown (1957), The Lognormal Distribution, ch. 2
 * (moments of the lognormal); Campbell, Lo & MacKinlay (1997), The
 * Econometrics of Financial Markets, section 1.4 (lognormal returns).
 */
export function lognormalShortfallProbability(rule: ShortfallRule, mu: number, sigma: number): number {
  checkArguments('lognormalShortfallProbability', rule, mu, sigma);
  if (!(mu > -1)) {
    throw new MetricError(`lognormalShortfallProbability requires an expected return above −1, got ${mu}`);
  }
  const q = rule.threshold;
  if (!(q > -1)) return 0;
  const logVariance = Math.log1p((sigma / (1 + mu)) ** 2);
  const s = Math.sqrt(logVariance);
  const m = Math.log1p(mu) - logVariance / 2;
  return probabilityByBasis(rule, Math.log1p(q), m, s);
}

/**
 * The shortfall probability of a rule's basis for independent, identically
 * normal annual outcomes with the given mean and spread (returns, or log
 * gross returns for the lognormal version), below `threshold` (on the same
 * scale): the mean of h years (spread/√h), their sum (mean·h, spread·√h),
 * or any single year of h.
 */
function probabilityByBasis(rule: ShortfallRule, threshold: number, mean: number, spread: number): number {
  const h = rule.horizonYears;
  switch (rule.basis) {
    case 'average':
      return belowProbability(threshold - mean, spread / Math.sqrt(h));
    case 'cumulative':
      return belowProbability(threshold - mean * h, spread * Math.sqrt(h));
    case 'every_year':
      return atLeastOnce(belowProbability(threshold - mean, spread), h);
  }
}

/** P(X < q) for X ~ N(mean, spread²), given gap = q − mean; spread 0 is a point mass. */
function belowProbability(gap: number, spread: number): number {
  if (spread === 0) return gap > 0 ? 1 : 0;
  return normalCdf(gap / spread);
}

/** 1 − (1 − p)^h without cancellation for small p. */
function atLeastOnce(p: number, h: number): number {
  if (p >= 1) return 1;
  return -Math.expm1(h * Math.log1p(-p));
}

function checkRule(caller: string, rule: ShortfallRule): void {
  if (!Number.isFinite(rule.threshold)) throw new MetricError(`${caller} requires a finite threshold, got ${rule.threshold}`);
  if (!(rule.horizonYears > 0 && Number.isFinite(rule.horizonYears))) {
    throw new MetricError(`${caller} requires a horizon of more than 0 years, got ${rule.horizonYears}`);
  }
  if (!(rule.confidence > 0 && rule.confidence < 1)) {
    throw new MetricError(`${caller} requires a confidence between 0 and 1 (exclusive), got ${rule.confidence}`);
  }
  if (rule.basis !== 'average' && rule.basis !== 'cumulative' && rule.basis !== 'every_year') {
    throw new MetricError(`${caller} requires basis average, cumulative or every_year, got ${String(rule.basis)}`);
  }
}

function checkArguments(caller: string, rule: ShortfallRule, mu: number, sigma: number): void {
  checkRule(caller, rule);
  if (!Number.isFinite(mu)) throw new MetricError(`${caller} requires a finite expected return, got ${mu}`);
  if (!(sigma >= 0 && Number.isFinite(sigma))) {
    throw new MetricError(`${caller} requires a finite volatility of at least 0, got ${sigma}`);
  }
}
