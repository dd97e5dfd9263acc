/**
 * Asset-class level portfolio choice: the efficient frontier within the
 * mandate's allocation ranges, and the optimal mix under the mandate's
 * volatility ceiling and shortfall rules.
 *
 * Vectors are indexed by asset class (the mandate's allocation order);
 * μ and Σ are annual; `bounds[i] = [min, max]` is the allocation range of
 * class i; every mix is fully invested (Σx = 1).
 *
 * How the optimum is found exactly (no penalties). Write P for the mixes
 * within the ranges, m for an expected return and σ(m) for the lowest
 * volatility of a mix in P with expected return m (the frontier).
 * 1. σ(m) is convex in m: it is the value of minimising the convex function
 *    ‖Σ^½x‖ over x ∈ P with μᵀx = m, a convex program whose optimal value is
 *    convex in its right-hand side (Boyd & Vandenberghe 2004, Convex
 *    Optimization, section 5.6.1).
 * 2. Every constraint is a function of (μ_p, σ_p) that does not improve when
 *    σ_p grows, and the utility U = μ_p − (a/2)σ_p² does not either; so an
 *    optimum lies on the efficient part m ∈ [m_minvar, m_maxreturn], where a
 *    mix is the frontier mix x(m).
 * 3. On the frontier each constraint is concave in m: σmax − σ(m), and
 *    m − intercept − slope·σ(m) with slope ≥ 0 (confidence ≥ ½). Each holds on
 *    an interval of m; all hold on the intersection, an interval [l, r].
 *    U(m) = m − (a/2)σ(m)² is concave too, with its maximum at the
 *    unconstrained optimum m_a (the QP max μᵀx − (a/2)xᵀΣx over P).
 *    Hence the optimum is x(clamp(m_a, l, r)), or there is none when the
 *    interval is empty.
 * 4. Which side of m_a a violated constraint's interval lies on follows from
 *    its derivative along the frontier: d/dm [m − slope·σ(m)] = 1 − slope·σ'(m)
 *    with σ'(m_a) = 1/(a σ_a), because the multiplier of μᵀx = m is
 *    d(σ²/2)/dm and equals 1/a at m_a (the KKT conditions of both QPs coincide).
 * 5. Boundaries are found by bisection on m; x(m) is piecewise affine in m
 *    (Markowitz 1956, "The optimization of a quadratic function subject to
 *    linear constraints", Naval Research Logistics Quarterly 3, 111–133: the
 *    critical line algorithm), so once the two ends of a bracket have the
 *    same set of classes at their bounds every x(m) in between is their
 *    linear interpolation, exact and free. Bisection runs to the last bit of
 *    m and keeps the end that satisfies the constraint.
 */
import type { ShortfallRule } from '../book/types.ts';
import { MetricError } from '../errors.ts';
import { normalCdf } from './normal.ts';
import { solveQuadraticProgram, type QuadraticProgram } from './qp.ts';
import { shortfallLine } from './shortfall.ts';

export interface FrontierMix {
  readonly volatility: number;
  readonly expectedReturn: number;
  readonly weights: number[];
}

export interface OptimalMixInput {
  readonly mu: readonly number[];
  readonly sigma: readonly (readonly number[])[];
  readonly bounds: readonly (readonly [number, number])[];
  /** a in U = μ − (a/2)σ²; must be > 0. */
  readonly riskAversion: number;
  readonly maxVolatility: number | null;
  /** Confidence of every rule must be at least ½ (the constraint is then convex). */
  readonly shortfall: readonly ShortfallRule[];
}

export interface OptimalMix {
  /** True when the mix satisfies every constraint; false for the fallback mix. */
  readonly feasible: boolean;
  readonly weights: number[];
  readonly expectedReturn: number;
  readonly volatility: number;
  /** U = μ_p − (a/2)σ_p². */
  readonly utility: number;
  /** Constraint ids (`max_volatility`, `shortfall.<i>`) that hold with equality (|slack| ≤ 1e-9). */
  readonly bindingConstraints: string[];
  /** Constraint ids not met by the mix (empty when feasible). */
  readonly unmetConstraints: string[];
}

