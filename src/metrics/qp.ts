/**
 * The one wrapper around the quadratic-programming library.
 *
 * Problem solved:
 *
 *   minimise   ½ xᵀ H x − cᵀ x
 *   subject to aᵀ x = value        for every equality,
 *              aᵀ x ≥ value        for every inequality,
 *              lower ≤ x ≤ upper   (±Infinity for a missing bound).
 *
 * Sign convention: the linear term enters with a minus sign, as in the
 * library (and in R's solve.QP, which it ports), so a mean-variance problem
 * "maximise μᵀx − (a/2) xᵀΣx" is passed as hessian = aΣ, linear = μ.
 *
 * Library: `quadprog` (Goldfarb & Idnani 1983, "A numerically stable dual
 * method for solving strictly convex quadratic programs", Mathematical
 * Programming 27, 1–33). Chosen over `highs` because our problems are tiny
 * (≤ 40 variables) and dense; it is synchronous (no WebAssembly module to load,
 * so callers stay plain functions); it is an active-set method, so the answer
 * is a vertex-exact KKT point rather than an interior-point approximation
 * with a 1e-7 tolerance, which the optimiser's 1e-8 constraint requirement
 * and its piecewise-affine frontier (see optimise.ts) rely on.
 *
 * Before calling the library this module
 * 1. substitutes variables whose bounds coincide (lower = upper),
 * 2. removes the equalities by a null-space substitution x = x₀ + Z y
 *    (x₀ the minimum-norm solution, Z an orthonormal basis of the null space),
 *    so the Hessian only has to be positive definite on the feasible
 *    subspace (ZᵀHZ); a covariance matrix with one riskless asset passes
 *    this test under a budget constraint even though it is singular,
 * 3. checks ZᵀHZ by a Cholesky factorisation with a relative pivot guard.
 * After the call it checks KKT stationarity with the library's multipliers,
 * then re-solves once on the final active set (active bounds fixed, active
 * inequalities as equalities: a direct solve) so that the dual method's
 * rounding does not leak into the answer, e.g. at a vertex the one free
 * weight is exactly 1 minus the others, and verifies feasibility. An inconsistent constraint set,
 * a Hessian that is not positive definite on the feasible subspace, or an
 * answer that fails verification raises MetricError; nothing is returned on
 * a best-effort basis. The library has no iteration limit; the dual method
 * terminates finitely because every step strictly increases the dual
 * objective (Goldfarb & Idnani 1983).
 */
import { solveQP } from 'quadprog';
import { MetricError } from '../errors.ts';

/** aᵀx = value (equality) or aᵀx ≥ value (inequality). */
export interface LinearConstraint {
  readonly coefficients: readonly number[];
  readonly value: number;
}

export interface QuadraticProgram {
  /** Symmetric n × n matrix H. */
  readonly hessian: readonly (readonly number[])[];
  /** c in ½xᵀHx − cᵀx. */
  readonly linear: readonly number[];
  readonly equalities: readonly LinearConstraint[];
  readonly inequalities?: readonly LinearConstraint[];
  /** −Infinity where a variable has no lower bound. */
  readonly lowerBounds: readonly number[];
  /** +Infinity where a variable has no upper bound. */
  readonly upperBounds: readonly number[];
}

export interface QuadraticProgramSolution {
  /** The minimiser. A variable held at a bound by an active bound constraint equals that bound exactly. */
  readonly solution: number[];
  /** ½xᵀHx − cᵀx at the solution. */
  readonly objective: number;
}

/** Relative pivot below which the reduced Hessian is treated as singular. */
const SINGULAR_PIVOT_GUARD = 1e-12;
/** Relative tolerance of the post-solve feasibility and stationarity checks. */
const VERIFY_TOLERANCE = 1e-9;
/** A row of the equality system whose residual norm falls below this fraction of its own norm depends on earlier rows. */
const DEPENDENT_ROW_GUARD = 1e-10;

