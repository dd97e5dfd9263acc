/**
 * The view model of a statement: what is shown, in which words and
 * formats, and what replaces a figure that is not available.
 */
import { describe, expect, it } from 'vitest';
import { DEFAULT_CAUTIONS } from '../../src/report/cautions.ts';
import { NOT_AVAILABLE } from '../../src/report/format.ts';
import { type StatementView, statementView } from '../../src/report/statement.ts';
import type { DistributionChart, GrowthChart, RiskReturnChart } from '../../src/report/charts.ts';
import { sampleFigures } from './fixtures.ts';

const firm = { name: 'Test Firm', address: '1 Test Street', email: null, phone: '+44 1', regulatoryNote: 'Authorised by nobody.' };
const settings = { firm, cautions: null };

function texts(view: StatementView['glance']['movements']): Record<string, string> {
  return Object.fromEntries(view.map((item) => [item.label, item.value.text]));
}

describe('at a glance', () => {
  const view = statementView(sampleFigures(), settings);
  it('shows start and end values and what moved them, in the client\'s locale', () => {
    expect(view.glance.start.value.text).toBe('€1,000,000.00');
    expect(view.glance.end.value.text).toBe('€1,080,000.00');
    // Market movement = investment result − income + fees + taxes (outputs.md: investment_result
    // = end − start − flows = market + income − fees − taxes): 30 000 − 4 000 + 2 500 + 500 = 29 000.
    expect(texts(view.glance.movements)).toEqual({
      'Money paid in less money taken out': '+€50,000.00',
      'Income: dividends and interest': '+€4,000.00',
      Fees: '-€2,500.00',
      Taxes: '-€500.00',
      'Market movement (prices and exchange rates)': '+€29,000.00',
    });
  });
  it('compares the period return with the benchmark', () => {
    expect(view.glance.returnFigures.map((item) => item.value.text)).toEqual(['+2.75%', '+2.50%', '+0.25\u00a0pp']);
    expect(view.glance.returnSentence).toBe('Your account returned 0.25\u00a0pp more than its benchmark.');
  });
  it('counts the breaches of the mandate', () => {
    expect(view.glance.breaches).toBe(3);
    expect(view.glance.breachSentence).toBe('3 checks of your mandate are outside their limits; see “Mandate review”.');
  });
  it('uses the since-inception window for an account opened during the period', () => {
    const base = sampleFigures();
    const opened = statementView(sampleFigures({ inception: '2026-08-10', returns: { ...base.returns, period: null, ytd: null, '1y': null, '3y': null, '5y': null } }), settings);
    expect(opened.glance.returnWindow).toBe('Since inception on 10 August 2026 (the account opened during this period)');
    const ytd = opened.performance.rows.find((row) => row.id === 'ytd')!;
    expect(ytd.unavailable?.text).toBe(NOT_AVAILABLE);
    expect(opened.performance.footnotes[ytd.unavailable!.note! - 1]!.text).toBe('The account opened on 10 August 2026, after this window began.');
  });
});

describe('performance', () => {
  const view = statementView(sampleFigures(), settings);
  it('lists the six windows with annualised ones marked', () => {
    expect(view.performance.rows.map((row) => [row.label, row.annualised])).toEqual([
      ['This period (2026-Q3)', false], ['Year to date', false], ['1 year', true], ['3 years', true], ['5 years', true], ['Since inception', true],
    ]);
    expect(view.performance.rows[0]!.range).toBe('1 Jul 2026 – 30 Sept 2026');
    expect(view.performance.rows[2]!.cells.map((cell) => cell.text)).toEqual(['+8.10%', '+8.30%', '+8.00%', '+9.20%', '-1.10\u00a0pp']);
    expect(view.performance.rows[2]!.cells[4]!.tone).toBe('down');
  });
  it('describes realised risk over its months', () => {
    expect(view.performance.realised?.caption).toBe('Measured on the 36 complete months from October 2023 to September 2026, net of fees.');
    expect(view.performance.realised?.rows.map((row) => row.value.text)).toEqual(['9.00%', '3.00%', '0.20', '0.50', '12.00%']);
  });
});

describe('holdings and activity', () => {
  const view = statementView(sampleFigures(), settings);
  it('groups holdings by asset class in the order of the allocation', () => {
    expect(view.holdings.groups.map((group) => [group.label, group.value.text, group.weight.text])).toEqual([
      ['Cash', '80,000.12', '7.4%'],
      ['Equities', '999,999.88', '92.6%'],
    ]);
    expect(view.holdings.totalWeight).toBeCloseTo(1, 6);
  });
  it('marks a stale price with its date and explains the mark', () => {
    const stale = view.holdings.groups[1]!.rows[1]!;
    expect(stale).toMatchObject({ stale: true, priceNote: 'last price 1 Sept 2026', price: '999.9999', quantity: '400' });
    expect(view.holdings.staleNote).toContain('no price newer than 7 days');
  });
  it('shows cash balances with two decimals and no price', () => {
    expect(view.holdings.groups[0]!.rows[0]).toMatchObject({ quantity: '80,000.12', price: '–', instrument: null });
  });
  it('words transactions, with – where a column does not apply', () => {
    expect(view.activity.rows.map((row) => [row.date, row.type, row.description, row.quantity, row.price, row.fees, row.amount.text])).toEqual([
      ['1 Jul 2026', 'Deposit', '', '–', '–', '–', '+50,000.00'],
      ['15 Aug 2026', 'Purchase', 'Alpha Industries', '10', '590.00', '12.50', '-5,912.50'],
      ['15 Sept 2026', 'Dividend', 'Beta & Sons <Holdings>', '–', '–', '–', '+4,000.00'],
    ]);
  });
});

