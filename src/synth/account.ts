/**
 * One generated account, replayed as it is written: every transaction goes
 * through this ledger, which keeps positions and per-currency cash exactly
 * as the book's rules compute them (a buy costs quantity × price ×
 * multiplier + fees, whether or not `amount` is written), and refuses a
 * sale beyond the holding, a trade without a price that day, or cash going
 * below zero. A generated book is therefore valid by construction; a
 * refusal here is a defect of the generator and says so.
 *
 * Dividends (with withholding tax), coupons and the quarterly management
 * fee are booked automatically from the market's schedule, after the
 * scripted transactions of their day.
 */
import type { TransactionType } from '../book/types.ts';
import type { Day } from '../dates.ts';
import { isoDate } from '../dates.ts';
import { DIVIDEND_WITHHOLDING, type InstrumentSpec } from './house.ts';
import type { Market } from './market.ts';
import { roundTo } from './prices.ts';
import type { Random } from './random.ts';

export type { TransactionType };

/** A transactions.csv row before formatting; null = empty field. */
export interface TransactionRow {
  readonly account: string;
  readonly day: Day;
  readonly type: TransactionType;
  readonly instrument: string | null;
  readonly quantity: number | null;
  readonly price: number | null;
  readonly fees: number | null;
  readonly amount: number | null;
  readonly currency: string | null;
  readonly note: string;
}

export interface AccountPlan {
  readonly id: string;
  readonly client: string;
  readonly mandate: string;
  readonly baseCurrency: string;
  readonly adviser: string;
  readonly email: string | null;
  readonly locale: string | null;
  /** Annual management fee, a quarter of it charged on the value at each quarter end. */
  readonly annualFee: number;
}

/**
 * Commission on a trade: 0.1 % of its value with a minimum of 8 units of
 * currency, capped at 2 % of the value (so a small sale never costs more than
 * it raises), rounded to cents. An invented tariff; a percentage with a
 * minimum ticket charge is common practice.
 */
export function commission(grossValue: number): number {
  return roundTo(Math.min(Math.max(0.001 * grossValue, 8), 0.02 * grossValue), 2);
}

/** Smallest tradable step: one share, a thousandth of a fund unit, 1,000 of bond nominal. */
export function lotSize(instrument: InstrumentSpec): number {
  if (instrument.multiplier !== 1) return 1000;
  return instrument.kind === 'fund' ? 0.001 : 1;
}

function roundDownToLot(quantity: number, lot: number): number {
  return lot >= 1 ? Math.floor(quantity / lot + 1e-9) * lot : roundTo(Math.floor(quantity / lot + 1e-9) * lot, 3);
}

function roundUpToLot(quantity: number, lot: number): number {
  return lot >= 1 ? Math.ceil(quantity / lot - 1e-9) * lot : roundTo(Math.ceil(quantity / lot - 1e-9) * lot, 3);
}

/**
 * The largest whole number of cents not above `amount`. Cash is compared
 * exactly, never with a tolerance: the book's ledger replays the same
 * additions in the same order, so a balance that stays ≥ 0 here stays ≥ 0
 * there (for doubles, b ≤ a implies a − b ≥ 0).
 */
function cents(amount: number): number {
  let result = Math.floor(amount * 100) / 100;
  while (result > amount) result = Math.round(result * 100 - 1) / 100;
  return result;
}

function generatorDefect(message: string): Error {
  return new Error(`Internal error in the book generator: ${message}; please report this`);
}

/** Purchases for less than this (in the instrument's currency) are not made. */
export const MIN_TRADE_VALUE = 500;

/** How trades decide whether to write the optional `amount` column. */
export type AmountPolicy = (random: Random) => boolean;

export class AccountSimulation {
  readonly rows: TransactionRow[] = [];
  private readonly positions = new Map<string, number>();
  private readonly cash = new Map<string, number>();
  /** Automatic events are booked through this day index. */
  private bookedThrough = -1;
  private funded = false;