/**
 * Quadratic program: minimise ½xᵀHx − cᵀx subject to linear equalities,
 * inequalities (aᵀx ≥ value) and bounds.
 * Convention: linear term with a minus sign (as R's solve.QP); H must be
 * positive definite on the subspace left free by the equalities and fixed
 * variables, checked by Cholesky with a relative pivot guard of 1e-12.
 * Method: dual active set of Goldfarb & Idnani (1983), "A numerically stable
 * dual method for solving strictly convex quadratic programs", Math.
 * Programming 27, 1–33, via the `quadprog` package, after a null-space
 * elimination of the equalities (Nocedal & Wright 2006, Numerical
 * Optimization, section 16.2).
 * Throws MetricError when the constraints are inconsistent, the Hessian is
 * not positive definite there, or the answer fails its KKT check.
 */
export function solveQuadraticProgram(problem: QuadraticProgram): QuadraticProgramSolution {
  const n = problem.linear.length;
  checkProblem(problem, n);
  const first = solveReduced(problem);
  const x = polish(problem, first) ?? first.x;
  verify(problem, x);
  return { solution: x, objective: 0.5 * quadraticForm(x, problem.hessian, x) - dot(problem.linear, x) };
}

interface ReducedSolution {
  readonly x: number[];
  readonly activeBounds: ReadonlyArray<{ variable: number; bound: number }>;
  /** Indices into problem.inequalities of those active at the solution. */
  readonly activeInequalities: readonly number[];
}

/**
 * Active-set refinement: re-solve with the active bounds fixed and the active
 * inequalities as equalities (an equality-constrained QP, solved directly),
 * which removes the dual method's rounding from the solution (at a vertex
 * the free weights then follow exactly from the budget). Kept only when it
 * still satisfies the remaining bounds and inequalities; else null.
 */
function polish(problem: QuadraticProgram, first: ReducedSolution): number[] | null {
  if (first.activeBounds.length === 0 && first.activeInequalities.length === 0) return null;
  const n = problem.linear.length;
  const lowerBounds = new Array<number>(n).fill(-Infinity);
  const upperBounds = new Array<number>(n).fill(Infinity);
  for (let i = 0; i < n; i++) {
    if (problem.lowerBounds[i] === problem.upperBounds[i]) {
      lowerBounds[i] = problem.lowerBounds[i]!;
      upperBounds[i] = problem.upperBounds[i]!;
    }
  }
  for (const { variable, bound } of first.activeBounds) {
    lowerBounds[variable] = bound;
    upperBounds[variable] = bound;
  }
  const inequalities = problem.inequalities ?? [];
  let refined: number[];
  try {
    refined = solveReduced({
      hessian: problem.hessian,
      linear: problem.linear,
      equalities: [...problem.equalities, ...first.activeInequalities.map((k) => inequalities[k]!)],
      lowerBounds,
      upperBounds,
    }).x;
  } catch (error) {
    if (error instanceof MetricError) return null;
    throw error;
  }
  const tolerance = 1e-12 * Math.max(1, ...refined.map(Math.abs));
  for (let i = 0; i < n; i++) {
    if (!(refined[i]! >= problem.lowerBounds[i]! - tolerance && refined[i]! <= problem.upperBounds[i]! + tolerance)) return null;
  }
  for (const inequality of inequalities) {
    if (!(dot(inequality.coefficients, refined) >= inequality.value - tolerance * Math.max(1, Math.abs(inequality.value)))) return null;
  }
  return refined;
}

