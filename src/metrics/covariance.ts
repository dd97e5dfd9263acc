/**
 * Covariance of monthly returns: the sample estimate and its Ledoit–Wolf
 * shrinkage toward the constant-correlation matrix, annualised for the
 * ex-ante risk figures and the optimiser.
 *
 * Input layout everywhere: `returns[t][i]` = simple return of asset i in
 * month t (rows = months, columns = assets), no gaps (deciding what to do
 * about missing months belongs to the caller).
 */
import { MetricError } from '../errors.ts';

/** Months per year: monthly covariance × 12 = annual covariance (returns independent across months). */
const MONTHS_PER_YEAR = 12;

export interface AnnualisedCovariance {
  /** Annual covariance matrix (n × n). */
  readonly matrix: number[][];
  /** Ledoit–Wolf shrinkage intensity δ in [0, 1]; null when shrinkage is 'none'. */
  readonly shrinkageIntensity: number | null;
}

export interface ConstantCorrelationShrinkage {
  /** Monthly constant-correlation target F built from the n − 1 sample covariance. */
  readonly target: number[][];
  /** Shrinkage intensity δ = max(0, min(1, κ̂/T)). */
  readonly intensity: number;
  /** κ̂ = (π̂ − ρ̂)/γ̂ before division by T and clipping (null when γ̂ = 0). */
  readonly kappa: number | null;
  /** r̄, the average sample correlation (1 with a single asset). */
  readonly averageCorrelation: number;
  /** Monthly δF + (1 − δ)S with S the n − 1 sample covariance. */
  readonly shrunk: number[][];
}

/**
 * Annualised covariance matrix of monthly returns.
 * Formula: 12 × S, where S is the sample covariance of the mean-centred
 * monthly returns with divisor T − 1 (T months); with 'ledoit-wolf',
 * 12 × (δF + (1 − δ)S) with F the constant-correlation target and δ the
 * Ledoit–Wolf intensity (see ledoitWolfConstantCorrelation).
 * Convention: simple monthly returns, ×12 annualisation (no autocorrelation
 * adjustment), sample (unbiased) covariance.
 * Source: Ledoit & Wolf (2004), "Honey, I shrunk the sample covariance
 * matrix", Journal of Portfolio Management 30(4), 110–119.
 */
export function annualisedCovariance(
  returns: readonly (readonly number[])[],
  shrinkage: 'none' | 'ledoit-wolf',
): AnnualisedCovariance {
  if (shrinkage === 'none') {
    return { matrix: scale(sampleCovariance(returns, 'annualisedCovariance'), MONTHS_PER_YEAR), shrinkageIntensity: null };
  }
  if (shrinkage !== 'ledoit-wolf') {
    throw new MetricError(`annualisedCovariance requires shrinkage 'none' or 'ledoit-wolf', got ${String(shrinkage)}`);
  }
  // A constant column (a cash index at a fixed rate, say) has zero variance
  // and zero covariance with everything, and its correlations do not exist.
  // Its entries of the target, r̄·√(s_ii s_jj), are zero whatever r̄ is, so
  // the estimator is run on the varying columns and the constant ones keep
  // their exact zeros.
  const width = returns[0]?.length ?? 0;
  const sample = sampleCovariance(returns, 'annualisedCovariance');
  const varying = [...Array(width).keys()].filter((i) => sample[i]![i]! > 0);
  if (varying.length === width) {
    const { intensity, shrunk } = ledoitWolfConstantCorrelation(returns);
    return { matrix: scale(shrunk, MONTHS_PER_YEAR), shrinkageIntensity: intensity };
  }
  const matrix = squareMatrix(width);
  if (varying.length < 2) {
    // Fewer than two varying assets: no correlation to shrink toward.
    return { matrix: scale(sample, MONTHS_PER_YEAR), shrinkageIntensity: null };
  }
  const { intensity, shrunk } = ledoitWolfConstantCorrelation(returns.map((row) => varying.map((i) => row[i]!)));
  varying.forEach((i, a) => varying.forEach((j, b) => { matrix[i]![j] = MONTHS_PER_YEAR * shrunk[a]![b]!; }));
  return { matrix, shrinkageIntensity: intensity };
}