  constructor(
    readonly plan: AccountPlan,
    private readonly market: Market,
    private readonly random: Random,
    private readonly writeAmount: AmountPolicy = (random) => random.chance(0.5),
  ) {}

  // ---- reading the state -------------------------------------------------

  quantity(instrument: string): number {
    return this.positions.get(instrument) ?? 0;
  }

  cashBalance(currency: string): number {
    return this.cash.get(currency) ?? 0;
  }

  /** Positions with a non-zero quantity, in the order they were opened. */
  heldPositions(): ReadonlyMap<string, number> {
    return this.positions;
  }

  /** Account value in base currency on a day: positions at the latest price, cash at that day's rates. */
  value(dayIndex: number): number {
    const base = this.plan.baseCurrency;
    let total = 0;
    for (const [id, quantity] of this.positions) {
      const instrument = this.instrumentOf(id);
      const price = this.market.priceOnOrBefore(id, dayIndex);
      if (Number.isNaN(price)) throw generatorDefect(`${id} is held by ${this.plan.id} on ${this.date(dayIndex)} before its first price`);
      total += quantity * price * instrument.multiplier * this.market.fxRate(instrument.currency, base, dayIndex);
    }
    for (const [currency, balance] of this.cash) total += balance * this.market.fxRate(currency, base, dayIndex);
    return total;
  }

  /** Value of one position in base currency on a day. */
  positionValue(instrument: string, dayIndex: number): number {
    const spec = this.instrumentOf(instrument);
    return this.quantity(instrument) * this.market.priceOnOrBefore(instrument, dayIndex) * spec.multiplier * this.market.fxRate(spec.currency, this.plan.baseCurrency, dayIndex);
  }

  // ---- moving through time -----------------------------------------------

  /** Books the automatic events (income, fees) of every day before `dayIndex`. */
  advanceTo(dayIndex: number): void {
    if (dayIndex - 1 < this.bookedThrough) throw generatorDefect(`${this.plan.id}: transactions dated ${this.date(dayIndex)} come after ${this.date(this.bookedThrough)} was closed`);
    while (this.bookedThrough < dayIndex - 1) {
      const day = this.bookedThrough + 1;
      // While a day's automatic events are booked, the day counts as open: a sale they need (to pay a fee) is dated that day.
      this.bookAutomatic(day);
      this.bookedThrough = day;
    }
  }

  /** Books the automatic events through `lastIndex` included (the end of the history). */
  finish(lastIndex: number): void {
    this.advanceTo(lastIndex + 1);
  }

  private bookAutomatic(dayIndex: number): void {
    if (!this.funded) return;
    for (const event of this.market.incomeOn(dayIndex)) {
      const held = this.quantity(event.instrument.id);
      if (held <= 0) continue;
      const amount = roundTo(held * event.perUnit, 2);
      if (amount < 0.01) continue;
      const currency = event.instrument.currency;
      if (event.type === 'interest') {
        this.addCashRow(dayIndex, 'interest', amount, currency, `Coupon ${event.instrument.name}`, event.instrument.id);
        continue;
      }
      this.addCashRow(dayIndex, 'dividend', amount, currency, `Dividend ${event.instrument.name}`, event.instrument.id);
      const withholdingRate = DIVIDEND_WITHHOLDING[currency] ?? 0;
      const tax = roundTo(amount * withholdingRate, 2);
      if (tax >= 0.01) {
        this.addCashRow(dayIndex, 'tax', tax, currency, `Withholding tax ${Math.round(withholdingRate * 100)} % on dividend of ${event.instrument.id}`, event.instrument.id);
      }
    }
    if (this.market.isQuarterEnd(dayIndex)) this.chargeQuarterlyFee(dayIndex);
  }

