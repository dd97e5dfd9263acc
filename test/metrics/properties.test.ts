/**
 * Properties of the return functions that follow from their definitions
 * (methods.md, "Time-weighted return" and "Money-weighted return"), checked on
 * seeded random accounts with fast-check.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  dailyReturns,
  linkReturns,
  moneyWeightedReturn,
  moneyWeightedWindowReturn,
  periodRate,
} from '../../src/metrics/returns.ts';

const FAST_CHECK_SEED = 20260701;
const RUNS = 200;

/** Growth factors 1 + R agree to `tolerance` relative. */
function expectSameGrowth(actual: number | null, expected: number, tolerance: number): void {
  expect(actual).not.toBeNull();
  expect(Math.abs((actual as number) - expected) / (1 + expected), `actual ${actual}, expected ${expected}`).toBeLessThanOrEqual(
    tolerance,
  );
}

/** One account: start value, and for each day a market return and a flow as a fraction of the previous close. */
const accountArbitrary = fc.record({
  startValue: fc.double({ min: 1_000, max: 10_000_000, noNaN: true }),
  days: fc.array(
    fc.record({
      marketReturn: fc.double({ min: -0.08, max: 0.08, noNaN: true }),
      // −0.6 (withdraw 60 %) … +1.5 (deposit 150 %); zero most of the time
      flowFraction: fc.oneof(
        { weight: 3, arbitrary: fc.constant(0) },
        { weight: 1, arbitrary: fc.double({ min: -0.6, max: 1.5, noNaN: true }) },
      ),
    }),
    { minLength: 2, maxLength: 120 },
  ),
});

type Account = typeof accountArbitrary extends fc.Arbitrary<infer T> ? T : never;

/** Closes and flows of an account: F_d = φ_d V_{d−1}, V_d = (V_{d−1} + F_d)(1 + r_d). */
function buildHistory(account: Account): { closes: Float64Array; flows: Float64Array } {
  const closes = new Float64Array(account.days.length);
  const flows = new Float64Array(account.days.length);
  let previous = account.startValue;
  account.days.forEach((day, index) => {
    flows[index] = day.flowFraction * previous;
    closes[index] = (previous + (flows[index] as number)) * (1 + day.marketReturn);
    previous = closes[index] as number;
  });
  return { closes, flows };
}

describe('time-weighted return properties (fast-check, seeded)', () => {
  it('a window split in two and chain-linked equals the whole', () => {
    fc.assert(
      fc.property(accountArbitrary, fc.double({ min: 0, max: 1, noNaN: true }), (account, splitAt) => {
        const { closes, flows } = buildHistory(account);
        const split = 1 + Math.floor(splitAt * (closes.length - 1)); // 1 … n−1: both parts non-empty
        const whole = linkReturns(dailyReturns(account.startValue, closes, flows));
        const first = linkReturns(dailyReturns(account.startValue, closes.subarray(0, split), flows.subarray(0, split)));
        const second = linkReturns(
          dailyReturns(closes[split - 1] as number, closes.subarray(split), flows.subarray(split)),
        );
        expectSameGrowth((1 + first) * (1 + second) - 1, whole, 1e-13);
      }),
      { seed: FAST_CHECK_SEED, numRuns: RUNS },
    );
  });

  it('the daily TWR recovers the market returns the account was built from, whatever the flows', () => {
    fc.assert(
      fc.property(accountArbitrary, (account) => {
        const { closes, flows } = buildHistory(account);
        const twr = linkReturns(dailyReturns(account.startValue, closes, flows));
        expectSameGrowth(twr, linkReturns(account.days.map((day) => day.marketReturn)), 1e-13);
      }),
      { seed: FAST_CHECK_SEED, numRuns: RUNS },
    );
  });

  it('does not change when a flow is scaled at a valuation point (everything after it scales too)', () => {
    // Change the flow on day k so that the amount invested becomes λ(V_{k−1} + F_k):
    // F_k' = λ(V_{k−1} + F_k) − V_{k−1}. With the same market returns every later close
    // and flow scales by λ (V_d' = λV_d for d ≥ k, F_d' = λF_d for d > k).
    fc.assert(
      fc.property(
        accountArbitrary,
        fc.double({ min: 0, max: 1, noNaN: true }),
        fc.double({ min: 0.05, max: 20, noNaN: true }),
        (account, where, scale) => {
          const { closes, flows } = buildHistory(account);
          const k = Math.floor(where * (closes.length - 1));
          const previousClose = k === 0 ? account.startValue : (closes[k - 1] as number);
          const scaledCloses = closes.map((close, day) => (day >= k ? scale * close : close));
          const scaledFlows = flows.map((flow, day) =>
            day < k ? flow : day === k ? scale * (previousClose + flow) - previousClose : scale * flow,
          );
          const original = linkReturns(dailyReturns(account.startValue, closes, flows));
          const scaled = linkReturns(dailyReturns(account.startValue, scaledCloses, scaledFlows));
          expectSameGrowth(scaled, original, 1e-13);
        },
      ),
      { seed: FAST_CHECK_SEED, numRuns: RUNS },
    );
  });

  it('without flows equals V_end / V_start − 1', () => {
    fc.assert(
      fc.property(accountArbitrary, (account) => {
        const flowFree = { ...account, days: account.days.map((day) => ({ ...day, flowFraction: 0 })) };
        const { closes, flows } = buildHistory(flowFree);
        const twr = linkReturns(dailyReturns(account.startValue, closes, flows));
        expectSameGrowth(twr, (closes[closes.length - 1] as number) / account.startValue - 1, 1e-13);
      }),
      { seed: FAST_CHECK_SEED, numRuns: RUNS },
    );
  });
});