/** A constraint counts as met when its slack (return or volatility units) is at least −1e-10. */
const FEASIBILITY_TOLERANCE = 1e-10;
/** |slack| at or below this is reported as binding. */
const BINDING_TOLERANCE = 1e-9;
/** An expected-return range narrower than this (annual) is a one-point frontier. */
const DEGENERATE_RANGE = 1e-12;
/** Grid of the fallback search before golden-section refinement. */
const FALLBACK_GRID_POINTS = 21;

/**
 * Efficient frontier within allocation ranges.
 * Formula: for expected returns m evenly spaced from the minimum-variance
 * mix's m_mv to the maximum-return mix's m_max, the mix minimising xᵀΣx
 * subject to Σx = 1, μᵀx = m and min_i ≤ x_i ≤ max_i (each a quadratic
 * program; the end points are the minimum-variance QP and the
 * least-variance mix among those of highest return, found greedily).
 * Convention: fully invested, ranges as given (long-only when the minimums
 * are ≥ 0); volatility √(xᵀΣx) in Σ's (annual) units; when every mix has the
 * same expected return the frontier is the one minimum-variance point,
 * repeated.
 * Source: Markowitz (1952), "Portfolio selection", J. Finance 7(1), 77–91;
 * Merton (1972), "An analytic derivation of the efficient portfolio
 * frontier", J. Financial and Quantitative Analysis 7(4), 1851–1872 (the
 * closed form without ranges, used in the tests).
 */
export function efficientFrontier(
  mu: readonly number[],
  sigma: readonly (readonly number[])[],
  bounds: readonly (readonly [number, number])[],
  points = 40,
): FrontierMix[] {
  checkUniverse('efficientFrontier', mu, sigma, bounds);
  if (!(Number.isInteger(points) && points >= 2)) {
    throw new MetricError(`efficientFrontier requires an integer number of points of at least 2, got ${points}`);
  }
  const frontier = createFrontier(mu, sigma, bounds);
  const low = frontier.minVariance();
  const high = frontier.maxReturn();
  const framePoints: FramePoint[] = new Array<FramePoint>(points).fill(low);
  if (!frontier.degenerate()) {
    framePoints[points - 1] = high;
    // Visit the interior in bisection order, so that once two solved points share an
    // affine piece the points between them are interpolated instead of solved.
    const fill = (from: number, to: number): void => {
      if (to - from < 2) return;
      const middle = (from + to) >> 1;
      framePoints[middle] = frontier.at(low.m + ((high.m - low.m) * middle) / (points - 1));
      fill(from, middle);
      fill(middle, to);
    };
    fill(0, points - 1);
  }
  return framePoints.map((point) => ({
    volatility: Math.sqrt(point.variance),
    expectedReturn: point.m,
    weights: [...point.weights],
  }));
}

/**
 * Minimum-variance mix at a given expected return within allocation ranges.
 * Formula: minimise xᵀΣx subject to Σx = 1, μᵀx = m and min_i ≤ x_i ≤ max_i
 * (one quadratic program); on the efficient part (m at or above the
 * minimum-variance mix's return) it is the frontier mix at m.
 * Convention: m must lie between the lowest and highest expected return the
 * ranges allow; volatility in Σ's (annual) units.
 * Source: Markowitz (1952), "Portfolio selection", J. Finance 7(1), 77–91.
 */