describe('risk', () => {
  const view = statementView(sampleFigures(), settings);
  it('labels every expected figure as an estimate', () => {
    expect(view.risk.expected?.every((row) => row.label.includes('(estimate)'))).toBe(true);
    expect(view.risk.expected?.map((row) => row.value.text)).toEqual(['6.00% a year', '12.00% a year', '4.00% a year', 'a loss of 13.74%', 'a loss of 18.75%']);
  });
  it('words each shortfall rule with its status and lognormal sensitivity', () => {
    expect(view.risk.shortfall.map((rule) => [rule.sentence, rule.status, rule.lognormal])).toEqual([
      ['A loss worse than 10% over one year: 9.1% probability, limit 5%.', 'Outside limit', '8.5%'],
      ['A loss worse than 5% in total over 5 years: 4.0% probability, limit 10%.', 'Within limit', '4.5%'],
    ]);
  });
  it('draws each rule as its boundary line μ = q + z_c σ/√h (cumulative: q/h + z_c σ/√h)', () => {
    const chart = view.risk.riskReturn as RiskReturnChart;
    // z_0.95 = 1.6448536269514722, z_0.9/√5 = 0.5731272834458007:
    // python3 -c "from scipy.stats import norm; import math; print(norm.ppf(0.95), norm.ppf(0.9)/math.sqrt(5))"
    const [average, cumulative] = chart.ruleLines;
    for (const [line, intercept, slope] of [[average!, -0.1, 1.6448536269514722], [cumulative!, -0.01, 0.5731272834458007]] as const) {
      expect(line.y1).toBeCloseTo(intercept + slope * line.x1, 12);
      expect(line.y2).toBeCloseTo(intercept + slope * line.x2, 12);
      expect(line.x1).toBeGreaterThanOrEqual(chart.xDomain[0]);
      expect(line.x2).toBeLessThanOrEqual(chart.xDomain[1]);
      expect(line.y2).toBeLessThanOrEqual(chart.yDomain[1] + 1e-12);
    }
    expect(chart.points.map((point) => point.role)).toEqual(['account', 'benchmark', 'optimal']);
  });
  it('draws the one-year distribution N(μ, σ²) with the tail below the first threshold', () => {
    const chart = view.risk.distribution as DistributionChart;
    // norm.pdf(0.06, 0.06, 0.12) = 3.3245190033452725 (SciPy 1.x: python3 -c "from scipy.stats import norm; print(norm.pdf(0.06, 0.06, 0.12))")
    const peak = Math.max(...chart.curve.map((point) => point.density));
    expect(peak).toBeCloseTo(3.3245190033452725, 10);
    expect(chart.threshold).toBe(-0.1);
    expect(chart.tail.every((point) => point.r <= -0.1)).toBe(true);
    expect(chart.labels.valueAtRisk).toBe('95% value at risk: -13.7%');
  });
  it('shows growth from 100 (index × 100)', () => {
    const chart = view.performance.growth as GrowthChart;
    expect(chart.points.filter((point) => point.series === 'Your account').map((point) => point.value)).toEqual([100, 101, 135.43]);
    expect(chart.summary).toContain('grew to 135.4 by 30 September 2026, the benchmark to 130.1');
  });
});

