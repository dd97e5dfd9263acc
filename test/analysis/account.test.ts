/**
 * One account end to end on a hand-worked book: every expected number below
 * is worked out by hand from the definitions in docs/spec/methods.md
 * ("Time-weighted return": r_d = V_d / (V_{d−1} + F_d) − 1, flows at the
 * start of their day; gross-of-fee treats fee rows as outflows).
 */
import { describe, expect, it } from 'vitest';
import { computeRun } from '../../src/run/build.ts';
import { TEST_INSTRUMENTS, writeBook } from '../helpers/write-book.ts';

const INSTRUMENTS = TEST_INSTRUMENTS;

// S: 100 until 14 Jul, 110 from 15 Jul, 121 on 30 Sep.
// IDX: +5 % each month end: 100, 105, 110.25, 115.7625.
const PRICES = `date,instrument,price
2026-06-30,S,100
2026-07-15,S,110
2026-09-30,S,121
2026-06-30,IDX,100
2026-07-31,IDX,105
2026-08-31,IDX,110.25
2026-09-30,IDX,115.7625
2026-06-30,CIX,100
2026-09-30,CIX,100.5
`;

// Deposit 1000 and buy 10 S at 100 on 1 Jul; deposit 500 on 1 Aug; fee 10 on 1 Sep.
const TRANSACTIONS = `account,date,type,instrument,quantity,price,fees,amount,currency,note
A,2026-07-01,deposit,,,,,1000,,
A,2026-07-01,buy,S,10,100,0,,,
A,2026-08-01,deposit,,,,,500,,
A,2026-09-01,fee,,,,,10,,quarterly fee
`;

describe('an account on a hand-worked book', async () => {
  const dir = await writeBook({
    'accounts.csv': 'account,client,mandate,base_currency,adviser,email,inception,locale\nA,Client A,growth,EUR,,,,\n',
    'instruments.csv': INSTRUMENTS,
    'prices.csv': PRICES,
    'transactions.csv': TRANSACTIONS,
  });
  const result = await computeRun({ bookDir: dir, period: '2026-Q3', accounts: null });
  const figures = result.outcomes[0]!.figures!;

  it('reports the account', () => {
    expect(result.outcomes[0]!.status).toBe('reported');
  });

  it('values the account and sums the period', () => {
    // End: 10 × 121 + (1000 − 1000 + 500 − 10) cash = 1210 + 490.
    expect(figures.value.end).toBeCloseTo(1700, 9);
    // Inception 1 Jul is the first day of the period: start value 0 at the 30 Jun close.
    expect(figures.value.start).toBe(0);
    expect(figures.value.net_external_flows).toBeCloseTo(1500, 9);
    expect(figures.value.fees).toBeCloseTo(10, 9);
  });

  it('chain-links daily net and gross returns', () => {
    // Net: 15 Jul r = 1100/1000 − 1; 1 Aug r = 1600/(1100 + 500) − 1 = 0;
    // 1 Sep r = 1590/1600 − 1; 30 Sep r = 1700/1590 − 1. Product: 1.1 × 1700/1600 − 1.
    expect(figures.returns.period!.twr_net).toBeCloseTo(1.1 * 1700 / 1600 - 1, 12);
    // Gross: on 1 Sep the fee is an outflow: r = 1590/(1600 − 10) − 1 = 0. Product: 1.1 × 1700/1590 − 1.
    expect(figures.returns.period!.twr_gross).toBeCloseTo(1.1 * 1700 / 1590 - 1, 12);
    expect(figures.returns.since_inception!.twr_net).toBeCloseTo(1.1 * 1700 / 1600 - 1, 12);
    expect(figures.returns.period!.annualised).toBe(false);
  });

  it('compares with the monthly-rebalanced benchmark', () => {
    const benchmark = 115.7625 / 100 - 1;
    expect(figures.returns.period!.benchmark).toBeCloseTo(benchmark, 12);
    expect(figures.returns.period!.excess_arithmetic).toBeCloseTo(1.1 * 1700 / 1600 - 1 - benchmark, 12);
    expect(figures.returns.period!.excess_geometric).toBeCloseTo((1.1 * 1700 / 1600) / (1 + benchmark) - 1, 12);
  });

  it('leaves windows before inception out and realised risk null below 12 months', () => {
    expect(figures.returns.ytd).toBeNull();
    expect(figures.returns['1y']).toBeNull();
    expect(figures.realised_risk).toBeNull();
    expect(figures.notes.join(' ')).toContain('at least 12 complete months');
  });

  it('lists holdings with cash as CASH:<currency>', () => {
    expect(figures.holdings.map((row) => [row.instrument, row.quantity, row.value])).toEqual([
      ['CASH:EUR', 490, 490],
      ['S', 10, 1210],
    ]);
  });
});
