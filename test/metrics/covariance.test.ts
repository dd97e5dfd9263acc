/**
 * Tests of src/metrics/covariance.ts.
 *
 * Reference values: test/reference/ledoit_wolf_cc.py, two independent NumPy
 * implementations of Ledoit & Wolf (2004), "Honey, I shrunk the sample
 * covariance matrix", J. Portfolio Management 30(4), 110-119 (the paper's
 * formulas term by term, and a line-by-line translation of the authors' published
 * covCor.m, version 04/2014), which agree to rounding. Output of
 *
 *   python3 test/reference/ledoit_wolf_cc.py node_modules/vega-datasets/data
 *
 * pasted below (NumPy 2.4.6). The sample covariance is NumPy's
 * np.cov(returns, rowvar=False, ddof=1).
 *
 * Data (open, in the npm package vega-datasets 3.2.1):
 * - stocks.csv: monthly prices of AAPL, AMZN, GOOG, IBM, MSFT. Returns are
 *   monthly simple returns p_t / p_{t-1} - 1 over every pair of consecutive
 *   calendar months in which all five have a price (Aug 2004 to Mar 2010:
 *   67 returns), columns AAPL, AMZN, GOOG, IBM, MSFT. The intensity there is
 *   clipped at 1 (kappa / T = 77.9 / 67).
 * - us-employment.csv: monthly US employment levels; monthly simple changes of
 *   mining_and_logging, construction, manufacturing, information,
 *   financial_activities, government (Jan 2006 to Dec 2015: 119 changes),
 *   where the intensity is strictly between 0 and 1.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { MetricError } from '../../src/errors.ts';
import {
  annualisedCovariance,
  ledoitWolfConstantCorrelation,
  sampleCovariance,
} from '../../src/metrics/covariance.ts';

const DATA = new URL('../../node_modules/vega-datasets/data/', import.meta.url);
const MONTHS = ['Jan', 'Feb', 'Mar', 'Apr', 'May', 'Jun', 'Jul', 'Aug', 'Sep', 'Oct', 'Nov', 'Dec'];
const SYMBOLS = ['AAPL', 'AMZN', 'GOOG', 'IBM', 'MSFT'];
const SECTORS = ['mining_and_logging', 'construction', 'manufacturing', 'information', 'financial_activities', 'government'];

/** Monthly simple returns over consecutive calendar months in which every symbol has a price. */
function stockReturns(): number[][] {
  const prices = new Map<string, Map<number, number>>(SYMBOLS.map((s) => [s, new Map()]));
  const lines = readFileSync(new URL('stocks.csv', DATA), 'utf8').trim().split('\n').slice(1);
  for (const line of lines) {
    const [symbol, date, price] = line.split(',') as [string, string, string];
    const [month, , year] = date.split(' ') as [string, string, string];
    prices.get(symbol)!.set(Number(year) * 12 + MONTHS.indexOf(month), Number(price));
  }
  const common = [...prices.get(SYMBOLS[0]!)!.keys()].filter((m) => SYMBOLS.every((s) => prices.get(s)!.has(m))).sort((a, b) => a - b);
  const rows: number[][] = [];
  for (let k = 1; k < common.length; k++) {
    if (common[k]! - common[k - 1]! !== 1) continue;
    rows.push(SYMBOLS.map((s) => prices.get(s)!.get(common[k]!)! / prices.get(s)!.get(common[k - 1]!)! - 1));
  }
  return rows;
}

/** Monthly simple changes of the employment levels of six sectors. */
function employmentChanges(): number[][] {
  const [header, ...lines] = readFileSync(new URL('us-employment.csv', DATA), 'utf8').trim().split('\n');
  const columns = header!.split(',');
  const levels = lines.map((line) => {
    const cells = line.split(',');
    return SECTORS.map((sector) => Number(cells[columns.indexOf(sector)]));
  });
  return levels.slice(1).map((row, t) => row.map((level, i) => level / levels[t]![i]! - 1));
}

function expectMatrixClose(actual: number[][], expected: number[][], relative: number): void {
  expect(actual.length).toBe(expected.length);
  const scale = Math.max(...expected.flat().map(Math.abs));
  actual.forEach((row, i) =>
    row.forEach((value, j) => expect(Math.abs(value - expected[i]![j]!)).toBeLessThanOrEqual(relative * scale)),
  );
}

