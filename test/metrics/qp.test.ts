/**
 * Tests of src/metrics/qp.ts.
 *
 * References:
 * - The example of R's quadprog documentation (solve.QP): minimise
 *   -(0 5 0)'b + b'b/2 subject to A'b >= (-8, 2, 0)'. Its active set is the
 *   second and third constraint, which gives b = (10/21, 22/21, 44/21) and
 *   value -50/21 by hand; SciPy agrees:
 *     minimize(lambda x: -d @ x + 0.5 * x @ x, zeros(3), method='SLSQP',
 *              constraints=[{'type': 'ineq', 'fun': lambda x: A.T @ x - b0}], options={'ftol': 1e-15})
 *     -> [0.47619047644883394, 1.0476190471023366, 2.0952380942046607], -2.380952380952406
 * - A riskless asset under a budget constraint (singular Σ, positive definite
 *   on the budget's null space): the KKT conditions S x - mu/3 = g 1 solved by
 *   hand give x = (52/105, 29/105, 8/35); SciPy SLSQP (same script, bounds
 *   [0, 1], sum x = 1): [0.49523810732362833, 0.27619047072951664, 0.22857142194685504].
 */
import { describe, expect, it } from 'vitest';
import { MetricError } from '../../src/errors.ts';
import { solveQuadraticProgram } from '../../src/metrics/qp.ts';

const FREE = [-Infinity, -Infinity, -Infinity];
const UNBOUNDED = [Infinity, Infinity, Infinity];

describe('solveQuadraticProgram', () => {
  it("solve.QP's documented example: (10/21, 22/21, 44/21), value -50/21", () => {
    const result = solveQuadraticProgram({
      hessian: [[1, 0, 0], [0, 1, 0], [0, 0, 1]],
      linear: [0, 5, 0],
      equalities: [],
      inequalities: [
        { coefficients: [-4, -3, 0], value: -8 },
        { coefficients: [2, 1, 0], value: 2 },
        { coefficients: [0, -2, 1], value: 0 },
      ],
      lowerBounds: FREE,
      upperBounds: UNBOUNDED,
    });
    [10 / 21, 22 / 21, 44 / 21].forEach((v, i) => expect(result.solution[i]).toBeCloseTo(v, 15));
    expect(result.objective).toBeCloseTo(-50 / 21, 15);
  });

  it('a riskless asset: singular covariance, positive definite on the budget subspace', () => {
    const sigma = [[0, 0, 0], [0, 0.04, 0.01], [0, 0.01, 0.09]];
    const result = solveQuadraticProgram({
      hessian: sigma,
      linear: [0.01 / 3, 0.05 / 3, 0.08 / 3],
      equalities: [{ coefficients: [1, 1, 1], value: 1 }],
      lowerBounds: [0, 0, 0],
      upperBounds: [1, 1, 1],
    });
    [52 / 105, 29 / 105, 8 / 35].forEach((v, i) => expect(result.solution[i]).toBeCloseTo(v, 15));
  });

  it('a fixed variable (lower = upper) is substituted; active bounds are met exactly and the budget to rounding', () => {
    const result = solveQuadraticProgram({
      hessian: [[0.04, 0.01, 0], [0.01, 0.09, 0], [0, 0, 0.01]],
      linear: [0.5, 0.8, 0],
      equalities: [{ coefficients: [1, 1, 1], value: 1 }],
      lowerBounds: [0, 0, 0.25],
      upperBounds: [0.3, 0.6, 0.25],
    });
    // The linear term favours the second weight, which goes to its maximum 0.6; the fixed one stays at
    // 0.25; the first takes the rest of the budget, 0.15 (the KKT conditions hold with a positive
    // multiplier on x1 <= 0.6: partial derivatives -0.8 + 0.0555 for x1 versus -0.5 + 0.012 for x0).
    expect(result.solution[2]).toBe(0.25);
    expect(result.solution[1]).toBe(0.6);
    expect(result.solution[0]).toBeCloseTo(0.15, 16);
  });

  it('inconsistent constraints are an error, never a best effort', () => {
    expect(() =>
      solveQuadraticProgram({
        hessian: [[1, 0], [0, 1]],
        linear: [0, 0],
        equalities: [{ coefficients: [1, 1], value: 1 }],
        lowerBounds: [0, 0],
        upperBounds: [0.3, 0.3],
      }),
    ).toThrow(new MetricError('solveQuadraticProgram found the constraints inconsistent: no x satisfies them all'));
    expect(() =>
      solveQuadraticProgram({
        hessian: [[1, 0], [0, 1]],
        linear: [0, 0],
        equalities: [
          { coefficients: [1, 1], value: 1 },
          { coefficients: [2, 2], value: 3 },
        ],
        lowerBounds: [-Infinity, -Infinity],
        upperBounds: [Infinity, Infinity],
      }),
    ).toThrow(new MetricError('solveQuadraticProgram found the equality constraints inconsistent: no x satisfies them all'));
  });

  it('a Hessian that is singular on the feasible subspace is refused by name', () => {
    expect(() =>
      solveQuadraticProgram({
        hessian: [[0.04, 0.04, 0], [0.04, 0.04, 0], [0, 0, 0.01]],
        linear: [0, 0, 0],
        equalities: [{ coefficients: [1, 1, 1], value: 1 }],
        lowerBounds: [0, 0, 0],
        upperBounds: [1, 1, 1],
      }),
    ).toThrow(/^solveQuadraticProgram requires a Hessian that is positive definite on the feasible subspace; it is singular/);
  });

  it('bad shapes are refused', () => {
    expect(() =>
      solveQuadraticProgram({ hessian: [[1, 0], [1, 1]], linear: [0, 0], equalities: [], lowerBounds: [0, 0], upperBounds: [1, 1] }),
    ).toThrow(new MetricError('solveQuadraticProgram requires a symmetric Hessian, got 0 at (0, 1) and 1 at (1, 0)'));
    expect(() =>
      solveQuadraticProgram({ hessian: [[1]], linear: [0], equalities: [], lowerBounds: [1], upperBounds: [0] }),
    ).toThrow(MetricError);
  });
});
