/**
 * Descriptive statistics of return series: mean, sample variance and
 * standard deviation, covariance, correlation and the covariance matrix.
 *
 * One convention throughout: *sample* statistics (divisor n − 1), computed
 * from mean-centred deviations, on plain decimal returns. Every function
 * refuses input it cannot use (fewer than 2 observations, series of unequal
 * length, a non-finite value) with a MetricError worded
 * `<function> requires <what>, got <what was found>`.
 */
import { MetricError } from '../errors.ts';

/**
 * Compensated sum Σ x_i.
 * Neumaier's improvement of Kahan summation: a running correction term
 * collects the low-order bits each addition drops, so the error bound is
 * about 2ε·Σ|x_i| independent of n (plain summation: n·ε·Σ|x_i|), and it stays
 * correct when an addend is larger than the running sum.
 * Source: Neumaier (1974), "Rundungsfehleranalyse einiger Verfahren zur
 * Summation endlicher Summen", ZAMM 54; Kahan (1965), "Further remarks on
 * reducing truncation errors", Communications of the ACM 8(1).
 */
export function compensatedSum(values: ArrayLike<number>): number {
  let sum = 0;
  let correction = 0;
  for (let index = 0; index < values.length; index += 1) {
    const value = values[index] as number;
    const next = sum + value;
    correction += Math.abs(sum) >= Math.abs(value) ? sum - next + value : value - next + sum;
    sum = next;
  }
  return sum + correction;
}

/** Refuses fewer than `minimum` observations or a non-finite value, naming the caller. */
export function requireFiniteObservations(
  functionName: string,
  values: ArrayLike<number>,
  minimum: number,
  noun = 'observations',
): void {
  if (values.length < minimum) {
    const counted = minimum === 1 ? noun.replace(/s$/, '') : noun;
    throw new MetricError(`${functionName} requires at least ${minimum} ${counted}, got ${values.length}`);
  }
  for (let index = 0; index < values.length; index += 1) {
    const value = values[index] as number;
    if (!Number.isFinite(value)) {
      throw new MetricError(`${functionName} requires finite ${noun}, got ${value} at index ${index}`);
    }
  }
}

/** Refuses two series of different lengths, naming the caller. */
export function requireEqualLengths(functionName: string, x: ArrayLike<number>, y: ArrayLike<number>): void {
  if (x.length !== y.length) {
    throw new MetricError(`${functionName} requires series of equal length, got ${x.length} and ${y.length}`);
  }
}

/**
 * Arithmetic mean x̄ = Σ x_i / n, refined by one correction pass:
 * x̄ ← x̄ + Σ(x_i − x̄)/n, which removes most of the rounding error of the first
 * pass (the correction is the mean of the residuals, computed accurately).
 * Requires at least 1 observation.
 * Source: Björck (1996), Numerical Methods for Least Squares Problems, §1.1;
 * Chan, Golub & LeVeque (1983), "Algorithms for computing the sample
 * variance", The American Statistician 37(3), eq. 1.7 (the same correction).
 */
export function mean(values: ArrayLike<number>): number {
  requireFiniteObservations('mean', values, 1);
  return refinedMean(values);
}

function refinedMean(values: ArrayLike<number>): number {
  const n = values.length;
  const firstPass = compensatedSum(values) / n;
  let residualSum = 0;
  for (let index = 0; index < n; index += 1) residualSum += (values[index] as number) - firstPass;
  return firstPass + residualSum / n;
}

/**
 * Sum of cross-products of deviations Σ (x_i − x̄)(y_i − ȳ), corrected two-pass:
 * minus (Σ dx_i)(Σ dy_i)/n, which cancels the error left in the computed means.
 * Source: Chan, Golub & LeVeque (1983), The American Statistician 37(3),
 * eq. 1.7 ("corrected two-pass algorithm"), extended to two variables.
 */
function centredCrossProduct(x: ArrayLike<number>, y: ArrayLike<number>): number {
  const n = x.length;
  const meanX = refinedMean(x);
  const meanY = x === y ? meanX : refinedMean(y);
  const products = new Float64Array(n);
  let deviationSumX = 0;
  let deviationSumY = 0;
  for (let index = 0; index < n; index += 1) {
    const deviationX = (x[index] as number) - meanX;
    const deviationY = (y[index] as number) - meanY;
    products[index] = deviationX * deviationY;
    deviationSumX += deviationX;
    deviationSumY += deviationY;
  }
  return compensatedSum(products) - (deviationSumX * deviationSumY) / n;
}