const STOCKS = {
  months: 67,
  firstReturns: [0.12347826086956526, 0.07131620346093337, 0.2659958972355181, 0.012280926186516439, 0.012906097018246632],
  averageCorrelation: 0.37277296461551257,
  kappa: 77.92324047777096,
  intensity: 1.0,
  sample: [
    [0.01569233304916316, 0.004869391294294964, 0.00826085697952846, 0.0030324908178913047, 0.004079490873818205],
    [0.004869391294294964, 0.019650258573484163, 0.004228720067943493, 0.004313246903888135, 0.003665933315115431],
    [0.00826085697952846, 0.004228720067943493, 0.014321557140096223, 0.0016376017480147203, 0.003503044184845466],
    [0.0030324908178913047, 0.004313246903888135, 0.0016376017480147203, 0.0037497850096540777, 0.0012045107959548869],
    [0.004079490873818205, 0.003665933315115431, 0.003503044184845466, 0.0012045107959548869, 0.004977027407151604],
  ],
  shrunk: [
    [0.015692333049163155, 0.0065459442285432335, 0.0055883459825304335, 0.0028595082266157004, 0.0032943761273522844],
    [0.0065459442285432335, 0.019650258573484163, 0.006253507317875775, 0.003199865519523581, 0.003686494230069904],
    [0.0055883459825304335, 0.006253507317875775, 0.014321557140096223, 0.0027317610716409662, 0.003147201458026707],
    [0.0028595082266157004, 0.003199865519523581, 0.0027317610716409662, 0.0037497850096540777, 0.0016103957214133146],
    [0.0032943761273522844, 0.003686494230069904, 0.003147201458026707, 0.0016103957214133146, 0.004977027407151604],
  ],
  shrunkAnnual: [
    [0.18830799658995787, 0.0785513307425188, 0.0670601517903652, 0.034314098719388404, 0.03953251352822741],
    [0.0785513307425188, 0.23580310288180995, 0.0750420878145093, 0.038398386234282975, 0.044237930760838845],
    [0.0670601517903652, 0.0750420878145093, 0.17185868568115467, 0.03278113285969159, 0.03776641749632048],
    [0.034314098719388404, 0.038398386234282975, 0.03278113285969159, 0.04499742011584893, 0.019324748656959774],
    [0.03953251352822741, 0.044237930760838845, 0.03776641749632048, 0.019324748656959774, 0.05972432888581925],
  ],
};

const EMPLOYMENT = {
  months: 119,
  firstReturns: [0.009146341463414531, 0.008288383107485808, -7.037297677692234e-05, 0.0, 0.003009510051763531, 0.0014189591248225941],
  averageCorrelation: 0.30883938967778674,
  kappa: 40.6512574537565,
  intensity: 0.3416072054937521,
  sample: [
    [9.49155826421619e-05, 2.0735856379165417e-05, 1.853429673564406e-05, 8.058681616229233e-06, 4.80274450858888e-06, -4.3869536003765917e-07],
    [2.0735856379165417e-05, 5.3340482316837966e-05, 2.361611332546501e-05, 1.2693570597833352e-05, 1.1385706617485221e-05, -1.012175729602382e-06],
    [1.853429673564406e-05, 2.361611332546501e-05, 1.8139914655091335e-05, 7.173830828635454e-06, 6.667991160628677e-06, -4.2028053998833736e-07],
    [8.058681616229233e-06, 1.2693570597833352e-05, 7.173830828635454e-06, 1.5494821311473e-05, 3.571650125017697e-06, -3.3562715700738576e-07],
    [4.80274450858888e-06, 1.1385706617485221e-05, 6.667991160628677e-06, 3.571650125017697e-06, 4.005604862467056e-06, -3.8426832867472173e-07],
    [-4.3869536003765917e-07, -1.012175729602382e-06, -4.2028053998833736e-07, -3.3562715700738576e-07, -3.8426832867472173e-07, 7.441172851062163e-06],
  ],
  shrunk: [
    [9.491558264216192e-05, 2.1159174572000686e-05, 1.6580548334222172e-05, 9.351739478948072e-06, 5.219226083655906e-06, 2.5149799016667287e-06],
    [2.1159174572000686e-05, 5.334048231683797e-05, 1.8830431138748693e-05, 1.1390418643964033e-05, 9.038401615768794e-06, 1.4354754198892583e-06],
    [1.6580548334222172e-05, 1.8830431138748693e-05, 1.8139914655091335e-05, 6.491965473886085e-06, 5.289471388661008e-06, 9.490293768577522e-07],
    [9.351739478948072e-06, 1.1390418643964033e-05, 6.491965473886085e-06, 1.5494821311473e-05, 3.182713324299756e-06, 9.118788416633864e-07],
    [5.219226083655906e-06, 9.038401615768794e-06, 5.289471388661008e-06, 3.182713324299756e-06, 4.005604862467056e-06, 3.2298985655308146e-07],
    [2.5149799016667287e-06, 1.4354754198892583e-06, 9.490293768577522e-07, 9.118788416633864e-07, 3.2298985655308146e-07, 7.441172851062164e-06],
  ],
  shrunkAnnual: [
    [0.0011389869917059429, 0.00025391009486400824, 0.00019896658001066606, 0.00011222087374737687, 6.263071300387087e-05, 3.0179758820000745e-05],
    [0.00025391009486400824, 0.0006400857878020557, 0.0002259651736649843, 0.0001366850237275684, 0.00010846081938922553, 1.72257050386711e-05],
    [0.00019896658001066606, 0.0002259651736649843, 0.00021767897586109602, 7.790358568663302e-05, 6.34736566639321e-05, 1.1388352522293027e-05],
    [0.00011222087374737687, 0.0001366850237275684, 7.790358568663302e-05, 0.00018593785573767598, 3.819255989159708e-05, 1.0942546099960636e-05],
    [6.263071300387087e-05, 0.00010846081938922553, 6.34736566639321e-05, 3.819255989159708e-05, 4.8067258349604675e-05, 3.875878278636978e-06],
    [3.0179758820000745e-05, 1.72257050386711e-05, 1.1388352522293027e-05, 1.0942546099960636e-05, 3.875878278636978e-06, 8.929407421274596e-05],
  ],
};