/**
 * Sample covariance matrix with divisor T − 1.
 * Formula: s_ij = Σ_t (y_ti − ȳ_i)(y_tj − ȳ_j) / (T − 1), the returns
 * mean-centred first (two-pass: the one-pass formula Σy_i y_j − Tȳ_iȳ_j
 * loses digits by cancellation when means are large relative to spreads).
 * Convention: unbiased (T − 1) normalisation, monthly units.
 * Source: any statistics text, e.g. Welford (1962) on the two-pass form;
 * simple-statistics `sample_covariance`.
 */
export function sampleCovariance(returns: readonly (readonly number[])[], caller = 'sampleCovariance'): number[][] {
  const { centred, months } = centre(returns, caller);
  const assets = centred[0]!.length;
  const matrix = squareMatrix(assets);
  for (let i = 0; i < assets; i++) {
    for (let j = i; j < assets; j++) {
      let sum = 0;
      for (let t = 0; t < months; t++) sum += centred[t]![i]! * centred[t]![j]!;
      matrix[i]![j] = sum / (months - 1);
      matrix[j]![i] = matrix[i]![j]!;
    }
  }
  return matrix;
}

/**
 * Ledoit–Wolf shrinkage toward the constant-correlation matrix (monthly units).
 *
 * Formula (Ledoit & Wolf 2004, "Honey, I shrunk the sample covariance
 * matrix", J. Portfolio Management 30(4), 110–119; the notation of its
 * appendix and of the authors' published covCor.m), with y_t the
 * mean-centred returns and T months:
 * - s_ij = (1/T) Σ_t y_ti y_tj; r_ij = s_ij / √(s_ii s_jj);
 *   r̄ = 2/(N(N − 1)) Σ_{i<j} r_ij;
 * - target F: f_ii = s_ii, f_ij = r̄ √(s_ii s_jj);
 * - π̂ = Σ_ij (1/T) Σ_t (y_ti y_tj − s_ij)²;
 * - ϑ̂_ii,ij = (1/T) Σ_t (y_ti² − s_ii)(y_ti y_tj − s_ij);
 *   ρ̂ = Σ_i π̂_ii + Σ_i Σ_{j≠i} (r̄/2)(√(s_jj/s_ii) ϑ̂_ii,ij + √(s_ii/s_jj) ϑ̂_jj,ij);
 * - γ̂ = Σ_ij (f_ij − s_ij)²; κ̂ = (π̂ − ρ̂)/γ̂; δ = max(0, min(1, κ̂/T)).
 *
 * Normalisation: every term of the intensity (s_ij inside π̂, ϑ̂ and γ̂, and
 * the 1/T averages of π̂ and ϑ̂) uses 1/T exactly as the paper and its
 * published code do: they are moment estimates in a consistency argument,
 * and mixing divisors would change δ by O(1/T) for no stated reason.
 * The returned matrices use the T − 1 sample covariance S and the target
 * built from it (r̄ does not depend on the divisor), so
 * shrunk = δF + (1 − δ)S = T/(T − 1) × the paper's estimator; with δ = 0 it
 * is exactly the unshrunk covariance the spec uses for `shrinkage: none`.
 *
 * Guards: every asset must vary (a constant column has no correlation);
 * with one asset, or when γ̂ = 0 (S already equals F), there is nothing to
 * shrink and δ is reported as 0.
 */
