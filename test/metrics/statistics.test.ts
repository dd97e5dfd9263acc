import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { parse } from 'csv-parse/sync';
import { describe, expect, it } from 'vitest';
import { MetricError } from '../../src/errors.ts';
import { annualisedVolatility } from '../../src/metrics/realised.ts';
import {
  correlation,
  covarianceMatrix,
  mean,
  sampleCovariance,
  sampleStandardDeviation,
  sampleVariance,
} from '../../src/metrics/statistics.ts';

/** |actual − expected| ≤ tolerance · |expected|. */
function expectRelativelyClose(actual: number, expected: number, tolerance: number): void {
  expect(Math.abs(actual - expected), `actual ${actual}, expected ${expected}`).toBeLessThanOrEqual(
    tolerance * Math.abs(expected),
  );
}

/*
 * Data: `data/stocks.csv` of the npm package vega-datasets (BSD-3-Clause), read
 * from node_modules at test time: columns symbol,date,price; month-start prices
 * of MSFT, AMZN, IBM, GOOG, AAPL.
 *
 * Definition: the months all five symbols share (GOOG starts later: Aug 2004 to
 * Mar 2010, 68 consecutive months); monthly simple returns p_m / p_{m−1} − 1 of
 * each symbol over those months (67 returns per symbol).
 *
 * Reference values: NumPy 2.4.6, from the repository root:
 *
 *   python3 - <<'EOF'
 *   import csv, numpy as np
 *   from datetime import datetime
 *   rows = list(csv.DictReader(open('node_modules/vega-datasets/data/stocks.csv')))
 *   symbols = ['MSFT', 'AMZN', 'IBM', 'GOOG', 'AAPL']
 *   prices = {s: {datetime.strptime(r['date'], '%b %d %Y'): float(r['price']) for r in rows if r['symbol'] == s} for s in symbols}
 *   months = sorted(set.intersection(*(set(p) for p in prices.values())))
 *   P = np.array([[prices[s][m] for m in months] for s in symbols])
 *   R = P[:, 1:] / P[:, :-1] - 1
 *   print(len(months), months[0].date(), months[-1].date(), R.shape)
 *   print('mean', R.mean(axis=1).tolist())
 *   print('std', np.std(R, axis=1, ddof=1).tolist())
 *   print('cov', np.cov(R, ddof=1).tolist())
 *   print('corr', np.corrcoef(R).tolist())
 *   EOF
 *
 * printed `68 2004-08-01 2010-03-01 (5, 67)` and the arrays below.
 * Tolerance: 1e-12 relative.
 */
const SYMBOLS = ['MSFT', 'AMZN', 'IBM', 'GOOG', 'AAPL'] as const;
const NUMPY_MEAN = [
  0.006147374222102517, 0.027613130827533798, 0.009005355527141354, 0.03225625985976269, 0.046838844201868554,
];
const NUMPY_STD_DDOF1 = [
  0.0705480503426679, 0.14017937998680177, 0.06123548815559551, 0.11967270841798569, 0.1252690426608392,
];
const NUMPY_COV_DDOF1 = [
  [0.004977027407151604, 0.0036659333151154304, 0.0012045107959548869, 0.003503044184845466, 0.004079490873818206],
  [0.0036659333151154304, 0.019650258573484167, 0.004313246903888135, 0.004228720067943493, 0.004869391294294964],
  [0.0012045107959548869, 0.004313246903888135, 0.0037497850096540777, 0.0016376017480147203, 0.0030324908178913047],
  [0.003503044184845466, 0.004228720067943493, 0.0016376017480147203, 0.014321557140096225, 0.00826085697952846],
  [0.004079490873818206, 0.004869391294294964, 0.0030324908178913047, 0.00826085697952846, 0.015692333049163155],
];
const NUMPY_CORRCOEF = [
  [1.0, 0.3706938746334183, 0.2788190842468427, 0.41492106030693593, 0.46161210753350074],
  [0.3706938746334183, 0.9999999999999998, 0.5024779402980818, 0.25207494548705045, 0.27729802840854023],
  [0.2788190842468427, 0.5024779402980819, 1.0, 0.2234652454800133, 0.3953234272357926],
  [0.414921060306936, 0.25207494548705045, 0.2234652454800133, 0.9999999999999999, 0.5510439325249494],
  [0.46161210753350074, 0.27729802840854023, 0.3953234272357926, 0.5510439325249495, 1.0],
];

