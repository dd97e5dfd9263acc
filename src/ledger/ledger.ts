/**
 * The ledger of one account: positions and per-currency cash replayed from
 * transactions.csv, valued at every calendar-day close in base currency,
 * with the external flows of each day.
 *
 * Conventions (book format and methods): flows count at the start of their
 * day; a transfer of securities is valued at that day's market value (the
 * latest price on or before the day, i.e. its close, and that day's FX);
 * every cash amount is converted at its own day's FX; cash is held per
 * currency and may go negative (flagged by the negative_cash check).
 */
import type { Account, Book, Instrument, Transaction } from '../book/types.ts';
import { type Day, isoDate } from '../dates.ts';
import type { Diagnostic } from '../errors.ts';
import { AccountError } from '../errors.ts';
import type { MarketData } from './market.ts';

/** Quantities this close to zero are zero (sums of decimal quantities leave ~1e-15 residues). */
const QUANTITY_EPSILON = 1e-9;

export interface AccountHistory {
  readonly account: Account;
  /** The since-inception start: the close of the day before the inception date. */
  readonly startDay: Day;
  readonly inceptionDay: Day;
  readonly endDay: Day;
  /** closes[i] = account value at the close of day startDay + i, in base currency. */
  readonly closes: Float64Array;
  /** Net external flow of day startDay + i (deposits, withdrawals, transfers at market value); index 0 is 0. */
  readonly flowsNetOfFees: Float64Array;
  /** The same plus `fee` rows as outflows (the gross-of-fee return's flows). */
  readonly flowsGrossOfFees: Float64Array;
  /** Positions held at the end close (securities and funds), quantity ≠ 0. */
  readonly positions: ReadonlyMap<string, number>;
  /** Cash per currency at the end close (currencies ever used, zero balances included). */
  readonly cash: ReadonlyMap<string, number>;
  /** The lowest close balance per currency over the period's closes (period start exclusive). */
  readonly lowestCashInPeriod: ReadonlyMap<string, { readonly balance: number; readonly day: Day }>;
  readonly periodSums: { readonly income: number; readonly fees: number; readonly taxes: number };
  /** Transactions dated inside the period, in ledger order. */
  readonly periodTransactions: readonly Transaction[];
}

function accountFailure(account: Account, message: string, line: number | null, file = 'transactions.csv'): AccountError {
  const diagnostic: Diagnostic = { severity: 'error', scope: { kind: 'account', account: account.id }, file, line, message };
  return new AccountError(account.id, [diagnostic]);
}

/** The inception day: the account's own, else the day of its first external flow. */
export function inceptionOf(account: Account, transactions: readonly Transaction[]): Day | null {
  if (account.inception !== null) return account.inception;
  const firstFlow = transactions.find((row) => isExternalFlow(row.type));
  return firstFlow ? firstFlow.day : null;
}

function isExternalFlow(type: Transaction['type']): boolean {
  return type === 'deposit' || type === 'withdrawal' || type === 'transfer_in' || type === 'transfer_out';
}

interface HeldLine {
  readonly instrument: Instrument;
  quantity: number;
  readonly prices: Float64Array;
  readonly priceFirstDay: Day;
  readonly fxRate: (day: Day) => number;
  /** The transactions.csv line that opened the position, for messages. */
  readonly openedByLine: number;
}

/**
 * Replays an account's transactions up to `endDay` and values it at every
 * close from the since-inception start to `endDay`.
 * Throws AccountError (file:line and a fix) when a held position has no
 * price, a needed currency has no FX route, or a sale exceeds the holding.
 */
