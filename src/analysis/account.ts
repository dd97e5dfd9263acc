/**
 * One account's figures for a period: ledger → performance → holdings,
 * allocation and checks → figures.json. Pure apart from reading the shared
 * market tables; throws AccountError when the account cannot be reported.
 */
import type { Account, Book, Mandate } from '../book/types.ts';
import { type Day, isoDate } from '../dates.ts';
import type { AccountHistory } from '../ledger/ledger.ts';
import { replayAccount } from '../ledger/ledger.ts';
import type { MarketData } from '../ledger/market.ts';
import type { AllocationFigure, Check, Figures, HoldingFigure } from './figures.ts';
import { type BenchmarkSource, type RiskFreeSource, computePerformance } from './performance.ts';
import type { Period } from './periods.ts';
import type { ForwardLooking } from './forward.ts';
import { formatWeight } from './wording.ts';

/** Quantity differences above this are reconciliation breaks (book format, holdings.csv). */
export const RECONCILIATION_TOLERANCE = 1e-6;

export interface RunContext {
  readonly book: Book;
  readonly market: MarketData;
  readonly period: Period;
  readonly riskFree: RiskFreeSource;
  /** The forward-looking half (expected risk, shortfall, optimal mix), per account. */
  readonly forward: (account: Account, mandate: Mandate, holdings: readonly HoldingFigure[]) => ForwardLooking;
}

/** The cash pseudo-instrument id of a currency in holdings. */
export function cashInstrumentId(currency: string): string {
  return `CASH:${currency}`;
}

function holdingsAtEnd(context: RunContext, history: AccountHistory): HoldingFigure[] {
  const { book, market, period } = context;
  const end = period.endDay;
  const base = history.account.baseCurrency;
  const total = history.closes[history.closes.length - 1]!;
  const weightOf = (value: number): number | null => (total !== 0 ? value / total : null);
  const rows: HoldingFigure[] = [];
  for (const [id, quantity] of history.positions) {
    const instrument = book.instruments.get(id)!;
    const quote = market.priceOn(id, end)!;
    const fxRate = market.fx(instrument.currency, base).rate(end);
    const value = quantity * quote.price * instrument.multiplier * fxRate;
    rows.push({
      instrument: id,
      name: instrument.name,
      asset_class: instrument.assetClass,
      kind: instrument.kind === 'fund' ? 'fund' : 'security',
      quantity,
      price: quote.price,
      price_date: isoDate(quote.quotedDay),
      currency: instrument.currency,
      multiplier: instrument.multiplier,
      fx_rate: fxRate,
      value,
      weight: weightOf(value),
      stale: end - quote.quotedDay > book.settings.staleAfterDays,
    });
  }
  for (const [currency, balance] of history.cash) {
    if (balance === 0) continue;
    const fxRate = market.fx(currency, base).rate(end);
    const value = balance * fxRate;
    rows.push({
      instrument: cashInstrumentId(currency),
      name: `Cash (${currency})`,
      asset_class: 'cash',
      kind: 'cash',
      quantity: balance,
      price: 1,
      price_date: isoDate(end),
      currency,
      multiplier: 1,
      fx_rate: fxRate,
      value,
      weight: weightOf(value),
      stale: false,
    });
  }
  const classOrder = [...book.settings.assetClasses.keys()];
  const rank = (row: HoldingFigure): number => {
    const index = classOrder.indexOf(row.asset_class);
    return index === -1 ? classOrder.length : index;
  };
  return rows.sort((a, b) => rank(a) - rank(b) || (a.instrument < b.instrument ? -1 : a.instrument > b.instrument ? 1 : 0));
}

function allocationOf(
  context: RunContext,
  mandate: Mandate,
  holdings: readonly HoldingFigure[],
  riskContributions: ReadonlyMap<string, number> | null,
): AllocationFigure[] {
  const weights = new Map<string, number>();
  const totalWeightKnown = holdings.every((row) => row.weight !== null);
  for (const row of holdings) weights.set(row.asset_class, (weights.get(row.asset_class) ?? 0) + (row.weight ?? 0));
  const rows: AllocationFigure[] = [];
  for (const [id, assetClass] of context.book.settings.assetClasses) {
    const range = mandate.allocation.get(id);
    if (!range && !weights.has(id)) continue;
    rows.push({
      asset_class: id,
      label: assetClass.label,
      weight: totalWeightKnown ? weights.get(id) ?? 0 : null,
      min: range?.[0] ?? 0,
      max: range?.[1] ?? 0,
      risk_contribution: riskContributions ? riskContributions.get(id) ?? 0 : null,
    });
  }
  return rows;
}