export function minimumVarianceMix(
  mu: readonly number[],
  sigma: readonly (readonly number[])[],
  bounds: readonly (readonly [number, number])[],
  expectedReturn: number,
): FrontierMix {
  checkUniverse('minimumVarianceMix', mu, sigma, bounds);
  const lowest = -linearMaximum(mu.map((m) => -m), bounds);
  const highest = linearMaximum(mu, bounds);
  // Returns within 1e-12 of an end (rounding of the greedy sums) are taken as that end.
  if (!(expectedReturn >= lowest - 1e-12 && expectedReturn <= highest + 1e-12)) {
    throw new MetricError(
      `minimumVarianceMix requires an expected return the ranges can reach, from ${lowest} to ${highest}, got ${expectedReturn}`,
    );
  }
  const target = Math.min(highest, Math.max(lowest, expectedReturn));
  const n = mu.length;
  const weights = solveQuadraticProgram({
    hessian: sigma,
    linear: new Array<number>(n).fill(0),
    equalities: [
      { coefficients: new Array<number>(n).fill(1), value: 1 },
      { coefficients: mu, value: target },
    ],
    lowerBounds: bounds.map((b) => b[0]),
    upperBounds: bounds.map((b) => b[1]),
  }).solution;
  let achieved = 0;
  for (let i = 0; i < n; i++) achieved += mu[i]! * weights[i]!;
  return { volatility: Math.sqrt(varianceOf(sigma, weights)), expectedReturn: achieved, weights };
}

/**
 * Optimal mix: maximise the mean-variance utility under the mandate.
 * Formula: maximise U = μᵀx − (a/2)xᵀΣx subject to Σx = 1,
 * min_i ≤ x_i ≤ max_i, √(xᵀΣx) ≤ max_volatility and every shortfall rule in
 * its line form μᵀx − slope·√(xᵀΣx) ≥ intercept (see shortfallLine; a
 * second-order-cone constraint). Solved exactly along the frontier as
 * described at the top of this module: each constraint is met to 1e-10 and U
 * is optimal to the last bits of the bisection (≪ 1e-6).
 * When no mix meets every constraint: `feasible` is false and the mix is the
 * one within the ranges that minimises max_k P_k/(1 − c_k) over the shortfall
 * rules (P_k the normal shortfall probability; for one rule this is Roy's
 * safety-first mix, the highest (μ − q)/σ), subject to max_volatility when
 * some mix meets it (else without it); with no shortfall rules it is the
 * minimum-variance mix, the closest to the volatility ceiling. The search is
 * along the frontier (restricted by max_volatility), which contains the
 * minimiser whenever the minimising mix has every P_k ≤ ½ (then lowering σ at
 * fixed μ lowers every P_k); it is a grid of 21 frontier points refined by
 * golden-section search (ratios compared in logarithms so tiny probabilities
 * stay ordered).
 * Convention: a > 0; every rule's confidence ≥ ½; ranges must admit a fully
 * invested mix; Σ positive definite on the mixes (see solveQuadraticProgram).
 * Sources: Markowitz (1952), J. Finance 7(1); Roy (1952), "Safety first and
 * the holding of assets", Econometrica 20(3), 431–449; Telser (1955),
 * "Safety first and hedging", Review of Economic Studies 23(1), 1–16.
 */