  private chargeQuarterlyFee(dayIndex: number): void {
    const base = this.plan.baseCurrency;
    const fee = roundTo((this.value(dayIndex) * this.plan.annualFee) / 4, 2);
    if (fee < 0.01) return;
    if (this.cashBalance(base) < fee) this.raiseCash(dayIndex, base, fee, 'largest', 'Sale to pay the management fee');
    const charged = Math.min(fee, cents(this.cashBalance(base)));
    if (charged < 0.01) return;
    const { year, quarter } = quarterOf(this.market.days[dayIndex]!);
    const note = charged < fee ? `Management fee, Q${quarter} ${year} (part: cash available)` : `Management fee, Q${quarter} ${year}`;
    this.addCashRow(dayIndex, 'fee', charged, base, note, null);
  }

  // ---- scripted transactions -----------------------------------------------

  deposit(dayIndex: number, amount: number, currency: string = this.plan.baseCurrency, note = 'Deposit'): void {
    this.advanceTo(dayIndex);
    this.addCashRow(dayIndex, 'deposit', roundTo(amount, 2), currency, note, null);
    this.funded = true;
  }

  withdraw(dayIndex: number, amount: number, currency: string = this.plan.baseCurrency, note = 'Withdrawal'): void {
    this.advanceTo(dayIndex);
    this.addCashRow(dayIndex, 'withdrawal', roundTo(amount, 2), currency, note, null);
  }

  fee(dayIndex: number, amount: number, note: string, currency: string = this.plan.baseCurrency): void {
    this.advanceTo(dayIndex);
    this.addCashRow(dayIndex, 'fee', roundTo(amount, 2), currency, note, null);
  }

  transferIn(dayIndex: number, instrument: string, quantity: number, note = 'Transfer in from another custodian'): void {
    this.advanceTo(dayIndex);
    this.requirePrice(instrument, dayIndex, 'transfer_in');
    this.push({ dayIndex, type: 'transfer_in', instrument, quantity, price: null, fees: null, amount: null, currency: null, note });
    this.changePosition(instrument, quantity, dayIndex);
    this.funded = true;
  }

  transferOut(dayIndex: number, instrument: string, quantity: number, note = 'Transfer out to another custodian'): void {
    this.advanceTo(dayIndex);
    this.requirePrice(instrument, dayIndex, 'transfer_out');
    this.changePosition(instrument, -quantity, dayIndex);
    this.push({ dayIndex, type: 'transfer_out', instrument, quantity, price: null, fees: null, amount: null, currency: null, note });
  }

  /** Buys `quantity` at the day's price; returns the cash it cost. */
  buy(dayIndex: number, instrument: string, quantity: number, note = 'Purchase'): number {
    this.advanceTo(dayIndex);
    const spec = this.instrumentOf(instrument);
    const price = this.requirePrice(instrument, dayIndex, 'buy');
    const gross = quantity * price * spec.multiplier;
    const fees = commission(gross);
    const cost = gross + fees;
    if (this.cashBalance(spec.currency) < cost) {
      throw generatorDefect(`${this.plan.id} buys ${quantity} ${instrument} on ${this.date(dayIndex)} for ${cost.toFixed(2)} ${spec.currency} with ${this.cashBalance(spec.currency).toFixed(2)} in cash`);
    }
    this.push({ dayIndex, type: 'buy', instrument, quantity, price, fees, amount: this.writeAmount(this.random) ? roundTo(cost, 2) : null, currency: null, note });
    this.changePosition(instrument, quantity, dayIndex);
    this.cash.set(spec.currency, this.cashBalance(spec.currency) - cost);
    return cost;
  }

  /** Sells `quantity` at the day's price; returns the cash it raised. */
  sell(dayIndex: number, instrument: string, quantity: number, note = 'Sale'): number {
    this.advanceTo(dayIndex);
    const spec = this.instrumentOf(instrument);
    const price = this.requirePrice(instrument, dayIndex, 'sell');
    const gross = quantity * price * spec.multiplier;
    const fees = commission(gross);
    this.changePosition(instrument, -quantity, dayIndex);
    const proceeds = gross - fees;
    this.push({ dayIndex, type: 'sell', instrument, quantity, price, fees, amount: this.writeAmount(this.random) ? roundTo(proceeds, 2) : null, currency: null, note });
    this.cash.set(spec.currency, this.cashBalance(spec.currency) + proceeds);
    return proceeds;
  }