const MONTHS = ['Jan', 'Feb', 'Mar', 'Apr', 'May', 'Jun', 'Jul', 'Aug', 'Sep', 'Oct', 'Nov', 'Dec'];

/** Months since year 0 of a date written `Aug 1 2004`. */
function monthNumber(date: string): number {
  const [monthName, day, year] = date.split(' ');
  const month = MONTHS.indexOf(monthName ?? '');
  if (month < 0 || day !== '1' || year === undefined) throw new Error(`unexpected date in stocks.csv: ${date}`);
  return Number(year) * 12 + month;
}

function loadSharedMonthlyReturns(): { readonly months: number[]; readonly returns: Float64Array[] } {
  // The package exports only its JavaScript entry, so the file is found by path.
  const csvPath = fileURLToPath(new URL('../../node_modules/vega-datasets/data/stocks.csv', import.meta.url));
  const rows = parse(readFileSync(csvPath, 'utf8'), { columns: true, skip_empty_lines: true }) as Array<
    Record<'symbol' | 'date' | 'price', string>
  >;
  const priceBySymbol = new Map<string, Map<number, number>>(SYMBOLS.map((symbol) => [symbol, new Map()]));
  for (const row of rows) {
    const prices = priceBySymbol.get(row.symbol);
    if (prices === undefined) throw new Error(`unexpected symbol in stocks.csv: ${row.symbol}`);
    prices.set(monthNumber(row.date), Number(row.price));
  }
  const shared = [...(priceBySymbol.get('GOOG') as Map<number, number>).keys()]
    .filter((month) => SYMBOLS.every((symbol) => priceBySymbol.get(symbol)?.has(month)))
    .sort((left, right) => left - right);
  const returns = SYMBOLS.map((symbol) => {
    const prices = priceBySymbol.get(symbol) as Map<number, number>;
    const monthly = new Float64Array(shared.length - 1);
    for (let index = 1; index < shared.length; index += 1) {
      monthly[index - 1] = (prices.get(shared[index] as number) as number) / (prices.get(shared[index - 1] as number) as number) - 1;
    }
    return monthly;
  });
  return { months: shared, returns };
}

describe('statistics on vega-datasets stocks.csv against NumPy', () => {
  const { months, returns } = loadSharedMonthlyReturns();

  it('uses the 68 consecutive months Aug 2004 to Mar 2010 that all five symbols share', () => {
    expect(months).toHaveLength(68);
    expect(months[0]).toBe(2004 * 12 + 7);
    expect(months[67]).toBe(2010 * 12 + 2);
    months.forEach((month, index) => expect(month - (months[0] as number)).toBe(index));
    for (const series of returns) expect(series).toHaveLength(67);
  });

  it('mean matches R.mean(axis=1)', () => {
    returns.forEach((series, index) => expectRelativelyClose(mean(series), NUMPY_MEAN[index] as number, 1e-12));
  });

  it('sample standard deviation and variance match np.std(ddof=1)', () => {
    returns.forEach((series, index) => {
      const expectedStd = NUMPY_STD_DDOF1[index] as number;
      expectRelativelyClose(sampleStandardDeviation(series), expectedStd, 1e-12);
      expectRelativelyClose(sampleVariance(series), expectedStd * expectedStd, 1e-12);
      // annualised volatility = std × √12 (methods.md, realised risk)
      expectRelativelyClose(annualisedVolatility(series), expectedStd * Math.sqrt(12), 1e-12);
    });
  });

  it('covariance matrix and pairwise covariance match np.cov(ddof=1)', () => {
    const matrix = covarianceMatrix(returns);
    expect(matrix).toHaveLength(5);
    NUMPY_COV_DDOF1.forEach((row, j) =>
      row.forEach((expected, k) => {
        expectRelativelyClose((matrix[j] as number[])[k] as number, expected, 1e-12);
        expectRelativelyClose(sampleCovariance(returns[j] as Float64Array, returns[k] as Float64Array), expected, 1e-12);
        expect((matrix[j] as number[])[k]).toBe((matrix[k] as number[])[j]);
      }),
    );
  });

  it('correlation matches np.corrcoef', () => {
    NUMPY_CORRCOEF.forEach((row, j) =>
      row.forEach((expected, k) => {
        expectRelativelyClose(correlation(returns[j] as Float64Array, returns[k] as Float64Array), expected, 1e-12);
      }),
    );
  });
});