export function optimalMix(input: OptimalMixInput): OptimalMix {
  const { mu, sigma, bounds, riskAversion, maxVolatility, shortfall } = input;
  checkUniverse('optimalMix', mu, sigma, bounds);
  if (!(riskAversion > 0 && Number.isFinite(riskAversion))) {
    throw new MetricError(`optimalMix requires a risk aversion above 0, got ${riskAversion}`);
  }
  if (maxVolatility !== null && !(maxVolatility > 0 && Number.isFinite(maxVolatility))) {
    throw new MetricError(`optimalMix requires a maximum volatility above 0 or none, got ${maxVolatility}`);
  }
  shortfall.forEach((rule, k) => {
    if (!(rule.confidence >= 0.5)) {
      throw new MetricError(
        `optimalMix requires every shortfall confidence to be at least 0.5, got ${rule.confidence} in rule ${k} ` +
          '(below ½ the rule is not a convex constraint)',
      );
    }
  });
  const constraints = buildConstraints(maxVolatility, shortfall);
  const frontier = createFrontier(mu, sigma, bounds);
  const result = (point: FramePoint, feasible: boolean): OptimalMix => {
    const volatility = Math.sqrt(point.variance);
    const slacks = constraints.map((c) => ({ id: c.id, slack: c.slack(point.m, volatility) }));
    return {
      feasible,
      weights: [...point.weights],
      expectedReturn: point.m,
      volatility,
      utility: point.m - (riskAversion / 2) * point.variance,
      bindingConstraints: slacks.filter((s) => Math.abs(s.slack) <= BINDING_TOLERANCE).map((s) => s.id),
      unmetConstraints: slacks.filter((s) => s.slack < -FEASIBILITY_TOLERANCE).map((s) => s.id),
    };
  };

  const unconstrained = frontier.utilityOptimum(riskAversion);
  const violated = constraints.filter((c) => c.slack(unconstrained.m, Math.sqrt(unconstrained.variance)) < 0);
  if (violated.length === 0) return result(unconstrained, true);

  const boundary = constrainedOptimum(frontier, constraints, violated, unconstrained, riskAversion);
  if (boundary !== null) return result(boundary, true);
  return result(fallbackMix(frontier, maxVolatility, shortfall), false);
}

// ---------------------------------------------------------------------------
// Constraints as functions of (μ_p, σ_p)

interface MixConstraint {
  readonly id: string;
  /** ≥ 0 when met; return units (shortfall) or volatility units (max_volatility). */
  slack(expectedReturn: number, volatility: number): number;
  /** Slope of σ in the constraint (d slack/dσ = −slope); 1 for max_volatility, which has no return term. */
  readonly volatilitySlope: number;
  readonly returnSlope: number;
}

function buildConstraints(maxVolatility: number | null, rules: readonly ShortfallRule[]): MixConstraint[] {
  const constraints: MixConstraint[] = [];
  if (maxVolatility !== null) {
    constraints.push({
      id: 'max_volatility',
      slack: (_m, volatility) => maxVolatility - volatility,
      volatilitySlope: 1,
      returnSlope: 0,
    });
  }
  rules.forEach((rule, k) => {
    const line = shortfallLine(rule);
    constraints.push({
      id: `shortfall.${k}`,
      slack: (m, volatility) => m - line.intercept - line.slope * volatility,
      volatilitySlope: line.slope,
      returnSlope: 1,
    });
  });
  return constraints;
}

/**
 * Steps 3–5 of the module comment: the constrained optimum on the frontier,
 * or null when the constraints' intervals do not meet.
 */
function constrainedOptimum(
  frontier: Frontier,
  constraints: readonly MixConstraint[],
  violated: readonly MixConstraint[],
  start: FramePoint,
  riskAversion: number,
): FramePoint | null {
  const startVolatility = Math.sqrt(start.variance);
  // d slack/dm at the start = returnSlope − volatilitySlope·σ'(m), σ'(m_a) = 1/(a σ_a).
  const directions = violated.map((c) => {
    const derivative =
      startVolatility > 0 ? c.returnSlope - c.volatilitySlope / (riskAversion * startVolatility) : -Infinity;
    return Math.sign(derivative);
  });
  if (directions.some((d) => d === 0) || (directions.includes(1) && directions.includes(-1))) return null;
  const toward = directions[0]!;
  const end = toward < 0 ? frontier.minVariance() : frontier.maxReturn();
  if (frontier.degenerate() || end.m === start.m) return null;

  let target = start.m;
  for (const constraint of violated) {
    const slack = (point: FramePoint): number => constraint.slack(point.m, Math.sqrt(point.variance));
    const met = firstMetPoint(frontier, slack, start.m, end);
    if (met === null) return null;
    const root = bisect(frontier, slack, start.m, met);
    target = toward < 0 ? Math.min(target, root) : Math.max(target, root);
  }
  const point = frontier.at(target);
  const volatility = Math.sqrt(point.variance);
  return constraints.every((c) => c.slack(point.m, volatility) >= -FEASIBILITY_TOLERANCE) ? point : null;
}

