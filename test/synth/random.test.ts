import { describe, expect, it } from 'vitest';
import { normalCdf } from '../../src/metrics/normal.ts';
import { createRandom } from '../../src/synth/random.ts';

const SAMPLE_SIZE = 100_000;

/**
 * Kolmogorov–Smirnov statistic D = sup |F_n(x) − F(x)| of a sample against a
 * continuous distribution function (Kolmogorov 1933; Smirnov 1948).
 */
function ksStatistic(sample: number[], cdf: (x: number) => number): number {
  const sorted = [...sample].sort((left, right) => left - right);
  let largest = 0;
  sorted.forEach((value, index) => {
    const expected = cdf(value);
    largest = Math.max(largest, Math.abs((index + 1) / sorted.length - expected), Math.abs(expected - index / sorted.length));
  });
  return largest;
}

// Asymptotic 1 % critical value of √n·D (Kolmogorov distribution):
// python3 -c "from scipy import stats; print(stats.kstwobign.ppf(0.99))"  -> 1.6276236115189502
const KS_CRITICAL_1_PERCENT = 1.6276236115189502;

describe('createRandom', () => {
  it('repeats the same sequence for the same seed and stream', () => {
    const first = createRandom(42, 'prices');
    const second = createRandom(42, 'prices');
    const a = Array.from({ length: 1000 }, () => first.normal());
    const b = Array.from({ length: 1000 }, () => second.normal());
    expect(a).toEqual(b);
  });

  it('gives different sequences for different seeds, streams, and seeds beyond 32 bits', () => {
    const draw = (seed: number, stream: string): number[] => {
      const random = createRandom(seed, stream);
      return Array.from({ length: 20 }, () => random.uniform());
    };
    const base = draw(1, 'a');
    expect(draw(2, 'a')).not.toEqual(base);
    expect(draw(1, 'b')).not.toEqual(base);
    expect(draw(1 + 2 ** 32, 'a')).not.toEqual(base);
    expect(draw(-1, 'a')).not.toEqual(base);
  });

  it('refuses a seed that is not a whole number', () => {
    expect(() => createRandom(1.5)).toThrow('a random seed must be a whole number, got 1.5');
  });

  it('draws uniforms on [0, 1) that pass a Kolmogorov–Smirnov test at 1 %', () => {
    const random = createRandom(7, 'uniform-test');
    const sample = Array.from({ length: SAMPLE_SIZE }, () => random.uniform());
    expect(sample.every((value) => value >= 0 && value < 1)).toBe(true);
    const statistic = ksStatistic(sample, (x) => x);
    expect(Math.sqrt(SAMPLE_SIZE) * statistic).toBeLessThan(KS_CRITICAL_1_PERCENT);
  });

  it('draws standard normals that pass a Kolmogorov–Smirnov test at 1 % against Φ', () => {
    const random = createRandom(11, 'normal-test');
    const sample = Array.from({ length: SAMPLE_SIZE }, () => random.normal());
    const statistic = ksStatistic(sample, normalCdf);
    expect(Math.sqrt(SAMPLE_SIZE) * statistic).toBeLessThan(KS_CRITICAL_1_PERCENT);
    // Mean 0 and variance 1 within four standard errors (1/√n and √(2/n)).
    const mean = sample.reduce((sum, value) => sum + value, 0) / SAMPLE_SIZE;
    const variance = sample.reduce((sum, value) => sum + (value - mean) ** 2, 0) / (SAMPLE_SIZE - 1);
    expect(Math.abs(mean)).toBeLessThan(4 / Math.sqrt(SAMPLE_SIZE));
    expect(Math.abs(variance - 1)).toBeLessThan(4 * Math.sqrt(2 / SAMPLE_SIZE));
    // Tail mass below the 2.5 % quantile, Abramowitz & Stegun (1964) table 26.1: z = −1.959964.
    // python3 -c "from scipy import stats; print(stats.norm.ppf(0.025))"  -> -1.9599639845400545
    const below = sample.filter((value) => value < -1.9599639845400545).length / SAMPLE_SIZE;
    expect(Math.abs(below - 0.025)).toBeLessThan(4 * Math.sqrt((0.025 * 0.975) / SAMPLE_SIZE));
  });

  it('draws whole numbers uniformly on low … high (chi-square test at 0.1 %)', () => {
    const random = createRandom(3, 'dice');
    const counts = new Map<number, number>();
    const rolls = 60_000;
    for (let index = 0; index < rolls; index++) {
      const value = random.integer(1, 6);
      counts.set(value, (counts.get(value) ?? 0) + 1);
    }
    expect([...counts.keys()].sort()).toEqual([1, 2, 3, 4, 5, 6]);
    const expected = rolls / 6;
    const chiSquare = [...counts.values()].reduce((sum, count) => sum + (count - expected) ** 2 / expected, 0);
    // python3 -c "from scipy import stats; print(stats.chi2.ppf(0.999, 5))"  -> 20.515005652432873
    expect(chiSquare).toBeLessThan(20.515005652432873);
  });

  it('chooses by weight, samples without repetition, and refuses empty or bad input', () => {
    const random = createRandom(5, 'choices');
    const draws = 40_000;
    let heavy = 0;
    for (let index = 0; index < draws; index++) if (random.weightedChoice(['light', 'heavy'], [1, 3]) === 'heavy') heavy++;
    expect(Math.abs(heavy / draws - 0.75)).toBeLessThan(4 * Math.sqrt((0.75 * 0.25) / draws));
    const items = Array.from({ length: 50 }, (_, index) => index);
    const picked = random.sample(items, 30);
    expect(new Set(picked).size).toBe(30);
    expect(picked.every((item) => items.includes(item))).toBe(true);
    expect(() => random.choice([])).toThrow('random choice needs at least one item');
    expect(() => random.weightedChoice(['a'], [-1])).toThrow('weighted choice needs finite non-negative weights, got -1');
    expect(() => random.sample(items, 51)).toThrow('random sample of 51 needs 0 ≤ count ≤ 50');
    expect(() => random.integer(3, 1)).toThrow('random integer needs whole bounds low ≤ high, got 3 and 1');
  });
});