describe('statistics on small hand-worked series', () => {
  it('gives the textbook values of a short series', () => {
    // x = 2, 4, 4, 4, 5, 5, 7, 9: mean 40/8 = 5; squared deviations 9+1+1+1+0+0+4+16 = 32;
    // sample variance 32/7; population variance 32/8 = 4 would be the other convention.
    const x = [2, 4, 4, 4, 5, 5, 7, 9];
    expect(mean(x)).toBe(5);
    expectRelativelyClose(sampleVariance(x), 32 / 7, 1e-15);
    expectRelativelyClose(sampleStandardDeviation(x), Math.sqrt(32 / 7), 1e-15);
    // y = 2x + 1 is perfectly correlated with x; its covariance with x is 2 × var(x) = 64/7.
    const y = x.map((value) => 2 * value + 1);
    expectRelativelyClose(sampleCovariance(x, y), 64 / 7, 1e-15);
    expect(correlation(x, y)).toBe(1);
    expect(correlation(x, y.map((value) => -value))).toBe(-1);
  });

  it('keeps its precision when the mean is large against the spread', () => {
    // 1e9 + (2, 4, 4, 4, 5, 5, 7, 9): the same deviations, so the same variance 32/7.
    // The one-pass Σx² − n·x̄² form loses every digit here.
    const shifted = [2, 4, 4, 4, 5, 5, 7, 9].map((value) => 1e9 + value);
    expectRelativelyClose(sampleVariance(shifted), 32 / 7, 1e-12);
  });
});

describe('statistics refuse unusable input in one wording', () => {
  it('refuses fewer than 2 observations', () => {
    expect(() => sampleVariance([0.01])).toThrow(MetricError);
    expect(() => sampleVariance([0.01])).toThrow('sampleVariance requires at least 2 observations, got 1');
    expect(() => sampleStandardDeviation([])).toThrow('sampleStandardDeviation requires at least 2 observations, got 0');
    expect(() => covarianceMatrix([[1], [2]])).toThrow('covarianceMatrix requires at least 2 observations, got 1');
    expect(() => mean([])).toThrow('mean requires at least 1 observation, got 0');
  });

  it('refuses series of unequal length', () => {
    expect(() => sampleCovariance([1, 2, 3], [1, 2])).toThrow('sampleCovariance requires series of equal length, got 3 and 2');
    expect(() => correlation([1, 2], [1, 2, 3])).toThrow('correlation requires series of equal length, got 2 and 3');
    expect(() => covarianceMatrix([[1, 2, 3], [1, 2]])).toThrow('covarianceMatrix requires series of equal length, got 3 and 2');
  });

  it('refuses non-finite values', () => {
    expect(() => sampleVariance([0.01, Number.NaN, 0.02])).toThrow('sampleVariance requires finite observations, got NaN at index 1');
    expect(() => mean([Number.POSITIVE_INFINITY])).toThrow('mean requires finite observations, got Infinity at index 0');
  });

  it('refuses the correlation of a constant series', () => {
    expect(() => correlation([1, 1, 1], [1, 2, 3])).toThrow('correlation requires non-constant series, got zero variance in x');
  });
});