/**
 * A frontier return between `from` (constraint violated) and the end point
 * where the constraint holds: the end itself if it holds there, else the
 * maximiser of the (concave) slack found by golden-section search, stopping
 * at the first point that holds; null when the slack's maximum is negative.
 */
function firstMetPoint(frontier: Frontier, slack: (p: FramePoint) => number, from: number, end: FramePoint): number | null {
  if (slack(end) >= 0) return end.m;
  let found: number | null = null;
  goldenSection(frontier, from, end.m, (point) => {
    const value = slack(point);
    if (value >= 0) found = point.m;
    return -value; // minimise −slack
  }, () => found !== null);
  return found;
}

/**
 * Bisection for the boundary of {m : slack ≥ 0} between `bad` (slack < 0)
 * and `good` (slack ≥ 0); returns the last `good` end, so the constraint
 * holds there as evaluated. Runs until the two ends are adjacent doubles.
 */
function bisect(frontier: Frontier, slack: (p: FramePoint) => number, bad: number, good: number): number {
  for (let iteration = 0; iteration < 2100; iteration++) {
    const middle = bad + (good - bad) / 2;
    if (middle === bad || middle === good) return good;
    if (slack(frontier.at(middle)) >= 0) good = middle;
    else bad = middle;
  }
  throw new MetricError('optimalMix did not converge: the bisection on the frontier did not narrow');
}

/**
 * Golden-section minimisation of f over [a, b] (in either order) keeping the
 * best point seen; stops when the bracket is 1e-13 of the frontier's range
 * wide or when `stop()` says so. Returns the best return found.
 * Source: Kiefer (1953), "Sequential minimax search for a maximum",
 * Proc. American Mathematical Society 4(3), 502–506.
 */
function goldenSection(
  frontier: Frontier,
  a: number,
  b: number,
  f: (p: FramePoint) => number,
  stop: () => boolean = () => false,
): { m: number; value: number } {
  const ratio = (Math.sqrt(5) - 1) / 2;
  const width = frontier.maxReturn().m - frontier.minVariance().m;
  let lo = Math.min(a, b);
  let hi = Math.max(a, b);
  let best = { m: lo, value: f(frontier.at(lo)) };
  const consider = (m: number): number => {
    const value = f(frontier.at(m));
    if (value < best.value) best = { m, value };
    return value;
  };
  consider(hi);
  let x1 = hi - ratio * (hi - lo);
  let x2 = lo + ratio * (hi - lo);
  let f1 = consider(x1);
  let f2 = consider(x2);
  for (let iteration = 0; iteration < 200 && !stop(); iteration++) {
    if (hi - lo <= 1e-13 * width) return best;
    if (f1 <= f2) {
      hi = x2;
      x2 = x1;
      f2 = f1;
      x1 = hi - ratio * (hi - lo);
      f1 = consider(x1);
    } else {
      lo = x1;
      x1 = x2;
      f1 = f2;
      x2 = lo + ratio * (hi - lo);
      f2 = consider(x2);
    }
  }
  if (stop()) return best;
  throw new MetricError('optimalMix did not converge: the golden-section search did not narrow');
}

// ---------------------------------------------------------------------------
// Fallback when no mix meets every constraint

