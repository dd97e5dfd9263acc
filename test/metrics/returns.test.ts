import { describe, expect, it } from 'vitest';
import { MetricError } from '../../src/errors.ts';
import { findRootBrent } from '../../src/metrics/rootfinding.ts';
import {
  annualiseReturn,
  dailyReturns,
  linkReturns,
  modifiedDietz,
  moneyWeightedReturn,
  moneyWeightedWindowReturn,
  periodRate,
} from '../../src/metrics/returns.ts';

/** |actual − expected| ≤ tolerance · max(|expected|, floor). */
function expectRelativelyClose(actual: number | null, expected: number, tolerance: number, floor = 1e-300): void {
  expect(actual).not.toBeNull();
  const error = Math.abs((actual as number) - expected);
  expect(error, `actual ${actual}, expected ${expected}`).toBeLessThanOrEqual(tolerance * Math.max(Math.abs(expected), floor));
}

describe('dailyReturns and linkReturns: true time-weighted return', () => {
  // Source: GIPS 2020 Standards for Firms, section 2, true time-weighted return:
  // value the portfolio at every external flow, r = V_d / (V_{d−1} + F_d) − 1 with
  // the flow at the start of its day, sub-period returns geometrically linked.
  // Worked by hand:
  //   start value 100,000
  //   day 0: no flow,           close 101,000: r0 = 101,000 / 100,000 − 1 = 1/100
  //   day 1: deposit 50,000,    close 150,500: r1 = 150,500 / (101,000 + 50,000) − 1 = 301/302 − 1 = −1/302
  //   day 2: withdrawal 20,000, close 132,000: r2 = 132,000 / (150,500 − 20,000) − 1 = 88/87 − 1 = 1/87
  //   TWR = (101/100)(301/302)(88/87) − 1 = 2,675,288 / 2,627,400 − 1 = 47,888 / 2,627,400 = 5,986 / 328,425
  const closes = [101_000, 150_500, 132_000];
  const flows = [0, 50_000, -20_000];

  it('gives the daily returns worked by hand', () => {
    const returns = dailyReturns(100_000, closes, flows);
    expect(returns).toBeInstanceOf(Float64Array);
    expect(returns).toHaveLength(3);
    expectRelativelyClose(returns[0] as number, 1 / 100, 1e-15);
    expectRelativelyClose(returns[1] as number, -1 / 302, 1e-12);
    expectRelativelyClose(returns[2] as number, 1 / 87, 1e-13);
  });

  it('links them to the window TWR worked by hand', () => {
    expectRelativelyClose(linkReturns(dailyReturns(100_000, closes, flows)), 5_986 / 328_425, 1e-13);
  });

  it('gives 0 on days with nothing invested (since inception, before the first deposit)', () => {
    // Worked by hand: start 0; day 0 nothing, close 0: r = 0 by convention;
    // day 1 deposit 10,000, close 10,100: r = 10,100 / 10,000 − 1 = 0.01;
    // day 2 no flow, close 9,999: r = 9,999 / 10,100 − 1 = −101 / 10,100 = −0.01.
    // TWR = 1.01 × 0.99 − 1 = −0.0001.
    const returns = dailyReturns(0, [0, 10_100, 9_999], [0, 10_000, 0]);
    expect(returns[0]).toBe(0);
    expectRelativelyClose(returns[1] as number, 0.01, 1e-14);
    expectRelativelyClose(returns[2] as number, -0.01, 1e-14);
    expectRelativelyClose(linkReturns(returns), -0.0001, 1e-11);
  });

  it('treats a full withdrawal that leaves only a rounding residue as nothing invested, not a −100 % day', () => {
    // 0.1 + 0.2 = 0.30000000000000004 in binary floating point; withdrawing 0.3
    // leaves 5.6e-17 invested and a close of 0.
    const previousClose = 0.1 + 0.2;
    const returns = dailyReturns(100, [previousClose, 0, 0], [-99.7, -0.3, 0]);
    expect(returns[1]).toBe(0);
    expect(returns[2]).toBe(0);
  });

  it('refuses a day whose amount invested is not positive, naming the day and the values', () => {
    const overdrawn = (): Float64Array => dailyReturns(100_000, [101_000, 0], [0, -150_000]);
    expect(overdrawn).toThrow(MetricError);
    expect(overdrawn).toThrow(
      'dailyReturns requires a positive amount invested at the start of day 1 (previous close + flow), got 101000 + -150000 = -49000 with close 0',
    );
    // Value appearing from nothing (no capital, no flow, a positive close) has no return either.
    expect(() => dailyReturns(0, [500], [0])).toThrow(
      'dailyReturns requires a positive amount invested at the start of day 0 (previous close + flow), got 0 + 0 = 0 with close 500',
    );
  });

  it('refuses closes and flows of different lengths and non-finite values', () => {
    expect(() => dailyReturns(100, [101, 102], [0])).toThrow('dailyReturns requires closes and flows of equal length, got 2 and 1');
    expect(() => dailyReturns(100, [Number.NaN], [0])).toThrow(
      'dailyReturns requires finite closes and flows, got close NaN and flow 0 on day 0',
    );
  });
});

