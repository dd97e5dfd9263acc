/**
 * Bracketed root finding for the money-weighted return.
 */
import { MetricError } from '../errors.ts';

const MACHINE_EPSILON = Number.EPSILON;

export interface BrentOptions {
  /** Absolute tolerance on x added to the relative 2ε|x| term (Brent's `t`); default 1e-15. */
  readonly absoluteTolerance?: number;
  /** Iterations allowed before the search is declared non-convergent; default 200. */
  readonly maxIterations?: number;
}

/**
 * Brent's method: the root of a continuous f in a bracket [a, b] with
 * f(a)·f(b) ≤ 0.
 * Each step takes inverse quadratic interpolation (or the secant step when only
 * two points are distinct) when it lands inside the bracket and shrinks it fast
 * enough, and bisection otherwise, so the bracket always contains a sign change
 * and convergence is guaranteed; it stops when the bracket is narrower than
 * 2·(2ε|x| + t/2). Running out of iterations is an error, never a best effort.
 * Source: Brent (1973), Algorithms for Minimization without Derivatives,
 * Prentice-Hall, chapter 4, ALGOL 60 procedure `zero`; the same algorithm as
 * netlib `zeroin.f`; SciPy's `brentq` implements a close variant.
 */
export function findRootBrent(
  f: (x: number) => number,
  lowerBound: number,
  upperBound: number,
  options: BrentOptions = {},
): number {
  const absoluteTolerance = options.absoluteTolerance ?? 1e-15;
  const maxIterations = options.maxIterations ?? 200;
  let a = lowerBound;
  let b = upperBound;
  let fa = f(a);
  let fb = f(b);
  if (!Number.isFinite(fa) || !Number.isFinite(fb)) {
    throw new MetricError(`findRootBrent requires finite function values at the bracket, got f(${a}) = ${fa}, f(${b}) = ${fb}`);
  }
  if (fa === 0) return a;
  if (fb === 0) return b;
  if (Math.sign(fa) === Math.sign(fb)) {
    throw new MetricError(`findRootBrent requires a sign change over the bracket, got f(${a}) = ${fa}, f(${b}) = ${fb}`);
  }
  // c is the previous iterate on the other side of the root; d the last step, e the one before.
  let c = a;
  let fc = fa;
  let d = b - a;
  let e = d;
  for (let iteration = 0; iteration < maxIterations; iteration += 1) {
    if (Math.sign(fb) === Math.sign(fc)) {
      c = a;
      fc = fa;
      d = b - a;
      e = d;
    }
    if (Math.abs(fc) < Math.abs(fb)) {
      // keep b the best estimate
      a = b;
      b = c;
      c = a;
      fa = fb;
      fb = fc;
      fc = fa;
    }
    const tolerance = 2 * MACHINE_EPSILON * Math.abs(b) + 0.5 * absoluteTolerance;
    const halfInterval = 0.5 * (c - b);
    if (Math.abs(halfInterval) <= tolerance || fb === 0) return b;
    if (Math.abs(e) < tolerance || Math.abs(fa) <= Math.abs(fb)) {
      d = halfInterval; // bisection
      e = d;
    } else {
      let p: number;
      let q: number;
      const s = fb / fa;
      if (a === c) {
        p = 2 * halfInterval * s; // secant
        q = 1 - s;
      } else {
        const qa = fa / fc; // inverse quadratic interpolation
        const r = fb / fc;
        p = s * (2 * halfInterval * qa * (qa - r) - (b - a) * (r - 1));
        q = (qa - 1) * (r - 1) * (s - 1);
      }
      if (p > 0) q = -q;
      else p = -p;
      if (2 * p < 3 * halfInterval * q - Math.abs(tolerance * q) && p < Math.abs(0.5 * e * q)) {
        e = d; // accept interpolation
        d = p / q;
      } else {
        d = halfInterval; // interpolation would not shrink the bracket enough: bisect
        e = d;
      }
    }
    a = b;
    fa = fb;
    b += Math.abs(d) > tolerance ? d : halfInterval > 0 ? tolerance : -tolerance;
    fb = f(b);
    if (!Number.isFinite(fb)) {
      throw new MetricError(`findRootBrent requires finite function values, got f(${b}) = ${fb}`);
    }
  }
  throw new MetricError(
    `findRootBrent did not converge in ${maxIterations} iterations (bracket [${Math.min(b, c)}, ${Math.max(b, c)}])`,
  );
}
