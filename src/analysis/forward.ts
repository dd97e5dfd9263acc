/**
 * The forward-looking half of a statement: expected risk, shortfall rules,
 * the optimal mix and frontier, and the checks that depend on them.
 */
import type { Check, ExpectedRisk, OptimalMix, ShortfallFigure } from './figures.ts';

export interface ForwardLooking {
  readonly expectedRisk: ExpectedRisk | null;
  /** Euler risk contribution per asset class (sums to the expected volatility). */
  readonly riskContributionByClass: ReadonlyMap<string, number> | null;
  readonly shortfall: readonly ShortfallFigure[] | null;
  readonly optimalMix: OptimalMix | null;
  readonly frontier: ReadonlyArray<{ readonly volatility: number; readonly expected_return: number }> | null;
  readonly benchmarkRisk: { readonly expectedReturn: number; readonly volatility: number } | null;
  /** max_volatility, max_tracking_error and shortfall.<i>. */
  readonly checks: readonly Check[];
  readonly notes: readonly string[];
}