  /** The largest whole-lot quantity whose cost (with commission) fits in `value` of the instrument's currency. */
  affordableQuantity(dayIndex: number, instrument: string, value: number): number {
    const spec = this.instrumentOf(instrument);
    const price = this.requirePrice(instrument, dayIndex, 'buy');
    const lot = lotSize(spec);
    const unitValue = price * spec.multiplier;
    // Commission grows with the trade's value, so the commission on the whole budget bounds it.
    let quantity = roundDownToLot((value - commission(value)) / unitValue, lot);
    while (quantity > 0 && quantity * unitValue + commission(quantity * unitValue) > value) {
      quantity = roundDownToLot(quantity - lot, lot);
    }
    return Math.max(quantity, 0);
  }

  /** Buys as much as `value` (instrument currency, commission included) and the cash allow; returns the quantity bought (0 when below MIN_TRADE_VALUE). */
  buyForValue(dayIndex: number, instrument: string, value: number, note = 'Purchase'): number {
    this.advanceTo(dayIndex);
    const spec = this.instrumentOf(instrument);
    const budget = Math.min(value, this.cashBalance(spec.currency));
    if (budget < MIN_TRADE_VALUE) return 0;
    const quantity = this.affordableQuantity(dayIndex, instrument, budget);
    if (quantity <= 0) return 0;
    this.buy(dayIndex, instrument, quantity, note);
    return quantity;
  }

  /**
   * Funds the account and buys a portfolio on one day: one deposit per
   * currency needed (the base-currency one also brings `cashWeight` of
   * `total`), then a purchase of each weight of `total` (base currency) at
   * that day's price, commission included.
   */
  investPortfolio(dayIndex: number, total: number, weights: ReadonlyArray<readonly [string, number]>, cashWeight: number, note: string, depositNote: string): void {
    const base = this.plan.baseCurrency;
    const budgets = weights.map(([id, weight]) => {
      const currency = this.instrumentOf(id).currency;
      return { id, currency, budget: total * weight * this.market.fxRate(base, currency, dayIndex) };
    });
    const byCurrency = new Map<string, number>();
    for (const { currency, budget } of budgets) byCurrency.set(currency, (byCurrency.get(currency) ?? 0) + budget);
    const baseDeposit = (byCurrency.get(base) ?? 0) + total * cashWeight;
    if (baseDeposit >= 1) this.deposit(dayIndex, Math.ceil(baseDeposit / 100) * 100, base, depositNote);
    for (const [currency, budget] of byCurrency) {
      if (currency === base || budget < 1) continue;
      this.deposit(dayIndex, Math.ceil(budget / 100) * 100, currency, `${depositNote} in ${currency} from the client's ${currency} account`);
    }
    for (const { id, budget } of budgets) this.buyForValue(dayIndex, id, budget, note);
  }

  /** Each position's share of the account's value on a day, and base cash's share. */
  currentWeights(dayIndex: number): { positions: Array<readonly [string, number]>; baseCash: number } {
    const total = this.value(dayIndex);
    if (!(total > 0)) return { positions: [], baseCash: 0 };
    return {
      positions: [...this.positions.keys()].map((id) => [id, this.positionValue(id, dayIndex) / total] as const),
      baseCash: this.cashBalance(this.plan.baseCurrency) / total,
    };
  }

