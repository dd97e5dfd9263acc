/**
 * Seeded randomness for the book generators.
 *
 * Everything random in a generated book comes from here, so that one seed
 * gives byte-identical files on every machine. The generator is
 * xoroshiro128+ from the `pure-rand` package; each named stream (for example
 * `prices` or `account:17`) gets its own state derived from the seed and the
 * stream's name, so adding accounts never changes the price history and
 * account 17 does not depend on how many accounts come before it.
 */
import { uniformFloat64 } from 'pure-rand/distribution/uniformFloat64';
import { uniformInt } from 'pure-rand/distribution/uniformInt';
import { xoroshiro128plusFromState } from 'pure-rand/generator/xoroshiro128plus';
import type { RandomGenerator } from 'pure-rand/types/RandomGenerator';

/** A seeded source of random numbers. Each call advances it; the same calls on the same seed and stream give the same values. */
export interface Random {
  /** Uniform on [0, 1) in steps of 2⁻⁵³. */
  uniform(): number;
  /** Uniform on [low, high). */
  between(low: number, high: number): number;
  /** A whole number uniform on low … high, both included. */
  integer(low: number, high: number): number;
  /** A standard normal deviate (mean 0, variance 1). */
  normal(): number;
  /** True with probability `probability`. */
  chance(probability: number): boolean;
  /** One element, each equally likely. */
  choice<T>(items: readonly T[]): T;
  /** One element, drawn with probability proportional to its weight. */
  weightedChoice<T>(items: readonly T[], weights: readonly number[]): T;
  /** `count` distinct elements in random order (a partial Fisher–Yates shuffle). */
  sample<T>(items: readonly T[], count: number): T[];
}

/**
 * The 32-bit finaliser of MurmurHash3: a bijection on 32-bit words that
 * spreads every input bit over the whole output (avalanche), used to turn a
 * small seed into a well-mixed generator state.
 * Source: Appleby (2008), MurmurHash3, `fmix32`.
 */
function mix32(value: number): number {
  let hash = value | 0;
  hash ^= hash >>> 16;
  hash = Math.imul(hash, 0x85ebca6b);
  hash ^= hash >>> 13;
  hash = Math.imul(hash, 0xc2b2ae35);
  hash ^= hash >>> 16;
  return hash | 0;
}

/** FNV-1a 32-bit hash of a string's UTF-16 code units (Fowler, Noll & Vo 1991). */
function hashName(name: string): number {
  let hash = 0x811c9dc5;
  for (let index = 0; index < name.length; index++) {
    hash ^= name.charCodeAt(index);
    hash = Math.imul(hash, 0x01000193);
  }
  return hash | 0;
}

function assertSeed(seed: number): void {
  if (!Number.isSafeInteger(seed)) throw new RangeError(`a random seed must be a whole number, got ${seed}`);
}

/** The xoroshiro128+ state for a seed and stream name: four mixed words, never all zero. */
function initialState(seed: number, stream: string): number[] {
  assertSeed(seed);
  const low = seed % 0x1_0000_0000 | 0;
  const high = Math.floor(seed / 0x1_0000_0000) | 0;
  const nameHash = hashName(stream);
  const state = [0, 1, 2, 3].map((word) =>
    mix32(low ^ mix32(high + Math.imul(word + 1, 0x9e3779b9)) ^ mix32(nameHash + Math.imul(word + 5, 0x9e3779b9))),
  );
  const allZero = state.every((word) => word === 0);
  return allZero ? [1, 0, 0, 0] : state;
}

/**
 * A seeded random source for one named stream.
 *
 * Normal deviates use the Box–Muller transform: from independent uniforms
 * u₁ ∈ (0, 1] and u₂ ∈ [0, 1), z₀ = √(−2 ln u₁)·cos(2π u₂) and
 * z₁ = √(−2 ln u₁)·sin(2π u₂) are independent standard normals; the second
 * is kept for the next call. u₁ is taken as 1 − U so that ln 0 cannot occur.
 * Source: Box & Muller (1958), "A Note on the Generation of Random Normal
 * Deviates", Annals of Mathematical Statistics 29(2), 610–611.
 */
export function createRandom(seed: number, stream = ''): Random {
  const generator: RandomGenerator = xoroshiro128plusFromState(initialState(seed, stream));
  let spareNormal: number | null = null;

  const uniform = (): number => uniformFloat64(generator);

  const integer = (low: number, high: number): number => {
    if (!Number.isSafeInteger(low) || !Number.isSafeInteger(high) || high < low) {
      throw new RangeError(`random integer needs whole bounds low ≤ high, got ${low} and ${high}`);
    }
    return uniformInt(generator, low, high);
  };

  const normal = (): number => {
    if (spareNormal !== null) {
      const value = spareNormal;
      spareNormal = null;
      return value;
    }
    const radius = Math.sqrt(-2 * Math.log(1 - uniform()));
    const angle = 2 * Math.PI * uniform();
    spareNormal = radius * Math.sin(angle);
    return radius * Math.cos(angle);
  };

  const choice = <T>(items: readonly T[]): T => {
    if (items.length === 0) throw new RangeError('random choice needs at least one item');
    return items[integer(0, items.length - 1)]!;
  };

  const weightedChoice = <T>(items: readonly T[], weights: readonly number[]): T => {
    if (items.length === 0 || items.length !== weights.length) {
      throw new RangeError(`weighted choice needs as many weights as items (at least one), got ${items.length} items and ${weights.length} weights`);
    }
    let total = 0;
    for (const weight of weights) {
      if (!(weight >= 0) || !Number.isFinite(weight)) throw new RangeError(`weighted choice needs finite non-negative weights, got ${weight}`);
      total += weight;
    }
    if (!(total > 0)) throw new RangeError('weighted choice needs at least one positive weight');
    let remaining = uniform() * total;
    for (let index = 0; index < items.length; index++) {
      remaining -= weights[index]!;
      if (remaining < 0) return items[index]!;
    }
    // Rounding can leave a sliver at the top: the last positive weight takes it.
    for (let index = items.length - 1; index >= 0; index--) if (weights[index]! > 0) return items[index]!;
    throw new Error('Internal error: weighted choice found no positive weight; please report this');
  };

  const sample = <T>(items: readonly T[], count: number): T[] => {
    if (!Number.isSafeInteger(count) || count < 0 || count > items.length) {
      throw new RangeError(`random sample of ${count} needs 0 ≤ count ≤ ${items.length}`);
    }
    const pool = items.slice();
    for (let index = 0; index < count; index++) {
      const pick = integer(index, pool.length - 1);
      const held = pool[index]!;
      pool[index] = pool[pick]!;
      pool[pick] = held;
    }
    return pool.slice(0, count);
  };

  return {
    uniform,
    between: (low, high) => low + (high - low) * uniform(),
    integer,
    normal,
    chance: (probability) => uniform() < probability,
    choice,
    weightedChoice,
    sample,
  };
}