/** Fixed-variable substitution, null-space elimination, Cholesky guard and the library call. */
function solveReduced(problem: QuadraticProgram): ReducedSolution {
  const n = problem.linear.length;
  const { hessian, linear, lowerBounds, upperBounds } = problem;
  const inequalities = problem.inequalities ?? [];

  // 1. Substitute fixed variables (lower = upper).
  const x = new Array<number>(n).fill(0);
  const free: number[] = [];
  for (let i = 0; i < n; i++) {
    if (lowerBounds[i] === upperBounds[i]) x[i] = lowerBounds[i]!;
    else free.push(i);
  }
  const p = free.length;
  const hessianFree: number[][] = [];
  const linearFree: number[] = [];
  for (let a = 0; a < p; a++) {
    const i = free[a]!;
    const row = hessian[i]!;
    const reducedRow = new Array<number>(p);
    for (let b = 0; b < p; b++) reducedRow[b] = row[free[b]!]!;
    hessianFree.push(reducedRow);
    let value = linear[i]!;
    if (p < n) for (let j = 0; j < n; j++) if (lowerBounds[j] === upperBounds[j]) value -= row[j]! * x[j]!;
    linearFree.push(value);
  }
  const reduceRow = (constraint: LinearConstraint): ReducedRow => {
    let value = constraint.value;
    let norm = 0;
    const a = new Array<number>(p);
    for (let k = 0; k < p; k++) {
      const coefficient = constraint.coefficients[free[k]!]!;
      a[k] = coefficient;
      norm += coefficient * coefficient;
    }
    if (p < n) for (let i = 0; i < n; i++) if (lowerBounds[i] === upperBounds[i]) value -= constraint.coefficients[i]! * x[i]!;
    return { a, value, norm: Math.sqrt(norm) };
  };

  // 2. Equalities: orthonormal rows Q (r × p) with right-hand sides β, then x₀ = Qᵀβ, Z = complement.
  const { rows: equalityBasis, values: equalityValues } = orthonormaliseEqualities(problem.equalities.map(reduceRow));
  const particular = new Array<number>(p).fill(0);
  for (let k = 0; k < equalityBasis.length; k++) {
    const row = equalityBasis[k]!;
    for (let i = 0; i < p; i++) particular[i]! += equalityValues[k]! * row[i]!;
  }
  const nullBasis = orthonormalComplement(equalityBasis, p); // d columns, each of length p
  const d = nullBasis.length;

  // Constraints in y (x_free = x₀ + Z y): bounds first, then the general inequalities.
  const reducedInequalities: Array<{ a: number[]; value: number }> = [];
  const boundOf: Array<{ variable: number; bound: number } | number> = []; // a bound, or an inequality's index
  for (let k = 0; k < p; k++) {
    const variable = free[k]!;
    const zRow = new Array<number>(d);
    for (let j = 0; j < d; j++) zRow[j] = nullBasis[j]![k]!;
    const lower = lowerBounds[variable]!;
    const upper = upperBounds[variable]!;
    if (lower !== -Infinity) {
      reducedInequalities.push({ a: zRow, value: lower - particular[k]! });
      boundOf.push({ variable, bound: lower });
    }
    if (upper !== Infinity) {
      reducedInequalities.push({ a: zRow.map((v) => -v), value: particular[k]! - upper });
      boundOf.push({ variable, bound: upper });
    }
  }
  inequalities.forEach((inequality, index) => {
    const row = reduceRow(inequality);
    const a = new Array<number>(d);
    for (let j = 0; j < d; j++) a[j] = dot(nullBasis[j]!, row.a);
    reducedInequalities.push({ a, value: row.value - dot(row.a, particular) });
    boundOf.push(index);
  });

  let y: number[] = [];
  const activeBounds: Array<{ variable: number; bound: number }> = [];
  const activeInequalities: number[] = [];
  if (d > 0) {
    // ZᵀHZ via HZ (p × d), and Zᵀ(c − H x₀).
    const hz = nullBasis.map((z) => matrixVector(hessianFree, z)); // hz[j] = H z_j
    const hessianReduced: number[][] = [];
    for (let a = 0; a < d; a++) {
      const row = new Array<number>(d);
      for (let b = 0; b < d; b++) row[b] = dot(nullBasis[a]!, hz[b]!);
      hessianReduced.push(row);
    }
    for (let a = 0; a < d; a++) for (let b = 0; b < a; b++) hessianReduced[a]![b] = hessianReduced[b]![a]!;
    const gradientShift = matrixVector(hessianFree, particular);
    const linearReduced = new Array<number>(d);
    for (let j = 0; j < d; j++) linearReduced[j] = dot(nullBasis[j]!, linearFree) - dot(nullBasis[j]!, gradientShift);
    requirePositiveDefinite(hessianReduced);
    const result = callQuadprog(hessianReduced, linearReduced, reducedInequalities);
    y = result.y;
    for (const index of result.active) {
      const bound = boundOf[index]!;
      if (typeof bound === 'number') activeInequalities.push(bound);
      else activeBounds.push(bound);
    }
  }
  // else the equalities determine x; feasibility is checked by the caller.

  for (let k = 0; k < p; k++) {
    let value = particular[k]!;
    for (let j = 0; j < d; j++) value += nullBasis[j]![k]! * y[j]!;
    x[free[k]!] = value;
  }
  for (const { variable, bound } of activeBounds) x[variable] = bound;
  return { x, activeBounds, activeInequalities };
}