function fallbackMix(frontier: Frontier, maxVolatility: number | null, rules: readonly ShortfallRule[]): FramePoint {
  const low = frontier.minVariance();
  if (rules.length === 0 || frontier.degenerate()) return low;
  let high = frontier.maxReturn();
  if (maxVolatility !== null && Math.sqrt(low.variance) <= maxVolatility && Math.sqrt(high.variance) > maxVolatility) {
    const withinCeiling = (p: FramePoint): number => maxVolatility - Math.sqrt(p.variance);
    high = frontier.at(bisect(frontier, withinCeiling, high.m, low.m));
  }
  const worstRatio = (point: FramePoint): number => {
    const volatility = Math.sqrt(point.variance);
    return Math.max(...rules.map((rule) => logShortfallProbability(rule, point.m, volatility) - Math.log1p(-rule.confidence)));
  };
  const grid: number[] = [];
  for (let k = 0; k < FALLBACK_GRID_POINTS; k++) {
    grid.push(low.m + ((high.m - low.m) * k) / (FALLBACK_GRID_POINTS - 1));
  }
  grid[grid.length - 1] = high.m;
  const values = grid.map((m) => worstRatio(frontier.at(m)));
  let bestIndex = 0;
  values.forEach((value, k) => {
    if (value < values[bestIndex]!) bestIndex = k;
  });
  const left = grid[Math.max(0, bestIndex - 1)]!;
  const right = grid[Math.min(grid.length - 1, bestIndex + 1)]!;
  const best = goldenSection(frontier, left, right, worstRatio);
  return frontier.at(best.value <= values[bestIndex]! ? best.m : grid[bestIndex]!);
}

/**
 * ln P for a rule's normal shortfall probability, accurate far into the tail:
 * ln Φ(−d) from the cdf for d < 5 and from Laplace's continued fraction for
 * the Mills ratio beyond (Abramowitz & Stegun 1964, eq. 26.2.14).
 */
function logShortfallProbability(rule: ShortfallRule, m: number, volatility: number): number {
  const { threshold: q, horizonYears: h } = rule;
  const distance = (gap: number, spread: number): number => (spread === 0 ? (gap > 0 ? Infinity : -Infinity) : gap / spread);
  switch (rule.basis) {
    case 'average':
      return logUpperTail(distance(m - q, volatility / Math.sqrt(h)));
    case 'cumulative':
      return logUpperTail(distance(m * h - q, volatility * Math.sqrt(h)));
    case 'every_year': {
      const logYear = logUpperTail(distance(m - q, volatility));
      const year = Math.exp(logYear);
      if (year < 1e-12) return Math.log(h) + logYear + Math.log1p((-(h - 1) * year) / 2);
      return Math.log(-Math.expm1(h * Math.log1p(-year)));
    }
  }
}

/** ln Φ(−d) = ln P(Z > d). */
function logUpperTail(d: number): number {
  if (d === Infinity) return -Infinity;
  if (d < 5) return Math.log(normalCdf(-d));
  // Φ(−d) = φ(d) / (d + 1/(d + 2/(d + 3/(d + …)))), evaluated backwards.
  let fraction = d;
  for (let k = 80; k >= 1; k--) fraction = d + k / fraction;
  return -0.5 * d * d - 0.5 * Math.log(2 * Math.PI) - Math.log(fraction);
}

// ---------------------------------------------------------------------------
// The frontier: x(m) by QP, cached, interpolated inside a known affine piece

interface FramePoint {
  /** Expected return μᵀx. */
  readonly m: number;
  readonly variance: number;
  readonly weights: readonly number[];
  /** Which classes sit at their min (L) or max (U); null = never interpolate to this point. */
  readonly pattern: string | null;
}

interface Frontier {
  minVariance(): FramePoint;
  maxReturn(): FramePoint;
  /** True when every mix in the ranges has (almost) the same expected return. */
  degenerate(): boolean;
  /** The frontier mix with expected return m (clamped to the efficient range). */
  at(m: number): FramePoint;
  /** The unconstrained utility optimum, also recorded as a frontier point. */
  utilityOptimum(riskAversion: number): FramePoint;
}