describe('money-weighted return properties (fast-check, seeded)', () => {
  it('equals the TWR (as the window’s own rate) when there are no flows', () => {
    fc.assert(
      fc.property(accountArbitrary, (account) => {
        const flowFree = { ...account, days: account.days.map((day) => ({ ...day, flowFraction: 0 })) };
        const { closes, flows } = buildHistory(flowFree);
        const days = closes.length;
        const twr = linkReturns(dailyReturns(account.startValue, closes, flows));
        const cashFlows = [
          { t: 0, amount: -account.startValue },
          { t: days, amount: closes[days - 1] as number },
        ];
        expectSameGrowth(moneyWeightedWindowReturn(cashFlows, days), twr, 1e-13);
        expectSameGrowth(periodRate(moneyWeightedReturn(cashFlows, days) as number, days), twr, 1e-12);
      }),
      { seed: FAST_CHECK_SEED, numRuns: RUNS },
    );
  });

  it('recovers the rate the cash flows were built with (deposits and withdrawals, any number of sign changes)', () => {
    // Flows at random times; the end value is what they grow to at a chosen window
    // growth G: V_end = Σ F_i · G^((T − t_i)/T). Then G − 1 solves the MWR equation.
    // With deposits only (one sign change) it is the only root and must be found.
    // A withdrawal can add sign changes and a second root (for example a far one
    // near r = −1); then null is allowed, but a number must be G − 1.
    fc.assert(
      fc.property(
        fc.integer({ min: 30, max: 3_000 }),
        fc.double({ min: -0.5, max: 2, noNaN: true }),
        fc.array(fc.record({ at: fc.double({ min: 0, max: 1, noNaN: true }), amount: fc.double({ min: 100, max: 1e6, noNaN: true }) }), {
          minLength: 1,
          maxLength: 20,
        }),
        fc.option(fc.record({ at: fc.double({ min: 0, max: 1, noNaN: true }), fraction: fc.double({ min: 0.01, max: 0.5, noNaN: true }) })),
        (days, windowReturn, deposits, withdrawal) => {
          const growth = 1 + windowReturn;
          const contributions = deposits.map((deposit) => ({ t: Math.round(deposit.at * (days - 1)), amount: deposit.amount }));
          const withWithdrawal = withdrawal !== null;
          if (withdrawal !== null) {
            const totalDeposits = deposits.reduce((sum, deposit) => sum + deposit.amount, 0);
            contributions.push({ t: Math.round(withdrawal.at * (days - 1)), amount: -withdrawal.fraction * totalDeposits });
          }
          const endValue = contributions.reduce(
            (sum, flow) => sum + flow.amount * growth ** ((days - flow.t) / days),
            0,
          );
          fc.pre(endValue > 0);
          const cashFlows = [...contributions.map((flow) => ({ t: flow.t, amount: -flow.amount })), { t: days, amount: endValue }];
          const solved = moneyWeightedWindowReturn(cashFlows, days);
          if (withWithdrawal && solved === null) return; // several roots seen: null is allowed, a wrong number is not
          expectSameGrowth(solved, windowReturn, 1e-12);
        },
      ),
      { seed: FAST_CHECK_SEED, numRuns: RUNS },
    );
  });
});