describe('the data sets', () => {
  it('stocks.csv gives 67 monthly returns over the months all five symbols share (NumPy, same definition)', () => {
    const returns = stockReturns();
    expect(returns.length).toBe(STOCKS.months);
    returns[0]!.forEach((r, i) => expect(r).toBeCloseTo(STOCKS.firstReturns[i]!, 15));
  });
  it('us-employment.csv gives 119 monthly changes', () => {
    const changes = employmentChanges();
    expect(changes.length).toBe(EMPLOYMENT.months);
    changes[0]!.forEach((r, i) => expect(r).toBeCloseTo(EMPLOYMENT.firstReturns[i]!, 15));
  });
});

describe('sampleCovariance and annualisedCovariance without shrinkage', () => {
  it('match np.cov(returns, rowvar=False, ddof=1) on stocks.csv, and 12 x that', () => {
    const returns = stockReturns();
    expectMatrixClose(sampleCovariance(returns), STOCKS.sample, 1e-13);
    const annual = annualisedCovariance(returns, 'none');
    expect(annual.shrinkageIntensity).toBeNull();
    expectMatrixClose(annual.matrix, STOCKS.sample.map((row) => row.map((v) => 12 * v)), 1e-13);
  });
  it('is unchanged by adding a constant to every return of an asset (mean-centred: no cancellation)', () => {
    const returns = stockReturns();
    const shifted = returns.map((row) => row.map((r, i) => (i === 0 ? r + 1e6 : r)));
    expectMatrixClose(sampleCovariance(shifted), STOCKS.sample, 1e-9);
  });
});