describe('linkReturns', () => {
  it('links by hand-worked products', () => {
    // (1 + 0.1)(1 − 0.1) − 1 = 0.99 − 1 = −0.01
    expectRelativelyClose(linkReturns([0.1, -0.1]), -0.01, 1e-13);
    // a −100 % day ends everything: 1.5 × 0 × 1.3 − 1 = −1
    expect(linkReturns([0.5, -1, 0.3])).toBe(-1);
    // a loss beyond the capital (plain product): (1 − 1.5)(1 + 0.2) − 1 = −0.6 − 1 = −1.6
    expectRelativelyClose(linkReturns([-1.5, 0.2]), -1.6, 1e-15);
    // no days: the empty product 1, so 0
    expect(linkReturns([])).toBe(0);
  });

  it('matches exact rational arithmetic to within 2e-14 relative (seeded random daily series)', () => {
    // Reference: every double is a rational m·2^e, so Π(1 + r_i) − 1 is computed
    // exactly with BigInt numerators over power-of-two denominators, then compared.
    // The plain floating product misses this bound on such series (up to ~7e-13).
    let state = 0x2545f491;
    const nextUniform = (): number => {
      state ^= state << 13;
      state ^= state >>> 17;
      state ^= state << 5;
      return (state >>> 0) / 4294967296;
    };
    for (const [days, spread, drift] of [
      [250, 0.01, 0],
      [1_260, 0.01, 0.0003],
      [1_826, 0.002, 0],
      [60, 0.05, 0.01],
    ] as const) {
      const returns = Array.from({ length: days }, () => drift + spread * (2 * nextUniform() - 1));
      const linked = linkReturns(returns);
      expect(Math.abs(relativeErrorAgainstExact(linked, returns))).toBeLessThanOrEqual(2e-14);
    }
  });

  it('refuses non-finite returns', () => {
    expect(() => linkReturns([0.01, Number.POSITIVE_INFINITY])).toThrow('linkReturns requires finite returns, got Infinity at index 1');
  });
});

/** Exact value of a double as numerator / 2^k (BigInt). */
function exactRational(value: number): readonly [bigint, bigint] {
  const view = new DataView(new ArrayBuffer(8));
  view.setFloat64(0, value);
  const high = view.getUint32(0);
  const low = view.getUint32(4);
  const sign = high >>> 31 ? -1n : 1n;
  const biasedExponent = (high >>> 20) & 0x7ff;
  let mantissa = (BigInt(high & 0xfffff) << 32n) | BigInt(low);
  let exponent = -1074;
  if (biasedExponent !== 0) {
    mantissa |= 1n << 52n;
    exponent = biasedExponent - 1075;
  }
  return exponent >= 0 ? [sign * (mantissa << BigInt(exponent)), 1n] : [sign * mantissa, 1n << BigInt(-exponent)];
}