export function ledoitWolfConstantCorrelation(returns: readonly (readonly number[])[]): ConstantCorrelationShrinkage {
  const caller = 'ledoitWolfConstantCorrelation';
  const { centred: y, months: T } = centre(returns, caller);
  const N = y[0]!.length;
  const unbiased = sampleCovariance(returns, caller);
  const s = scale(unbiased, (T - 1) / T); // 1/T moments, as in the paper
  const sd = s.map((row, i) => Math.sqrt(row[i]!));
  sd.forEach((value, i) => {
    if (!(value > 0)) {
      throw new MetricError(`${caller} requires every asset to vary; column ${i} is constant (zero variance)`);
    }
  });

  let correlationSum = 0;
  for (let i = 0; i < N; i++) for (let j = i + 1; j < N; j++) correlationSum += s[i]![j]! / (sd[i]! * sd[j]!);
  const averageCorrelation = N > 1 ? (2 * correlationSum) / (N * (N - 1)) : 1;

  const targetFor = (covariance: number[][]): number[][] =>
    covariance.map((row, i) =>
      row.map((value, j) => (i === j ? value : averageCorrelation * Math.sqrt(covariance[i]![i]! * covariance[j]![j]!))),
    );
  const targetMoments = targetFor(s);

  // π̂_ij and ϑ̂_ii,ij, accumulated over months.
  let pi = 0;
  let piDiagonal = 0;
  let rhoOffDiagonal = 0;
  for (let i = 0; i < N; i++) {
    for (let j = 0; j < N; j++) {
      let piij = 0;
      let thetaiiij = 0;
      for (let t = 0; t < T; t++) {
        const product = y[t]![i]! * y[t]![j]! - s[i]![j]!;
        piij += product * product;
        thetaiiij += (y[t]![i]! * y[t]![i]! - s[i]![i]!) * product;
      }
      piij /= T;
      thetaiiij /= T;
      pi += piij;
      if (i === j) piDiagonal += piij;
      // Σ_{i≠j} (r̄/2)(√(s_jj/s_ii) ϑ_ii,ij + √(s_ii/s_jj) ϑ_jj,ij): both halves sum to the
      // same total over ordered pairs, so each ordered pair contributes r̄ √(s_jj/s_ii) ϑ_ii,ij.
      else rhoOffDiagonal += (sd[j]! / sd[i]!) * thetaiiij;
    }
  }
  const rho = piDiagonal + averageCorrelation * rhoOffDiagonal;
  let gamma = 0;
  for (let i = 0; i < N; i++) for (let j = 0; j < N; j++) gamma += (targetMoments[i]![j]! - s[i]![j]!) ** 2;

  const kappa = gamma > 0 ? (pi - rho) / gamma : null;
  const intensity = kappa === null ? 0 : Math.max(0, Math.min(1, kappa / T));
  const target = targetFor(unbiased);
  const shrunk = unbiased.map((row, i) => row.map((value, j) => intensity * target[i]![j]! + (1 - intensity) * value));
  return { target, intensity, kappa, averageCorrelation, shrunk };
}

function centre(returns: readonly (readonly number[])[], caller: string): { centred: number[][]; months: number } {
  const months = returns.length;
  if (months < 2) throw new MetricError(`${caller} requires at least 2 monthly returns, got ${months}`);
  const assets = returns[0]!.length;
  if (assets < 1) throw new MetricError(`${caller} requires at least 1 asset, got 0`);
  const means = new Array<number>(assets).fill(0);
  returns.forEach((row, t) => {
    if (row.length !== assets) {
      throw new MetricError(`${caller} requires ${assets} returns in every month, got ${row.length} in month ${t}`);
    }
    row.forEach((value, i) => {
      if (!Number.isFinite(value)) {
        throw new MetricError(`${caller} requires finite returns, got ${value} in month ${t}, asset ${i}`);
      }
      means[i]! += value;
    });
  });
  for (let i = 0; i < assets; i++) means[i]! /= months;
  return { centred: returns.map((row) => row.map((value, i) => value - means[i]!)), months };
}

function squareMatrix(size: number): number[][] {
  return Array.from({ length: size }, () => new Array<number>(size).fill(0));
}

function scale(matrix: readonly (readonly number[])[], factor: number): number[][] {
  return matrix.map((row) => row.map((value) => value * factor));
}