  /**
   * Sells holdings in `currency` priced that day until its cash balance
   * reaches `target`: `pro-rata` sells the same fraction of each such
   * holding, `largest` sells from the largest holding first. Returns whether
   * the target was reached.
   */
  raiseCash(dayIndex: number, currency: string, target: number, mode: 'largest' | 'pro-rata', note: string): boolean {
    this.advanceTo(dayIndex);
    const candidates = [...this.positions.keys()]
      .map((id) => this.instrumentOf(id))
      .filter((spec) => spec.currency === currency && !Number.isNaN(this.market.price(spec.id, dayIndex)))
      .map((spec) => ({ spec, value: this.quantity(spec.id) * this.market.price(spec.id, dayIndex) * spec.multiplier }))
      .sort((left, right) => right.value - left.value || (left.spec.id < right.spec.id ? -1 : 1));
    const shortfall = (): number => target - this.cashBalance(currency);
    if (shortfall() <= 0) return true;
    if (mode === 'pro-rata') {
      const total = candidates.reduce((sum, candidate) => sum + candidate.value, 0);
      if (total > 0) {
        const fraction = Math.min(1, (shortfall() * 1.01 + 10 * candidates.length) / total);
        for (const { spec } of candidates) {
          const held = this.quantity(spec.id);
          const quantity = Math.min(held, roundUpToLot(held * fraction, lotSize(spec)));
          if (quantity > 0) this.sell(dayIndex, spec.id, quantity, note);
        }
      }
    }
    for (const { spec } of candidates) {
      const missing = shortfall();
      if (missing <= 0) break;
      const held = this.quantity(spec.id);
      if (held <= 0) continue;
      const unitValue = this.market.price(spec.id, dayIndex) * spec.multiplier;
      const wanted = roundUpToLot((missing + commission(missing) + 0.01) / unitValue, lotSize(spec));
      this.sell(dayIndex, spec.id, Math.min(held, wanted), note);
    }
    return shortfall() <= 0;
  }

  /**
   * Trades back towards target weights (instrument → share of the account's
   * value): sells what is above its target by more than `band`, then buys
   * what is below it by more than `band` with the cash of the instrument's
   * currency, keeping `baseCashReserve` (a share of the value) in base cash.
   * The targets are scaled to sum to 1 − baseCashReserve.
   * Instruments without a price that day and positions without a target are
   * left alone; there are no currency exchanges, so a buy is limited by the
   * cash already held in its currency.
   */
  rebalance(dayIndex: number, targets: ReadonlyArray<readonly [string, number]>, band: number, baseCashReserve: number, note = 'Rebalancing'): void {
    this.advanceTo(dayIndex);
    const base = this.plan.baseCurrency;
    const total = this.value(dayIndex);
    // Targets are scaled to fill the account but the reserve, so that income gathered as cash is invested again.
    const targetSum = targets.reduce((sum, [, weight]) => sum + weight, 0);
    const scale = targetSum > 0 ? (1 - baseCashReserve) / targetSum : 0;
    const tradable = targets.filter(([id]) => !Number.isNaN(this.market.price(id, dayIndex)));
    const gap = (id: string, weight: number): number => weight * scale * total - this.positionValue(id, dayIndex);
    for (const [id, weight] of tradable) {
      const excess = -gap(id, weight);
      if (excess <= band * total) continue;
      const spec = this.instrumentOf(id);
      const unitValue = this.market.price(id, dayIndex) * spec.multiplier * this.market.fxRate(spec.currency, base, dayIndex);
      const quantity = Math.min(this.quantity(id), roundDownToLot(excess / unitValue, lotSize(spec)));
      if (quantity > 0) this.sell(dayIndex, id, quantity, note);
    }
    const shortfalls = tradable
      .map(([id, weight]) => ({ id, deficit: gap(id, weight) }))
      .filter((entry) => entry.deficit > band * total)
      .sort((left, right) => right.deficit - left.deficit || (left.id < right.id ? -1 : 1));
    for (const { id, deficit } of shortfalls) {
      const spec = this.instrumentOf(id);
      const reserve = spec.currency === base ? baseCashReserve * total : 0;
      const available = this.cashBalance(spec.currency) - reserve;
      const budget = Math.min(deficit * this.market.fxRate(base, spec.currency, dayIndex), available);
      if (budget > 0) this.buyForValue(dayIndex, id, budget, note);
    }
    // Cash left above the reserve in a currency is spread over that currency's targets (income is reinvested).
    const currencies = [...new Set(tradable.map(([id]) => this.instrumentOf(id).currency))].sort();
    for (const currency of currencies) {
      const reserve = currency === base ? baseCashReserve * total : 0;
      const spare = this.cashBalance(currency) - reserve;
      if (spare * this.market.fxRate(currency, base, dayIndex) <= band * total) continue;
      const inCurrency = tradable.filter(([id]) => this.instrumentOf(id).currency === currency);
      const weightSum = inCurrency.reduce((sum, [, weight]) => sum + weight, 0);
      if (!(weightSum > 0)) continue;
      for (const [id, weight] of inCurrency) this.buyForValue(dayIndex, id, (spare * weight) / weightSum, note);
    }
  }