/** (approx − exact) / exact, exact = Π(1 + r_i) − 1 in rational arithmetic. */
function relativeErrorAgainstExact(approximation: number, returns: ReadonlyArray<number>): number {
  let numerator = 1n;
  let denominator = 1n;
  for (const value of returns) {
    const [top, bottom] = exactRational(value);
    numerator *= top + bottom;
    denominator *= bottom;
  }
  const exactNumerator = numerator - denominator;
  const [approxTop, approxBottom] = exactRational(approximation);
  const differenceNumerator = approxTop * denominator - exactNumerator * approxBottom;
  const scale = 10n ** 30n;
  return Number((differenceNumerator * scale) / (approxBottom * exactNumerator)) / 1e30;
}

describe('modifiedDietz', () => {
  // Source: GIPS 2020 Standards for Firms, section 2, Modified Dietz:
  // R = (V_end − V_start − F) / (V_start + Σ w_i F_i), w_i = (D − d_i + 1) / D for
  // flows at the start of day d_i (methods.md).
  it('gives the hand-worked return for a month with a deposit and a withdrawal', () => {
    // D = 30; V_start = 1,000,000; deposit 100,000 on day 11; withdrawal 50,000 on day 21; V_end = 1,080,000.
    // w(day 11) = (30 − 11 + 1)/30 = 20/30 = 2/3; w(day 21) = (30 − 21 + 1)/30 = 10/30 = 1/3.
    // numerator   = 1,080,000 − 1,000,000 − (100,000 − 50,000) = 30,000
    // denominator = 1,000,000 + (2/3)(100,000) − (1/3)(50,000) = 1,000,000 + 50,000 = 1,050,000
    // R = 30,000 / 1,050,000 = 1/35
    const flows = [
      { dayOfPeriod: 11, amount: 100_000 },
      { dayOfPeriod: 21, amount: -50_000 },
    ];
    expectRelativelyClose(modifiedDietz(1_000_000, 1_080_000, flows, 30), 1 / 35, 1e-14);
  });

  it('weighs a flow at the start of day 1 fully and one on the last day by 1/D', () => {
    // Day 1 of 31: w = (31 − 1 + 1)/31 = 1. V_start 90,000, deposit 10,000, V_end 101,000:
    // R = (101,000 − 90,000 − 10,000) / (90,000 + 10,000) = 1,000 / 100,000 = 0.01.
    expectRelativelyClose(modifiedDietz(90_000, 101_000, [{ dayOfPeriod: 1, amount: 10_000 }], 31), 0.01, 1e-14);
    // Day 30 of 30: w = (30 − 30 + 1)/30 = 1/30. V_start 100,000, deposit 30,000, V_end 133,000:
    // R = (133,000 − 100,000 − 30,000) / (100,000 + 30,000/30) = 3,000 / 101,000 = 3/101.
    expectRelativelyClose(modifiedDietz(100_000, 133_000, [{ dayOfPeriod: 30, amount: 30_000 }], 30), 3 / 101, 1e-14);
  });

  it('refuses a denominator ≤ 0 and flows outside the period', () => {
    // 1,000 + 1 × (−3,000) = −2,000 ≤ 0
    expect(() => modifiedDietz(1_000, 0, [{ dayOfPeriod: 1, amount: -3_000 }], 30)).toThrow(
      'modifiedDietz requires a positive average capital (start value + weighted flows), got -2000',
    );
    expect(() => modifiedDietz(1_000, 1_000, [{ dayOfPeriod: 31, amount: 5 }], 30)).toThrow(
      "modifiedDietz requires each flow's day of period to be a whole number in 1…30, got 31 for flow 0",
    );
  });
});