interface ReducedRow {
  readonly a: number[];
  readonly value: number;
  readonly norm: number;
}

function checkProblem(problem: QuadraticProgram, n: number): void {
  const fail = (what: string): never => {
    throw new MetricError(`solveQuadraticProgram requires ${what}`);
  };
  if (n === 0) fail('at least 1 variable, got 0');
  if (problem.hessian.length !== n || problem.hessian.some((row) => row.length !== n)) {
    fail(`an ${n} × ${n} Hessian to match ${n} linear coefficients`);
  }
  if (problem.lowerBounds.length !== n || problem.upperBounds.length !== n) fail(`${n} lower and upper bounds`);
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(problem.linear[i])) fail(`finite linear coefficients, got ${problem.linear[i]} at ${i}`);
    for (let j = 0; j < n; j++) {
      const value = problem.hessian[i]![j]!;
      if (!Number.isFinite(value)) fail(`a finite Hessian, got ${value} at (${i}, ${j})`);
      const mirror = problem.hessian[j]![i]!;
      if (Math.abs(value - mirror) > 1e-12 * Math.max(1, Math.abs(value), Math.abs(mirror))) {
        fail(`a symmetric Hessian, got ${value} at (${i}, ${j}) and ${mirror} at (${j}, ${i})`);
      }
    }
    const lower = problem.lowerBounds[i]!;
    const upper = problem.upperBounds[i]!;
    if (Number.isNaN(lower) || Number.isNaN(upper) || lower === Infinity || upper === -Infinity || lower > upper) {
      fail(`lower ≤ upper bounds with lower < ∞ and upper > −∞, got [${lower}, ${upper}] for variable ${i}`);
    }
  }
  for (const constraint of [...problem.equalities, ...(problem.inequalities ?? [])]) {
    if (constraint.coefficients.length !== n) fail(`constraints with ${n} coefficients, got ${constraint.coefficients.length}`);
    if (!constraint.coefficients.every(Number.isFinite) || !Number.isFinite(constraint.value)) {
      fail('finite constraint coefficients and values');
    }
  }
}

/**
 * Modified Gram–Schmidt (applied twice) on the equality rows, carrying the
 * right-hand sides; a row that becomes (numerically) zero is dependent and
 * must then have a zero right-hand side, else the equalities are inconsistent.
 */
function orthonormaliseEqualities(
  rows: readonly ReducedRow[],
): { rows: number[][]; values: number[] } {
  const basis: number[][] = [];
  const values: number[] = [];
  for (const { a, value, norm } of rows) {
    const residual = [...a];
    let rhs = value;
    for (let pass = 0; pass < 2; pass++) {
      basis.forEach((q, k) => {
        const coefficient = dot(q, residual);
        for (let i = 0; i < residual.length; i++) residual[i]! -= coefficient * q[i]!;
        rhs -= coefficient * values[k]!;
      });
    }
    const residualNorm = Math.sqrt(dot(residual, residual));
    if (residualNorm <= DEPENDENT_ROW_GUARD * norm || norm === 0) {
      if (Math.abs(rhs) > VERIFY_TOLERANCE * Math.max(1, Math.abs(value))) {
        throw new MetricError('solveQuadraticProgram found the equality constraints inconsistent: no x satisfies them all');
      }
      continue;
    }
    basis.push(residual.map((v) => v / residualNorm));
    values.push(rhs / residualNorm);
  }
  return { rows: basis, values };
}