function ledgerChecks(
  context: RunContext,
  history: AccountHistory,
  mandate: Mandate,
  holdings: readonly HoldingFigure[],
  allocation: readonly AllocationFigure[],
): { allocation: Check[]; position: Check[]; book: Check[] } {
  const { book, period } = context;
  const allocationChecks: Check[] = allocation.map((row) => {
    const id = `allocation.${row.asset_class}`;
    if (row.weight === null) return { id, status: 'n/a', detail: 'the account has no value at the period end, so it has no weights' };
    const inside = row.weight >= row.min && row.weight <= row.max;
    return {
      id,
      status: inside ? 'pass' : 'breach',
      detail: `${row.label}: ${formatWeight(row.weight)} of the account, range ${formatWeight(row.min)} to ${formatWeight(row.max)}`,
      figures: { weight: row.weight, min: row.min, max: row.max },
    };
  });

  const positionChecks: Check[] = [];
  if (mandate.maxPosition !== null) {
    const limit = mandate.maxPosition;
    const candidates = holdings.filter((row) => row.kind !== 'cash' && row.weight !== null);
    const over = candidates.filter((row) => row.weight! > limit);
    const largest = candidates.reduce<HoldingFigure | null>((top, row) => (!top || row.weight! > top.weight! ? row : top), null);
    positionChecks.push({
      id: 'max_position',
      status: over.length > 0 ? 'breach' : 'pass',
      detail: over.length > 0
        ? `${over.map((row) => `${row.name} ${formatWeight(row.weight!)}`).join(', ')} above the limit of ${formatWeight(limit)} per position`
        : largest
          ? `largest position ${largest.name} at ${formatWeight(largest.weight!)}, limit ${formatWeight(limit)}`
          : `no positions, limit ${formatWeight(limit)}`,
      figures: { limit, largest: largest?.weight ?? null, over: over.map((row) => ({ instrument: row.instrument, weight: row.weight })) },
    });
  }

  const bookChecks: Check[] = [];
  const staleRows = holdings.filter((row) => row.stale);
  bookChecks.push({
    id: 'stale_prices',
    status: staleRows.length > 0 ? 'breach' : 'pass',
    detail: staleRows.length > 0
      ? `priced with a quote older than ${book.settings.staleAfterDays} days at ${isoDate(period.endDay)}: ${staleRows.map((row) => `${row.name} (last price ${row.price_date})`).join(', ')}`
      : `every position has a price within ${book.settings.staleAfterDays} days of ${isoDate(period.endDay)}`,
    figures: { stale_after_days: book.settings.staleAfterDays, instruments: staleRows.map((row) => ({ instrument: row.instrument, price_date: row.price_date })) },
  });

  const negative = [...history.lowestCashInPeriod].filter(([, lowest]) => lowest.balance < 0);
  bookChecks.push({
    id: 'negative_cash',
    status: negative.length > 0 ? 'breach' : 'pass',
    detail: negative.length > 0
      ? negative.map(([currency, lowest]) => `${currency} cash fell to ${lowest.balance.toFixed(2)} on ${isoDate(lowest.day)}`).join('; ')
      : 'no cash balance was below zero at any close in the period',
    figures: Object.fromEntries(negative.map(([currency, lowest]) => [currency, { balance: lowest.balance, date: isoDate(lowest.day) }])),
  });

  bookChecks.push(reconciliationCheck(book, history.account, history.positions, period.endDay));
  return { allocation: allocationChecks, position: positionChecks, book: bookChecks };
}

/** Compares derived positions with the custodian's holdings.csv rows dated the period end. */
export function reconciliationCheck(
  book: Pick<Book, 'holdings' | 'hasHoldingsFile'>,
  account: Account,
  positions: ReadonlyMap<string, number>,
  endDay: Day,
): Check {
  const rows = (book.holdings.get(account.id) ?? []).filter((row) => row.day === endDay);
  if (rows.length === 0) {
    return {
      id: 'reconciliation',
      status: 'n/a',
      detail: book.hasHoldingsFile
        ? `holdings.csv has no rows for this account dated ${isoDate(endDay)}`
        : 'the book has no holdings.csv',
    };
  }
  const custodian = new Map<string, number>();
  for (const row of rows) custodian.set(row.instrument, (custodian.get(row.instrument) ?? 0) + row.quantity);
  const instruments = [...new Set([...positions.keys(), ...custodian.keys()])].sort();
  const breaks = instruments
    .map((instrument) => ({ instrument, ours: positions.get(instrument) ?? 0, custodian: custodian.get(instrument) ?? 0 }))
    .filter((row) => Math.abs(row.ours - row.custodian) > RECONCILIATION_TOLERANCE);
  return {
    id: 'reconciliation',
    status: breaks.length > 0 ? 'breach' : 'pass',
    detail: breaks.length > 0
      ? breaks.map((row) => `${row.instrument}: ledger ${row.ours}, custodian ${row.custodian}`).join('; ')
      : `all ${instruments.length} positions agree with holdings.csv at ${isoDate(endDay)}`,
    figures: { breaks },
  };
}

