/**
 * Composite benchmark returns (methods: "Benchmark").
 */

/**
 * Composite benchmark return over consecutive sub-periods, chain-linked.
 *
 * In words: in each sub-period (a calendar month, or the first partial month
 * of a window that starts inside one) the composite earns the weighted sum of
 * its components' simple returns, r_b = Σ w_i (L_i,end / L_i,start − 1), as if
 * rebalanced to the target weights at the sub-period's start; sub-period
 * returns are then compounded, Π(1 + r_b) − 1.
 * Convention: total-return index levels, simple returns, monthly rebalancing.
 * Source: GIPS 2020 Standards for Firms, definition of a blended benchmark
 * rebalanced at a stated frequency; Bacon (2008), Practical Portfolio
 * Performance Measurement and Attribution, ch. 2 (chain-linking).
 *
 * `levels[i][k]` is component i's level at boundary k (boundaries = the
 * window start, each month end inside the window, the window end).
 */
export function compositeSubperiodReturns(weights: readonly number[], levels: readonly (readonly number[])[]): number[] {
  if (weights.length !== levels.length) {
    throw new RangeError(`compositeSubperiodReturns requires one level row per weight, got ${levels.length} rows for ${weights.length} weights`);
  }
  const boundaries = levels[0]?.length ?? 0;
  const returns: number[] = [];
  for (let k = 1; k < boundaries; k++) {
    let composite = 0;
    for (let i = 0; i < weights.length; i++) {
      const row = levels[i]!;
      const start = row[k - 1]!;
      const end = row[k]!;
      if (!(start > 0) || !(end > 0)) {
        throw new RangeError(`compositeSubperiodReturns requires positive index levels, got ${start} → ${end} for component ${i}`);
      }
      composite += weights[i]! * (end / start - 1);
    }
    returns.push(composite);
  }
  return returns;
}