describe('mandate review', () => {
  const view = statementView(sampleFigures(), settings);
  it('orders checks (allocation, positions, rules, then book-keeping) and words their figures', () => {
    expect(view.review.checks.map((check) => [check.name, check.status])).toEqual([
      ['Share of Cash', 'Within limits'],
      ['Share of Equities', 'Outside limits'],
      ['Largest single holding', 'Within limits'],
      ['Shortfall rule 1', 'Outside limits'],
      ['Shortfall rule 2', 'Within limits'],
      ['Up-to-date prices', 'Outside limits'],
      ['Agreement with the custodian', 'Not assessed'],
    ]);
    expect(view.review.checks[1]!.figures).toBe('92.6% of the account; mandate range 30.0% to 70.0%.');
    expect(view.review.checks[5]!.figures).toBe('Older than 7 days: Beta & Sons <Holdings>: last price 1 September 2026.');
    expect(view.review.checks[6]!.figures).toBe('The book has no holdings.csv.');
  });
  it('words the shift to the model mix as a topic for discussion, not an instruction', () => {
    const shift = view.review.shift!;
    expect(shift.rows.map((row) => [row.label, row.current.text, row.model, row.shift])).toEqual([
      ['Cash', '7.4%', '30.0%', '+22.6\u00a0pp'],
      ['Equities', '92.6%', '70.0%', '-22.6\u00a0pp'],
    ]);
    expect(shift.summary).toBe('Compared with your current mix, the model mix holds more Cash (+22.6\u00a0pp) and less Equities (-22.6\u00a0pp). '
      + 'A topic to discuss with your adviser, who will weigh it against your circumstances, costs and taxes; it is not an instruction to trade.');
  });
  it('never presents an infeasible model mix as meeting the rules', () => {
    const infeasible = statementView(sampleFigures({ optimal_mix: { ...sampleFigures().optimal_mix!, feasible: false } }), settings);
    expect(infeasible.review.shift?.intro).toContain('it does not meet them all');
  });
});

describe('figures that are not available', () => {
  const figures = sampleFigures({
    realised_risk: null,
    expected_risk: null,
    shortfall: null,
    optimal_mix: null,
    frontier: null,
    growth: [],
    returns: { ...sampleFigures().returns, '1y': { ...sampleFigures().returns['1y']!, mwr: null } },
    notes: [
      'Realised risk needs at least 12 complete months since inception; this account has 3',
      'Expected risk is unavailable: no covariance estimate for EQ-X',
      '1y: the money-weighted return is unavailable: its cash flows have no unique rate (no root, or several)',
    ],
  });
  const view = statementView(figures, settings);
  it('says "not available" and gives the reason from the notes', () => {
    const mwr = view.performance.rows[2]!.cells[2]!;
    expect(mwr.text).toBe(NOT_AVAILABLE);
    expect(view.performance.footnotes[mwr.note! - 1]!.text).toBe('1 year: the money-weighted return is unavailable: its cash flows have no unique rate (no root, or several).');
    expect(view.performance.realisedUnavailable).toBe('Realised risk needs at least 12 complete months since inception; this account has 3.');
    expect(view.risk.expectedUnavailable).toBe('Expected risk is unavailable: no covariance estimate for EQ-X.');
    expect(view.risk.shortfallUnavailable).toBe('Expected risk is unavailable: no covariance estimate for EQ-X.');
    expect(view.review.shiftUnavailable).toBe('Expected risk is unavailable: no covariance estimate for EQ-X.');
    expect(view.performance.growthUnavailable).toMatch(/^The growth chart needs/);
  });
  it('draws no chart it has no figures for', () => {
    expect([view.performance.growth, view.risk.riskReturn, view.risk.distribution]).toEqual([null, null, null]);
    expect(view.holdings.chart).not.toBeNull();
  });
  it('never shows NaN, undefined or null as text', () => {
    const json = JSON.stringify(view);
    expect(json).not.toMatch(/NaN|undefined|"null"|Infinity/);
  });
});

describe('an account with nothing in it at the period end', () => {
  it('shows its empty holdings and says why weights are not available', () => {
    const base = sampleFigures();
    const view = statementView(sampleFigures({
      value: { ...base.value, end: 0 },
      holdings: [],
      allocation: base.allocation.map((row) => ({ ...row, weight: null, risk_contribution: null })),
      expected_risk: null, shortfall: null, optimal_mix: null, frontier: null,
      notes: ['Expected risk is unavailable: the account has no positive value at the period end'],
    }), settings);
    expect(view.holdings.groups).toEqual([]);
    expect(view.holdings.totalWeight).toBeNull();
    expect(view.holdings.chart).toBeNull();
    expect(view.risk.expectedUnavailable).toBe('Expected risk is unavailable: the account has no positive value at the period end.');
  });
});

describe('important information', () => {
  it('carries the built-in cautions unless the firm set its own', () => {
    expect(statementView(sampleFigures(), settings).important.cautions).toBe(DEFAULT_CAUTIONS);
    expect(statementView(sampleFigures(), { firm, cautions: ['Our own words.'] }).important.cautions).toEqual(['Our own words.']);
  });
  it('defaults cover past performance, loss of capital, model estimates, currency and the deferral to licensed advice', () => {
    const all = DEFAULT_CAUTIONS.join(' ');
    for (const phrase of ['Past performance is not a reliable indicator', 'get back less than you invested', 'model estimates', 'understates the chance of extreme losses', 'exchange-rate', 'not personal advice', 'licensed adviser', 'jurisdiction']) {
      expect(all).toContain(phrase);
    }
  });
  it('formats in the client\'s locale', () => {
    const view = statementView(sampleFigures({ locale: 'de-DE' }), settings);
    expect(view.glance.end.value.text).toBe('1.080.000,00\u00a0€');
    expect(view.period.range).toBe('1. Juli 2026 to 30. September 2026');
  });
});