function createFrontier(
  mu: readonly number[],
  sigma: readonly (readonly number[])[],
  bounds: readonly (readonly [number, number])[],
): Frontier {
  const n = mu.length;
  const lowerBounds = bounds.map((b) => b[0]);
  const upperBounds = bounds.map((b) => b[1]);
  const budget = { coefficients: new Array<number>(n).fill(1), value: 1 };
  const zeros = new Array<number>(n).fill(0);
  const toPoint = (weights: number[], pattern: boolean): FramePoint => {
    let m = 0;
    for (let i = 0; i < n; i++) m += mu[i]! * weights[i]!;
    return { m, variance: varianceOf(sigma, weights), weights, pattern: pattern ? patternOf(weights, bounds) : null };
  };
  const solve = (problem: Omit<QuadraticProgram, 'lowerBounds' | 'upperBounds' | 'hessian'>): number[] =>
    solveQuadraticProgram({ ...problem, hessian: sigma, lowerBounds, upperBounds }).solution;

  let low: FramePoint | undefined;
  let high: FramePoint | undefined;
  const cache: FramePoint[] = []; // interior points, strictly increasing m
  const minVariance = (): FramePoint =>
    (low ??= toPoint(solve({ linear: zeros, equalities: [budget] }), true));
  const maxReturn = (): FramePoint => {
    high ??= toPoint(maxReturnWeights(mu, sigma, bounds), false);
    // Rounding may put the max-return mix a hair below the minimum-variance mix when all μ are equal.
    if (high.m < minVariance().m) high = { ...high, m: minVariance().m };
    return high;
  };
  const degenerate = (): boolean => maxReturn().m - minVariance().m <= DEGENERATE_RANGE;

  const insert = (point: FramePoint): void => {
    let k = cache.length;
    while (k > 0 && cache[k - 1]!.m > point.m) k--;
    if (k > 0 && cache[k - 1]!.m === point.m) return;
    cache.splice(k, 0, point);
  };

  const at = (m: number): FramePoint => {
    const first = minVariance();
    const last = maxReturn();
    if (m <= first.m) return first;
    if (m >= last.m) return last;
    // Neighbours among the known points (end points included).
    let left = first;
    let right = last;
    for (const point of cache) {
      if (point.m === m) return point;
      if (point.m < m) left = point;
      else {
        right = point;
        break;
      }
    }
    if (left.pattern !== null && left.pattern === right.pattern) {
      const fraction = (m - left.m) / (right.m - left.m);
      const weights = left.weights.map((w, i) => (w === right.weights[i] ? w : w + fraction * (right.weights[i]! - w)));
      return { m, variance: varianceOf(sigma, weights), weights, pattern: left.pattern };
    }
    const weights = solve({ linear: zeros, equalities: [budget, { coefficients: mu, value: m }] });
    const point: FramePoint = { m, variance: varianceOf(sigma, weights), weights, pattern: patternOf(weights, bounds) };
    insert(point);
    return point;
  };

  const utilityOptimum = (riskAversion: number): FramePoint => {
    const weights = solve({ linear: mu.map((value) => value / riskAversion), equalities: [budget] });
    const point = toPoint(weights, true);
    if (point.m > minVariance().m && point.m < maxReturn().m) insert(point);
    return point;
  };

  return { minVariance, maxReturn, degenerate, at, utilityOptimum };
}

/**
 * The least-variance mix among those of highest expected return: fill the
 * ranges from their minimums, class by class in decreasing μ (the linear
 * program max μᵀx over the ranges and Σx = 1 is a continuous knapsack,
 * Dantzig 1957, "Discrete-variable extremum problems", Operations Research
 * 5(2), 266–288); classes tied in μ at the margin share the remainder by a
 * minimum-variance QP with the others fixed.
 */