/**
 * Orthonormal basis of the complement of the span of the given orthonormal
 * rows in ℝᵖ, from the Householder QR factorisation of the p × r matrix
 * whose columns are those rows (Golub & Van Loan 2013, Matrix Computations,
 * algorithm 5.2.1): the last p − r columns of Q.
 */
function orthonormalComplement(rows: readonly number[][], p: number): number[][] {
  const r = rows.length;
  const columns = rows.map((row) => [...row]);
  const reflectors: number[][] = [];
  for (let k = 0; k < r; k++) {
    const column = columns[k]!;
    let norm = 0;
    for (let i = k; i < p; i++) norm += column[i]! * column[i]!;
    norm = Math.sqrt(norm);
    const v = new Array<number>(p).fill(0);
    const alpha = column[k]! >= 0 ? -norm : norm;
    v[k] = column[k]! - alpha;
    for (let i = k + 1; i < p; i++) v[i] = column[i]!;
    const vNorm = Math.sqrt(dot(v, v));
    if (vNorm > 0) for (let i = k; i < p; i++) v[i]! /= vNorm;
    reflectors.push(v);
    for (let j = k; j < r; j++) reflect(v, columns[j]!);
  }
  const complement: number[][] = [];
  for (let j = r; j < p; j++) {
    const e = new Array<number>(p).fill(0);
    e[j] = 1;
    for (let k = r - 1; k >= 0; k--) reflect(reflectors[k]!, e);
    complement.push(e);
  }
  return complement;
}

function reflect(v: readonly number[], target: number[]): void {
  const scale = 2 * dot(v, target);
  for (let i = 0; i < target.length; i++) target[i]! -= scale * v[i]!;
}

/** Cholesky with a relative pivot guard: a pivot at or below 1e-12 × the largest diagonal entry means singular. */
function requirePositiveDefinite(matrix: readonly (readonly number[])[]): void {
  const m = matrix.length;
  const largestDiagonal = Math.max(0, ...matrix.map((row, i) => row[i]!));
  const factor: number[][] = matrix.map(() => new Array<number>(m).fill(0));
  for (let j = 0; j < m; j++) {
    let pivot = matrix[j]![j]!;
    for (let k = 0; k < j; k++) pivot -= factor[j]![k]! ** 2;
    if (!(pivot > SINGULAR_PIVOT_GUARD * largestDiagonal)) {
      throw new MetricError(
        'solveQuadraticProgram requires a Hessian that is positive definite on the feasible subspace; ' +
          `it is singular or nearly so (pivot ${pivot} at step ${j + 1} of ${m}), as when a covariance matrix ` +
          'has two perfectly correlated assets or more than one riskless asset',
      );
    }
    const root = Math.sqrt(pivot);
    factor[j]![j] = root;
    for (let i = j + 1; i < m; i++) {
      let value = matrix[i]![j]!;
      for (let k = 0; k < j; k++) value -= factor[i]![k]! * factor[j]![k]!;
      factor[i]![j] = value / root;
    }
  }
}