  // ---- internals -----------------------------------------------------------

  private addCashRow(dayIndex: number, type: TransactionType, amount: number, currency: string, note: string, instrument: string | null): void {
    if (!(amount > 0)) throw generatorDefect(`${this.plan.id}: ${type} of ${amount} on ${this.date(dayIndex)}`);
    const inflow = type === 'deposit' || type === 'dividend' || type === 'interest';
    const after = this.cashBalance(currency) + (inflow ? amount : -amount);
    if (after < 0) {
      throw generatorDefect(`${this.plan.id}: ${type} of ${amount} ${currency} on ${this.date(dayIndex)} would leave ${after.toFixed(2)} in cash`);
    }
    this.cash.set(currency, after);
    this.push({ dayIndex, type, instrument, quantity: null, price: null, fees: null, amount, currency, note });
  }

  private push(row: {
    dayIndex: number; type: TransactionType; instrument: string | null; quantity: number | null;
    price: number | null; fees: number | null; amount: number | null; currency: string | null; note: string;
  }): void {
    const { dayIndex, ...fields } = row;
    this.rows.push({ account: this.plan.id, day: this.market.days[dayIndex]!, ...fields });
  }

  private changePosition(instrument: string, delta: number, dayIndex: number): void {
    const spec = this.instrumentOf(instrument);
    if (spec.kind === 'index') throw generatorDefect(`${this.plan.id} trades the index ${instrument}`);
    if (!(Math.abs(delta) > 0)) throw generatorDefect(`${this.plan.id}: zero quantity of ${instrument} on ${this.date(dayIndex)}`);
    const before = this.quantity(instrument);
    const after = roundTo(before + delta, 6);
    if (after < 0) throw generatorDefect(`${this.plan.id} sells ${-delta} ${instrument} on ${this.date(dayIndex)} holding ${before}`);
    if (after === 0) this.positions.delete(instrument);
    else this.positions.set(instrument, after);
  }

  private requirePrice(instrument: string, dayIndex: number, what: string): number {
    const price = this.market.price(instrument, dayIndex);
    if (Number.isNaN(price)) throw generatorDefect(`${this.plan.id}: ${what} of ${instrument} on ${this.date(dayIndex)}, a day without a price`);
    return price;
  }

  private instrumentOf(id: string): InstrumentSpec {
    const spec = this.market.instruments.get(id);
    if (!spec) throw generatorDefect(`${this.plan.id} uses the unknown instrument ${id}`);
    return spec;
  }

  private date(dayIndex: number): string {
    const day = this.market.days[dayIndex];
    return day === undefined ? `day index ${dayIndex}` : isoDate(day);
  }
}

function quarterOf(day: Day): { year: number; quarter: number } {
  const date = isoDate(day);
  const month = Number(date.slice(5, 7));
  return { year: Number(date.slice(0, 4)), quarter: Math.ceil(month / 3) };
}