describe('ledoitWolfConstantCorrelation against the NumPy reference', () => {
  it('stocks.csv: r-bar, kappa, intensity (clipped at 1) and shrunk matrix', () => {
    const result = ledoitWolfConstantCorrelation(stockReturns());
    expect(result.averageCorrelation).toBeCloseTo(STOCKS.averageCorrelation, 13);
    expect(Math.abs(result.kappa! - STOCKS.kappa)).toBeLessThan(1e-10 * STOCKS.kappa);
    expect(result.intensity).toBe(1);
    expectMatrixClose(result.shrunk, STOCKS.shrunk, 1e-13);
    expectMatrixClose(result.target, STOCKS.shrunk, 1e-13);
    const annual = annualisedCovariance(stockReturns(), 'ledoit-wolf');
    expect(annual.shrinkageIntensity).toBe(1);
    expectMatrixClose(annual.matrix, STOCKS.shrunkAnnual, 1e-13);
  });
  it('us-employment.csv: an intensity strictly between 0 and 1, and the shrunk matrix', () => {
    const result = ledoitWolfConstantCorrelation(employmentChanges());
    expect(result.averageCorrelation).toBeCloseTo(EMPLOYMENT.averageCorrelation, 13);
    expect(Math.abs(result.kappa! - EMPLOYMENT.kappa)).toBeLessThan(1e-10 * EMPLOYMENT.kappa);
    expect(Math.abs(result.intensity - EMPLOYMENT.intensity)).toBeLessThan(1e-12);
    expectMatrixClose(result.shrunk, EMPLOYMENT.shrunk, 1e-12);
    const annual = annualisedCovariance(employmentChanges(), 'ledoit-wolf');
    expect(Math.abs(annual.shrinkageIntensity! - EMPLOYMENT.intensity)).toBeLessThan(1e-12);
    expectMatrixClose(annual.matrix, EMPLOYMENT.shrunkAnnual, 1e-12);
  });
  it('keeps the variances, and the shrunk matrix is delta F + (1 - delta) S with S the T - 1 sample covariance', () => {
    const changes = employmentChanges();
    const { target, intensity, shrunk } = ledoitWolfConstantCorrelation(changes);
    const sample = sampleCovariance(changes);
    shrunk.forEach((row, i) => {
      expect(row[i]).toBeCloseTo(sample[i]![i]!, 18);
      row.forEach((value, j) => {
        expect(value).toBeCloseTo(intensity * target[i]![j]! + (1 - intensity) * sample[i]![j]!, 18);
        expect(value).toBe(shrunk[j]![i]);
      });
    });
  });
  it('a single asset has nothing to shrink: intensity 0, the sample variance', () => {
    const one = stockReturns().map((row) => [row[0]!]);
    const result = ledoitWolfConstantCorrelation(one);
    expect(result.intensity).toBe(0);
    expect(result.shrunk[0]![0]).toBeCloseTo(STOCKS.sample[0]![0]!, 16);
  });
});

describe('refusals', () => {
  it('fewer than 2 months', () => {
    expect(() => annualisedCovariance([[0.01, 0.02]], 'none')).toThrow(
      new MetricError('annualisedCovariance requires at least 2 monthly returns, got 1'),
    );
  });
  it('a month with a missing return', () => {
    expect(() => sampleCovariance([[0.01, 0.02], [0.03]])).toThrow(
      new MetricError('sampleCovariance requires 2 returns in every month, got 1 in month 1'),
    );
    expect(() => sampleCovariance([[0.01, Number.NaN], [0.03, 0.01]])).toThrow(
      new MetricError('sampleCovariance requires finite returns, got NaN in month 0, asset 1'),
    );
  });
  it('a constant column under Ledoit-Wolf (its correlations do not exist)', () => {
    expect(() => ledoitWolfConstantCorrelation([[0.01, 0.002], [0.03, 0.002], [-0.01, 0.002]])).toThrow(
      new MetricError('ledoitWolfConstantCorrelation requires every asset to vary; column 1 is constant (zero variance)'),
    );
  });
});

describe('annualisedCovariance with a constant column', () => {
  // A constant series has zero sample variance and covariance (definition of
  // the sample covariance); its target entries r̄·√(s_ii s_jj) are zero, so the
  // shrunk matrix equals Ledoit-Wolf on the varying columns with zeros embedded.
  const varying = [
    [0.01, 0.02], [-0.02, 0.01], [0.03, -0.01], [0.00, 0.02], [0.015, -0.005], [-0.01, 0.0],
  ];
  const withConstant = varying.map(([a, b]) => [a!, 0.002, b!]);

  it('keeps exact zeros for the constant asset and matches the estimator on the others', () => {
    const reference = annualisedCovariance(varying, 'ledoit-wolf');
    const result = annualisedCovariance(withConstant, 'ledoit-wolf');
    expect(result.shrinkageIntensity).toBe(reference.shrinkageIntensity);
    expect(result.matrix[1]).toEqual([0, 0, 0]);
    expect(result.matrix.map((row) => row[1])).toEqual([0, 0, 0]);
    expect(result.matrix[0]![0]).toBe(reference.matrix[0]![0]);
    expect(result.matrix[0]![2]).toBe(reference.matrix[0]![1]);
    expect(result.matrix[2]![2]).toBe(reference.matrix[1]![1]);
  });
});