/** Computes figures.json for one account. Throws AccountError when it cannot be reported. */
export function computeAccountFigures(context: RunContext, account: Account): Figures {
  const { book, market, period } = context;
  const mandate = book.mandates.get(account.mandate)!;
  const history = replayAccount(book, market, account, period.startDay, period.endDay);
  const benchmark: BenchmarkSource = {
    components: mandate.benchmark,
    levelAt: (index, day) => market.priceOn(index, day)?.price ?? null,
  };
  const performance = computePerformance(history, period, book.settings.returnMethod, benchmark, context.riskFree);
  const holdings = holdingsAtEnd(context, history);
  const forward = context.forward(account, mandate, holdings);
  const allocation = allocationOf(context, mandate, holdings, forward.riskContributionByClass);
  const checks = ledgerChecks(context, history, mandate, holdings, allocation);

  const offset = (day: Day): number => day - history.startDay;
  // The value at the later of the period start and the since-inception start:
  // 0 for an account opened inside the period (its inception is its first
  // flow), and the value then held when an explicit inception is later than
  // earlier activity, so that start + flows + result = end always holds.
  const startValue = history.closes[offset(Math.max(period.startDay, history.startDay))]!;
  const endValue = history.closes[offset(period.endDay)]!;
  let netExternalFlows = 0;
  for (let day = Math.max(period.startDay, history.startDay) + 1; day <= period.endDay; day++) {
    netExternalFlows += history.flowsNetOfFees[offset(day)]!;
  }

  return {
    account: account.id,
    client: account.client,
    mandate: mandate.id,
    mandate_label: mandate.label,
    base_currency: account.baseCurrency,
    adviser: account.adviser,
    locale: account.locale ?? book.settings.locale,
    inception: isoDate(history.inceptionDay),
    return_method: book.settings.returnMethod,
    period: { label: period.label, start: isoDate(period.startDay), end: isoDate(period.endDay) },
    value: {
      start: startValue,
      end: endValue,
      net_external_flows: netExternalFlows,
      income: history.periodSums.income,
      fees: history.periodSums.fees,
      taxes: history.periodSums.taxes,
      investment_result: endValue - startValue - netExternalFlows,
    },
    returns: performance.returns,
    realised_risk: performance.realisedRisk,
    expected_risk: forward.expectedRisk,
    shortfall: forward.shortfall,
    holdings,
    allocation,
    optimal_mix: forward.optimalMix,
    frontier: forward.frontier,
    benchmark: {
      components: mandate.benchmark.map((component) => ({
        index: component.index,
        name: book.instruments.get(component.index)?.name ?? component.index,
        weight: component.weight,
      })),
      expected_return: forward.benchmarkRisk?.expectedReturn ?? null,
      volatility: forward.benchmarkRisk?.volatility ?? null,
    },
    growth: performance.growth,
    activity: history.periodTransactions.map((row) => ({
      date: isoDate(row.day),
      type: row.type,
      instrument: row.instrument,
      quantity: row.instrument === null ? null : row.quantity,
      price: row.type === 'buy' || row.type === 'sell' ? row.price : null,
      fees: row.type === 'buy' || row.type === 'sell' ? row.fees : null,
      amount: cashAmount(row, book),
      currency: row.currency,
      note: row.note,
    })),
    checks: [...checks.allocation, ...checks.position, ...forward.checks, ...checks.book],
    notes: [...performance.notes, ...forward.notes],
  };
}

/** The signed cash effect of a row in its currency (0 for transfers of securities). */
function cashAmount(row: AccountHistory['periodTransactions'][number], book: Pick<Book, 'instruments'>): number {
  const multiplier = row.instrument ? book.instruments.get(row.instrument)?.multiplier ?? 1 : 1;
  switch (row.type) {
    case 'deposit': case 'dividend': case 'interest': return row.amount ?? 0;
    case 'withdrawal': case 'fee': case 'tax': return -(row.amount ?? 0);
    case 'buy': return -(row.quantity * row.price * multiplier + row.fees);
    case 'sell': return row.quantity * row.price * multiplier - row.fees;
    case 'transfer_in': case 'transfer_out': return 0;
  }
}