/** Calls quadprog (1-indexed arrays; it overwrites its inputs, so they are built fresh) and checks KKT stationarity. */
function callQuadprog(
  hessian: readonly (readonly number[])[],
  linear: readonly number[],
  inequalities: ReadonlyArray<{ a: number[]; value: number }>,
): { y: number[]; active: number[] } {
  const d = linear.length;
  const q = inequalities.length;
  const dmat: number[][] = [[]];
  const dvec: number[] = [0];
  const amat: number[][] = [[]];
  const bvec: number[] = [0];
  for (let i = 1; i <= d; i++) {
    dmat[i] = [0, ...hessian[i - 1]!];
    dvec[i] = linear[i - 1]!;
    amat[i] = [0];
    for (let k = 1; k <= q; k++) amat[i]![k] = inequalities[k - 1]!.a[i - 1]!;
  }
  for (let k = 1; k <= q; k++) bvec[k] = inequalities[k - 1]!.value;
  if (q === 0) {
    // quadprog needs at least one constraint column: add the always-true 0ᵀy ≥ −1.
    for (let i = 1; i <= d; i++) amat[i]![1] = 0;
    bvec[1] = -1;
  }
  const result = solveQP(dmat, dvec, amat, bvec, 0) as ReturnType<typeof solveQP> & { Lagrangian?: number[] };
  if (result.message !== '') {
    if (result.message.startsWith('constraints are inconsistent')) {
      throw new MetricError('solveQuadraticProgram found the constraints inconsistent: no x satisfies them all');
    }
    throw new MetricError(`solveQuadraticProgram failed: ${result.message}`);
  }
  const y = result.solution.slice(1, d + 1);
  const multipliers = result.Lagrangian ?? [];
  const active = result.iact.slice(1).filter((k) => k > 0 && k <= q).map((k) => k - 1);

  // Stationarity H y − c − Σ λₖ aₖ = 0 (λ ≥ 0 by construction of the dual method).
  const residual = matrixVector(hessian, y).map((v, i) => v - linear[i]!);
  let scale = 1;
  for (let i = 0; i < d; i++) scale = Math.max(scale, Math.abs(linear[i]!));
  for (const k of active) {
    const lambda = multipliers[k + 1] ?? 0;
    if (!(lambda >= -VERIFY_TOLERANCE * scale)) {
      throw new MetricError(`solveQuadraticProgram did not converge: negative multiplier ${lambda} on an active constraint`);
    }
    inequalities[k]!.a.forEach((coefficient, i) => {
      residual[i]! -= lambda * coefficient;
    });
    scale = Math.max(scale, Math.abs(lambda));
  }
  const hessianScale = Math.max(...hessian.map((row) => Math.max(...row.map(Math.abs)))) * Math.max(1, ...y.map(Math.abs));
  const worst = Math.max(...residual.map(Math.abs));
  if (!y.every(Number.isFinite) || !(worst <= VERIFY_TOLERANCE * Math.max(scale, hessianScale))) {
    throw new MetricError(`solveQuadraticProgram did not converge: stationarity residual ${worst}`);
  }
  return { y, active };
}

/** Feasibility of the final x in the original variables. */
function verify(problem: QuadraticProgram, x: readonly number[]): void {
  const scale = Math.max(1, ...x.map(Math.abs));
  const tolerance = VERIFY_TOLERANCE * scale;
  x.forEach((value, i) => {
    if (!(value >= problem.lowerBounds[i]! - tolerance && value <= problem.upperBounds[i]! + tolerance)) {
      throw new MetricError(
        `solveQuadraticProgram found the constraints inconsistent: variable ${i} = ${value} outside ` +
          `[${problem.lowerBounds[i]}, ${problem.upperBounds[i]}]`,
      );
    }
  });
  for (const equality of problem.equalities) {
    const residual = dot(equality.coefficients, x) - equality.value;
    if (!(Math.abs(residual) <= tolerance * Math.max(1, Math.abs(equality.value)))) {
      throw new MetricError(`solveQuadraticProgram found the constraints inconsistent: an equality is off by ${residual}`);
    }
  }
  for (const inequality of problem.inequalities ?? []) {
    const residual = dot(inequality.coefficients, x) - inequality.value;
    if (!(residual >= -tolerance * Math.max(1, Math.abs(inequality.value)))) {
      throw new MetricError(`solveQuadraticProgram found the constraints inconsistent: an inequality is violated by ${-residual}`);
    }
  }
}

function dot(a: readonly number[], b: readonly number[]): number {
  let sum = 0;
  for (let i = 0; i < a.length; i++) sum += a[i]! * b[i]!;
  return sum;
}

function matrixVector(matrix: readonly (readonly number[])[], v: readonly number[]): number[] {
  return matrix.map((row) => dot(row, v));
}

function quadraticForm(a: readonly number[], matrix: readonly (readonly number[])[], b: readonly number[]): number {
  let sum = 0;
  for (let i = 0; i < a.length; i++) {
    if (a[i] === 0) continue;
    sum += a[i]! * dot(matrix[i]!, b);
  }
  return sum;
}