/**
 * Sample variance s² = Σ (x_i − x̄)² / (n − 1).
 * Convention: sample (Bessel's n − 1), mean-centred two-pass with the
 * Chan–Golub–LeVeque correction; never the one-pass Σx² − n·x̄² form, which
 * loses all precision when the mean is large against the spread.
 * Source: Chan, Golub & LeVeque (1983), "Algorithms for computing the sample
 * variance: analysis and recommendations", The American Statistician 37(3), eq. 1.7.
 */
export function sampleVariance(values: ArrayLike<number>): number {
  requireFiniteObservations('sampleVariance', values, 2);
  return Math.max(0, centredCrossProduct(values, values)) / (values.length - 1);
}

/**
 * Sample standard deviation s = √(Σ (x_i − x̄)² / (n − 1)).
 * Convention: sample (n − 1), as `sampleVariance`.
 * Source: Chan, Golub & LeVeque (1983), The American Statistician 37(3), eq. 1.7.
 */
export function sampleStandardDeviation(values: ArrayLike<number>): number {
  requireFiniteObservations('sampleStandardDeviation', values, 2);
  return Math.sqrt(Math.max(0, centredCrossProduct(values, values)) / (values.length - 1));
}

/**
 * Sample covariance s_xy = Σ (x_i − x̄)(y_i − ȳ) / (n − 1) of paired observations.
 * Convention: sample (n − 1), mean-centred two-pass with correction.
 * Source: Chan, Golub & LeVeque (1983), The American Statistician 37(3), eq. 1.7.
 */
export function sampleCovariance(x: ArrayLike<number>, y: ArrayLike<number>): number {
  requireEqualLengths('sampleCovariance', x, y);
  requireFiniteObservations('sampleCovariance', x, 2);
  requireFiniteObservations('sampleCovariance', y, 2);
  return centredCrossProduct(x, y) / (x.length - 1);
}

/**
 * Pearson correlation ρ_xy = Σ dx_i dy_i / √(Σ dx_i² · Σ dy_i²), dx, dy the
 * deviations from the means (the n − 1 divisors cancel).
 * Rounding can push |ρ| a few ulps past 1; the result is clamped to [−1, 1].
 * A constant series has no correlation: refused.
 * Source: Pearson (1896), "Mathematical contributions to the theory of
 * evolution III", Philosophical Transactions of the Royal Society A 187.
 */
export function correlation(x: ArrayLike<number>, y: ArrayLike<number>): number {
  requireEqualLengths('correlation', x, y);
  requireFiniteObservations('correlation', x, 2);
  requireFiniteObservations('correlation', y, 2);
  const sumSquaresX = centredCrossProduct(x, x);
  const sumSquaresY = centredCrossProduct(y, y);
  if (!(sumSquaresX > 0) || !(sumSquaresY > 0)) {
    throw new MetricError(
      `correlation requires non-constant series, got zero variance in ${sumSquaresX > 0 ? 'y' : 'x'}`,
    );
  }
  const rho = centredCrossProduct(x, y) / Math.sqrt(sumSquaresX * sumSquaresY);
  return Math.min(1, Math.max(-1, rho));
}

/**
 * Sample covariance matrix S_jk = Σ_i (x_ij − x̄_j)(x_ik − x̄_k) / (n − 1).
 * `columns[j]` holds the n observations of variable j (all of one length);
 * the result is k × k and exactly symmetric (the upper triangle is mirrored).
 * Convention: sample (n − 1), mean-centred, as NumPy's `np.cov(rows, ddof=1)`.
 * Source: Chan, Golub & LeVeque (1983), The American Statistician 37(3), eq. 1.7;
 * Anderson (2003), An Introduction to Multivariate Statistical Analysis, 3rd ed., chapter 3.
 */
export function covarianceMatrix(columns: ReadonlyArray<ArrayLike<number>>): number[][] {
  const first = columns[0];
  if (first === undefined) throw new MetricError('covarianceMatrix requires at least 1 variable, got 0');
  for (const column of columns) {
    requireEqualLengths('covarianceMatrix', first, column);
    requireFiniteObservations('covarianceMatrix', column, 2);
  }
  const divisor = first.length - 1;
  const matrix = columns.map(() => new Array<number>(columns.length).fill(0));
  columns.forEach((columnJ, j) => {
    for (let k = j; k < columns.length; k += 1) {
      const covariance = centredCrossProduct(columnJ, columns[k] as ArrayLike<number>) / divisor;
      (matrix[j] as number[])[k] = covariance;
      (matrix[k] as number[])[j] = covariance;
    }
  });
  return matrix;
}