describe('annualiseReturn and the GIPS annualisation rule', () => {
  // Source: GIPS 2020 Standards for Firms, section 4: returns for periods of less
  // than one year must not be annualised; longer ones are annualised geometrically,
  // (1 + R)^(1/n) − 1 (methods.md: n whole years, or days/365.25 since inception).
  it('annualises whole-year windows geometrically (hand-worked)', () => {
    // 3 years, R = 0.331: 1.331 = 1.1³, so (1.331)^(1/3) − 1 = 0.1
    expectRelativelyClose(annualiseReturn(0.331, 3), 0.1, 1e-14);
    // 1 year: (1 + R)^1 − 1 = R
    expectRelativelyClose(annualiseReturn(0.0734, 1), 0.0734, 1e-15);
    // since inception 730.5 days: n = 730.5 / 365.25 = 2; 1.21 = 1.1², so 0.1
    expectRelativelyClose(annualiseReturn(0.21, 730.5 / 365.25), 0.1, 1e-14);
    // −100 % stays −100 %
    expect(annualiseReturn(-1, 3)).toBe(-1);
  });

  it('annualises a since-inception window of exactly 365 days', () => {
    // n = 365/365.25, so (1.1)^(365.25/365) − 1:
    //   python3 -c "print(repr(1.1**(365.25/365)-1))"  -> 0.10007181138351062
    expectRelativelyClose(annualiseReturn(0.1, 365 / 365.25), 0.10007181138351062, 1e-13);
  });

  it('refuses to annualise windows shorter than a year', () => {
    expect(() => annualiseReturn(0.05, 0.5)).toThrow(MetricError);
    expect(() => annualiseReturn(0.05, 0.5)).toThrow('annualiseReturn requires a window of at least one year, got 0.5 years');
    expect(() => annualiseReturn(0.05, 364 / 365.25)).toThrow('annualiseReturn requires a window of at least one year');
  });
});

describe('periodRate', () => {
  it('turns an annual rate into the rate over a number of days (hand-worked)', () => {
    // 21 % a year: 365 days 0.21; 730 days 1.21² − 1 = 0.4641; 182.5 days √1.21 − 1 = 0.1; 0 days 0.
    expectRelativelyClose(periodRate(0.21, 365), 0.21, 1e-14);
    expectRelativelyClose(periodRate(0.21, 730), 0.4641, 1e-14);
    expectRelativelyClose(periodRate(0.21, 182.5), 0.1, 1e-14);
    expect(periodRate(0.21, 0)).toBe(0);
    expect(periodRate(-1, 0)).toBe(0);
  });
});