export function replayAccount(
  book: Pick<Book, 'instruments' | 'transactions'>,
  market: MarketData,
  account: Account,
  periodStartDay: Day,
  endDay: Day,
): AccountHistory {
  const transactions = (book.transactions.get(account.id) ?? []).filter((row) => row.day <= endDay);
  const inceptionDay = inceptionOf(account, transactions);
  if (inceptionDay === null) {
    throw accountFailure(account, `account ${account.id} has no deposit, withdrawal or transfer on or before ${isoDate(endDay)}, so it has no inception date; add its first deposit to transactions.csv or an inception date to accounts.csv`, account.line, 'accounts.csv');
  }
  if (inceptionDay > endDay) {
    throw accountFailure(account, `account ${account.id} starts on ${isoDate(inceptionDay)}, after the period end ${isoDate(endDay)}; leave it out of this run with --accounts, or correct its inception in accounts.csv`, account.line, 'accounts.csv');
  }
  const startDay = inceptionDay - 1;
  const firstTransactionDay = transactions[0]?.day ?? startDay + 1;
  if (firstTransactionDay < market.firstDay || endDay > market.lastDay) {
    throw new Error(`Internal error: market tables [${isoDate(market.firstDay)}, ${isoDate(market.lastDay)}] do not cover account ${account.id}; please report this`);
  }

  const base = account.baseCurrency;
  const length = endDay - startDay + 1;
  const closes = new Float64Array(length);
  const flowsNetOfFees = new Float64Array(length);
  const flowsGrossOfFees = new Float64Array(length);
  const held = new Map<string, HeldLine>();
  const cash = new Map<string, number>();
  const cashIntroducedBy = new Map<string, number>();
  const lowestCashInPeriod = new Map<string, { balance: number; day: Day }>();
  const periodTransactions: Transaction[] = [];
  let income = 0;
  let fees = 0;
  let taxes = 0;

  const fxToBase = (currency: string, day: Day, line: number): number => {
    const rate = market.fx(currency, base).rate(day);
    if (Number.isNaN(rate)) {
      throw accountFailure(account, `${market.describeMissingFx(currency, base, day)}; needed to convert ${currency} for account ${account.id}`, line);
    }
    return rate;
  };

  const priceOf = (line: HeldLine, day: Day): number => {
    const price = line.prices[day - line.priceFirstDay]!;
    if (Number.isNaN(price)) {
      throw accountFailure(account, `instrument ${line.instrument.id} is held on ${isoDate(day)} (position opened at transactions.csv:${line.openedByLine}) but prices.csv has no price for it on or before that day; add a price row dated on or before ${isoDate(day)}`, line.openedByLine);
    }
    return price;
  };

  const addCash = (currency: string, delta: number, line: number): void => {
    if (!cash.has(currency)) cashIntroducedBy.set(currency, line);
    cash.set(currency, (cash.get(currency) ?? 0) + delta);
  };

  const marketValue = (row: Transaction, instrument: Instrument): number => {
    const dense = market.prices(instrument.id);
    const price = dense ? dense.values[row.day - dense.firstDay]! : Number.NaN;
    if (Number.isNaN(price)) {
      throw accountFailure(account, `${row.type} of ${instrument.id} on ${isoDate(row.day)} is valued at that day's market price, but prices.csv has no price for ${instrument.id} on or before that day; add one`, row.line);
    }
    return row.quantity * price * instrument.multiplier * fxToBase(instrument.currency, row.day, row.line);
  };

  const changePosition = (row: Transaction, instrument: Instrument, delta: number): void => {
    const line = held.get(instrument.id);
    const before = line?.quantity ?? 0;
    const after = before + delta;
    if (after < -QUANTITY_EPSILON) {
      throw accountFailure(account, `${row.type} of ${row.quantity} ${instrument.id} on ${isoDate(row.day)} exceeds the ${before} held then; check the quantity or add the missing buy or transfer_in before it`, row.line);
    }
    if (Math.abs(after) <= QUANTITY_EPSILON) {
      held.delete(instrument.id);
      return;
    }
    if (line) {
      line.quantity = after;
      return;
    }
    const dense = market.prices(instrument.id);
    if (!dense) {
      throw accountFailure(account, `instrument ${instrument.id} (${row.type} on ${isoDate(row.day)}) has no rows in prices.csv; add its price history`, row.line);
    }
    const fxLookup = market.fx(instrument.currency, base);
    held.set(instrument.id, {
      instrument,
      quantity: after,
      prices: dense.values,
      priceFirstDay: dense.firstDay,
      fxRate: (day) => fxLookup.rate(day),
      openedByLine: row.line,
    });
  };

  /** Applies one row; returns the day's flows it adds (base currency). */
  const apply = (row: Transaction): { external: number; fee: number } => {
    const instrument = row.instrument === null ? null : book.instruments.get(row.instrument) ?? null;
    const amount = row.amount ?? 0;
    switch (row.type) {
      case 'deposit':
        addCash(row.currency, amount, row.line);
        return { external: amount * fxToBase(row.currency, row.day, row.line), fee: 0 };
      case 'withdrawal':
        addCash(row.currency, -amount, row.line);
        return { external: -amount * fxToBase(row.currency, row.day, row.line), fee: 0 };
      case 'transfer_in':
        changePosition(row, instrument!, row.quantity);
        return { external: marketValue(row, instrument!), fee: 0 };
      case 'transfer_out': {
        const value = marketValue(row, instrument!);
        changePosition(row, instrument!, -row.quantity);
        return { external: -value, fee: 0 };
      }
      case 'buy':
        changePosition(row, instrument!, row.quantity);
        addCash(row.currency, -(row.quantity * row.price * instrument!.multiplier + row.fees), row.line);
        return { external: 0, fee: 0 };
      case 'sell':
        changePosition(row, instrument!, -row.quantity);
        addCash(row.currency, row.quantity * row.price * instrument!.multiplier - row.fees, row.line);
        return { external: 0, fee: 0 };
      case 'dividend':
      case 'interest':
        addCash(row.currency, amount, row.line);
        if (row.day > periodStartDay) income += amount * fxToBase(row.currency, row.day, row.line);
        return { external: 0, fee: 0 };
      case 'fee': {
        addCash(row.currency, -amount, row.line);
        const feeInBase = amount * fxToBase(row.currency, row.day, row.line);
        if (row.day > periodStartDay) fees += feeInBase;
        return { external: 0, fee: -feeInBase };
      }
      case 'tax':
        addCash(row.currency, -amount, row.line);
        if (row.day > periodStartDay) taxes += amount * fxToBase(row.currency, row.day, row.line);
        return { external: 0, fee: 0 };
    }
  };

  const valueAt = (day: Day): number => {
    let value = 0;
    for (const line of held.values()) {
      const rate = line.fxRate(day);
      if (Number.isNaN(rate)) {
        throw accountFailure(account, `${market.describeMissingFx(line.instrument.currency, base, day)}; needed to value ${line.instrument.id}`, line.openedByLine);
      }
      value += line.quantity * priceOf(line, day) * line.instrument.multiplier * rate;
    }
    for (const [currency, balance] of cash) {
      if (balance !== 0) value += balance * fxToBase(currency, day, cashIntroducedBy.get(currency)!);
    }
    return value;
  };

  let next = 0;
  // Everything up to and including the since-inception start close.
  while (next < transactions.length && transactions[next]!.day <= startDay) {
    const row = transactions[next++]!;
    apply(row);
    if (row.day > periodStartDay) periodTransactions.push(row);
  }
  closes[0] = valueAt(startDay);
  const trackCash = (day: Day): void => {
    for (const [currency, balance] of cash) {
      const lowest = lowestCashInPeriod.get(currency);
      if (!lowest || balance < lowest.balance) lowestCashInPeriod.set(currency, { balance, day });
    }
  };
  for (let offset = 1; offset < length; offset++) {
    const day = startDay + offset;
    let external = 0;
    let fee = 0;
    while (next < transactions.length && transactions[next]!.day === day) {
      const row = transactions[next++]!;
      const flows = apply(row);
      external += flows.external;
      fee += flows.fee;
      if (day > periodStartDay) periodTransactions.push(row);
    }
    flowsNetOfFees[offset] = external;
    flowsGrossOfFees[offset] = external + fee;
    closes[offset] = valueAt(day);
    if (day > periodStartDay) trackCash(day);
  }

  const positions = new Map<string, number>();
  for (const [id, line] of held) positions.set(id, line.quantity);
  return {
    account,
    startDay,
    inceptionDay,
    endDay,
    closes,
    flowsNetOfFees,
    flowsGrossOfFees,
    positions,
    cash,
    lowestCashInPeriod,
    periodSums: { income, fees, taxes },
    periodTransactions,
  };
}