function maxReturnWeights(
  mu: readonly number[],
  sigma: readonly (readonly number[])[],
  bounds: readonly (readonly [number, number])[],
): number[] {
  const n = mu.length;
  const weights = bounds.map((b) => b[0]);
  let remainder = 1 - weights.reduce((sum, w) => sum + w, 0);
  const order = mu.map((_, i) => i).sort((i, j) => mu[j]! - mu[i]!);
  for (let start = 0; start < n && remainder > 0; ) {
    let end = start;
    while (end < n && mu[order[end]!] === mu[order[start]!]) end++;
    const group = order.slice(start, end);
    const capacity = group.reduce((sum, i) => sum + (bounds[i]![1] - bounds[i]![0]), 0);
    if (capacity <= remainder) {
      for (const i of group) weights[i] = bounds[i]![1];
      remainder -= capacity;
    } else if (group.length === 1) {
      weights[group[0]!] = bounds[group[0]!]![0] + remainder;
      remainder = 0;
    } else {
      const inGroup = new Set(group);
      const solution = solveQuadraticProgram({
        hessian: sigma,
        linear: new Array<number>(n).fill(0),
        equalities: [{ coefficients: new Array<number>(n).fill(1), value: 1 }],
        lowerBounds: weights.map((w, i) => (inGroup.has(i) ? bounds[i]![0] : w)),
        upperBounds: weights.map((w, i) => (inGroup.has(i) ? bounds[i]![1] : w)),
      }).solution;
      for (const i of group) weights[i] = solution[i]!;
      remainder = 0;
    }
    start = end;
  }
  return weights;
}

/** max cᵀx over the ranges with Σx = 1: the greedy fill of maxReturnWeights without tie handling. */
function linearMaximum(c: readonly number[], bounds: readonly (readonly [number, number])[]): number {
  let remainder = 1 - bounds.reduce((sum, b) => sum + b[0], 0);
  let value = bounds.reduce((sum, b, i) => sum + c[i]! * b[0], 0);
  for (const i of c.map((_, k) => k).sort((i, j) => c[j]! - c[i]!)) {
    const step = Math.min(remainder, bounds[i]![1] - bounds[i]![0]);
    value += c[i]! * step;
    remainder -= step;
  }
  return value;
}

function patternOf(weights: readonly number[], bounds: readonly (readonly [number, number])[]): string {
  return weights.map((w, i) => (w === bounds[i]![0] ? 'L' : w === bounds[i]![1] ? 'U' : '-')).join('');
}

function varianceOf(sigma: readonly (readonly number[])[], weights: readonly number[]): number {
  let sum = 0;
  for (let i = 0; i < weights.length; i++) {
    let row = 0;
    for (let j = 0; j < weights.length; j++) row += sigma[i]![j]! * weights[j]!;
    sum += weights[i]! * row;
  }
  return Math.max(0, sum);
}

function checkUniverse(
  caller: string,
  mu: readonly number[],
  sigma: readonly (readonly number[])[],
  bounds: readonly (readonly [number, number])[],
): void {
  const n = mu.length;
  if (n === 0) throw new MetricError(`${caller} requires at least 1 asset class, got 0`);
  if (sigma.length !== n || sigma.some((row) => row.length !== n)) {
    throw new MetricError(`${caller} requires an ${n} × ${n} covariance matrix to match ${n} expected returns`);
  }
  if (bounds.length !== n) throw new MetricError(`${caller} requires ${n} allocation ranges, got ${bounds.length}`);
  mu.forEach((value, i) => {
    if (!Number.isFinite(value)) throw new MetricError(`${caller} requires finite expected returns, got ${value} at ${i}`);
  });
  sigma.forEach((row, i) =>
    row.forEach((value, j) => {
      if (!Number.isFinite(value)) throw new MetricError(`${caller} requires a finite covariance matrix, got ${value} at (${i}, ${j})`);
    }),
  );
  let lowSum = 0;
  let highSum = 0;
  bounds.forEach(([low, high], i) => {
    if (!(Number.isFinite(low) && Number.isFinite(high) && low <= high)) {
      throw new MetricError(`${caller} requires finite allocation ranges with min ≤ max, got [${low}, ${high}] at ${i}`);
    }
    lowSum += low;
    highSum += high;
  });
  if (lowSum > 1 + 1e-12 || highSum < 1 - 1e-12) {
    throw new MetricError(
      `${caller} requires allocation ranges that admit a fully invested mix, got minimums summing to ${lowSum} ` +
        `and maximums summing to ${highSum}`,
    );
  }
}