describe('moneyWeightedReturn against SciPy', () => {
  // Reference: SciPy 1.17.1 scipy.optimize.brentq on the definition
  // Σ CF_i (1 + r)^(−t_i/365) = 0 (methods.md). Tolerance 1e-12 relative: two
  // independent Brent implementations agree to a few ulps of the root.
  const cases: ReadonlyArray<{
    readonly name: string;
    readonly command: string;
    readonly flows: ReadonlyArray<{ readonly t: number; readonly amount: number }>;
    readonly days: number;
    readonly annualRate: number;
  }> = [
    {
      name: 'a quarter (short window) with a deposit',
      command:
        'python3 -c "from scipy.optimize import brentq; cf=[(0,-100000),(30,-20000),(92,125000)]; print(repr(brentq(lambda r: sum(a*(1+r)**(-t/365) for t,a in cf), -0.99, 10, xtol=1e-15)))"',
      flows: [
        { t: 0, amount: -100_000 },
        { t: 30, amount: -20_000 },
        { t: 92, amount: 125_000 },
      ],
      days: 92,
      annualRate: 0.18673658974031102,
    },
    {
      name: 'five years with two deposits',
      command:
        'python3 -c "from scipy.optimize import brentq; cf=[(0,-50000),(365,-10000),(730,-10000),(1826,95000)]; print(repr(brentq(lambda r: sum(a*(1+r)**(-t/365) for t,a in cf), -0.99, 10, xtol=1e-15)))"',
      flows: [
        { t: 0, amount: -50_000 },
        { t: 365, amount: -10_000 },
        { t: 730, amount: -10_000 },
        { t: 1826, amount: 95_000 },
      ],
      days: 1826,
      annualRate: 0.06877299166050282,
    },
    {
      name: 'one year with a withdrawal',
      command:
        'python3 -c "from scipy.optimize import brentq; cf=[(0,-200000),(180,30000),(365,185000)]; print(repr(brentq(lambda r: sum(a*(1+r)**(-t/365) for t,a in cf), -0.99, 10, xtol=1e-15)))"',
      flows: [
        { t: 0, amount: -200_000 },
        { t: 180, amount: 30_000 },
        { t: 365, amount: 185_000 },
      ],
      days: 365,
      annualRate: 0.08104309825806286,
    },
    {
      // Signs −, +, −, +: three sign changes, so Descartes' rule allows up to three
      // roots; a scan of r over (−1, 10⁶) shows one sign change of the NPV:
      //   python3 -c "import numpy as np; cf=[(0,-100000),(200,40000),(400,-25000),(730,90000)]; r=np.concatenate([np.linspace(-0.999,10,100001),np.geomspace(10,1e6,100001)]); v=sum(a*(1+r)**(-t/365) for t,a in cf); print(np.count_nonzero(np.diff(np.sign(v))))"
      //   -> 1
      name: 'two years, withdrawal then deposit (three sign changes, one root)',
      command:
        'python3 -c "from scipy.optimize import brentq; cf=[(0,-100000),(200,40000),(400,-25000),(730,90000)]; print(repr(brentq(lambda r: sum(a*(1+r)**(-t/365) for t,a in cf), -0.99, 10, xtol=1e-15)))"',
      flows: [
        { t: 0, amount: -100_000 },
        { t: 200, amount: 40_000 },
        { t: 400, amount: -25_000 },
        { t: 730, amount: 90_000 },
      ],
      days: 730,
      annualRate: 0.02992396777860891,
    },
    {
      name: 'ten days up 10 % (huge annual rate)',
      command:
        'python3 -c "from scipy.optimize import brentq; cf=[(0,-1000),(10,1100)]; print(repr(brentq(lambda r: sum(a*(1+r)**(-t/365) for t,a in cf), -0.99, 100, xtol=1e-15)))"',
      flows: [
        { t: 0, amount: -1_000 },
        { t: 10, amount: 1_100 },
      ],
      days: 10,
      annualRate: 31.421492863531956,
    },
    {
      name: 'since inception (start value 0) with two deposits',
      command:
        'python3 -c "from scipy.optimize import brentq; cf=[(0,-50000),(100,-20000),(500,80000)]; print(repr(brentq(lambda r: sum(a*(1+r)**(-t/365) for t,a in cf), -0.99, 10, xtol=1e-15)))"',
      flows: [
        { t: 0, amount: -0 },
        { t: 0, amount: -50_000 },
        { t: 100, amount: -20_000 },
        { t: 500, amount: 80_000 },
      ],
      days: 500,
      annualRate: 0.10884908656882818,
    },
  ];

  it.each(cases)('$name', ({ flows, days, annualRate }) => {
    expectRelativelyClose(moneyWeightedReturn(flows, days), annualRate, 1e-12);
    // The window's own rate is (1 + r)^(days/365) − 1 of the same root.
    expectRelativelyClose(moneyWeightedWindowReturn(flows, days), (1 + annualRate) ** (days / 365) - 1, 1e-12);
    expectRelativelyClose(periodRate(moneyWeightedReturn(flows, days) as number, days), (1 + annualRate) ** (days / 365) - 1, 1e-12);
  });

  it('gives exactly the window growth for a window without flows (hand-worked)', () => {
    // 1,000 → 1,100 over 10 days: (1 + r)^(10/365) = 1.1, the window's own rate is 0.1.
    expectRelativelyClose(
      moneyWeightedWindowReturn([
        { t: 0, amount: -1_000 },
        { t: 10, amount: 1_100 },
      ], 10),
      0.1,
      1e-14,
    );
  });

  it('returns null when there are two roots (−100, +230, −132 at yearly spacing: 10 % and 20 %)', () => {
    // By hand: with x = 1/(1 + r), −100 + 230x − 132x² = 0 ⇒ x = (230 ± 10)/264 ⇒ r = 10 % or 20 %.
    // SciPy finds both:
    //   python3 -c "from scipy.optimize import brentq; cf=[(0,-100),(365,230),(730,-132)]; f=lambda r: sum(a*(1+r)**(-t/365) for t,a in cf); print(repr(brentq(f, 0.05, 0.15, xtol=1e-15)), repr(brentq(f, 0.15, 0.25, xtol=1e-15)))"
    //   -> 0.10000000000000178 0.20000000000000182
    const flows = [
      { t: 0, amount: -100 },
      { t: 365, amount: 230 },
      { t: 730, amount: -132 },
    ];
    expect(moneyWeightedReturn(flows, 730)).toBeNull();
    expect(moneyWeightedWindowReturn(flows, 730)).toBeNull();
  });

  it('returns null when there is no root', () => {
    // All flows of one sign: the NPV never vanishes.
    expect(moneyWeightedReturn([{ t: 0, amount: -100 }, { t: 100, amount: -50 }], 365)).toBeNull();
    // Two sign changes and no root: with z = (1 + r)^(−1/2), 100 − 250z + 200z² has
    // discriminant 250² − 4·200·100 = −17,500 < 0; its minimum is 21.875 at z = 0.625:
    //   python3 -c "import numpy as np; cf=[(0,100),(182.5,-250),(365,200)]; r=np.concatenate([np.linspace(-0.999,10,100001),np.geomspace(10,1e6,100001)]); v=sum(a*(1+r)**(-t/365) for t,a in cf); print(np.count_nonzero(np.diff(np.sign(v))), v.min())"
    //   -> 0 21.875000002227623
    expect(
      moneyWeightedReturn([
        { t: 0, amount: 100 },
        { t: 182.5, amount: -250 },
        { t: 365, amount: 200 },
      ], 365),
    ).toBeNull();
  });

  it('returns null for all-zero flows, and nets flows on the same day', () => {
    expect(moneyWeightedReturn([{ t: 0, amount: 0 }, { t: 30, amount: 0 }], 30)).toBeNull();
    expect(moneyWeightedReturn([], 30)).toBeNull();
    // A deposit and a withdrawal of 5,000 on day 40 cancel: same as 1,000 → 1,100 over a year.
    expectRelativelyClose(
      moneyWeightedReturn([
        { t: 0, amount: -1_000 },
        { t: 40, amount: -5_000 },
        { t: 40, amount: 5_000 },
        { t: 365, amount: 1_100 },
      ], 365),
      0.1,
      1e-14,
    );
  });

  it('refuses an annual rate too large for a double, which the window rate still gives', () => {
    // ×10 in one day: (1 + r) = 10^365, beyond the largest double.
    const flows = [
      { t: 0, amount: -1 },
      { t: 1, amount: 10 },
    ];
    expect(() => moneyWeightedReturn(flows, 1)).toThrow(MetricError);
    expectRelativelyClose(moneyWeightedWindowReturn(flows, 1), 9, 1e-14);
  });

  it('refuses flows outside the window', () => {
    expect(() => moneyWeightedReturn([{ t: 400, amount: 1 }], 365)).toThrow(
      "moneyWeightedReturn requires each flow's t in 0…365 days, got 400 for flow 0",
    );
  });
});

describe('findRootBrent', () => {
  it('finds the root of cos x − x (SciPy reference)', () => {
    //   python3 -c "from scipy.optimize import brentq; import math; print(repr(brentq(lambda x: math.cos(x) - x, 0, 1, xtol=1e-15)))"
    //   -> 0.7390851332151607
    expectRelativelyClose(findRootBrent((x) => Math.cos(x) - x, 0, 1), 0.7390851332151607, 4e-16);
  });

  it('refuses a bracket without a sign change and reports non-convergence as an error', () => {
    expect(() => findRootBrent((x) => x * x + 1, -1, 1)).toThrow('findRootBrent requires a sign change over the bracket');
    expect(() => findRootBrent((x) => Math.cos(x) - x, 0, 1, { maxIterations: 2 })).toThrow(
      'findRootBrent did not converge in 2 iterations',
    );
  });
});
