/**
 * Synthetic books of any size, for trials and benchmarks: invented
 * instruments with simulated daily prices, and accounts whose histories are
 * drawn at random (deposits, purchases, yearly rebalancing, switches,
 * withdrawals, transfers, dividends with withholding tax, coupons and
 * quarterly fees), replayed through the generator's ledger so that the book
 * is valid by construction. A few accounts breach their mandate on purpose,
 * a few instruments stop being priced three weeks before the end, and
 * holdings.csv carries a couple of reconciliation breaks.
 *
 * One seed gives byte-identical files. Each account draws from its own
 * stream, so account i is the same whatever the number of accounts.
 */
import { type Day, dayOf, daysInMonth, isoDate, monthEndsBetween, parseIsoDate, ymd } from '../dates.ts';
import { UsageError } from '../errors.ts';
import { type AccountPlan, AccountSimulation, lotSize } from './account.ts';
import { BookWriter, type HoldingsBreak, yamlText } from './book-writer.ts';
import {
  ASSET_CLASSES,
  type FirmSpec,
  INDICES,
  type IncomeModel,
  type InstrumentSpec,
  MANDATES,
  type MandateSpec,
  bookYamlObject,
  mandatesYamlObject,
} from './house.ts';
import { type Market, simulateMarket } from './market.ts';
import { businessDayOnOrAfter } from './prices.ts';
import { type Random, createRandom } from './random.ts';

export interface SyntheticBookOptions {
  readonly accounts: number;
  /** Holdable instruments (shares, funds, bonds); the indices come on top. Default 300. */
  readonly instruments?: number;
  /** Years of daily history ending at `end`. Default 5. */
  readonly years?: number;
  /** ISO date of the last day of the history. Default: the last quarter end before today. */
  readonly end?: string;
  readonly seed?: number;
}

export interface SyntheticBookResult {
  /** Data rows written to each CSV file (book.yaml and mandates.yaml are written too). */
  readonly files: Record<string, number>;
}

const SYNTHETIC_FIRM: FirmSpec = {
  name: 'Synthetic Trial Book',
  address: 'Generated data, no address',
  email: 'trials@example.org',
  phone: '+44 20 7946 0000',
  regulatoryNote: 'A generated book for trials and benchmarks. The firm, its clients and every instrument and price in it are invented.',
};

/** The last calendar-quarter end strictly before `day`. */
export function lastQuarterEndBefore(day: Day): Day {
  const { year, month } = ymd(day);
  const quarterStartMonth = month - ((month - 1) % 3);
  return dayOf(year, quarterStartMonth, 1) - 1;
}

function wholeNumber(name: string, value: number, low: number, high: number): number {
  if (!Number.isSafeInteger(value) || value < low || value > high) {
    throw new UsageError(`synth: ${name} must be a whole number from ${low} to ${high}, got ${value}`);
  }
  return value;
}

/**
 * Writes a synthetic book into `dir` (created if needed) and returns the
 * rows written per CSV file. See the module comment for what it contains.
 */
export async function writeSyntheticBook(dir: string, options: SyntheticBookOptions): Promise<SyntheticBookResult> {
  const accountCount = wholeNumber('accounts', options.accounts, 1, 1_000_000);
  const instrumentCount = wholeNumber('instruments', options.instruments ?? 300, 10, 100_000);
  const years = wholeNumber('years', options.years ?? 5, 1, 50);
  const seed = options.seed ?? 1;
  if (!Number.isSafeInteger(seed)) throw new UsageError(`synth: seed must be a whole number, got ${seed}`);
  const endText = options.end ?? isoDate(lastQuarterEndBefore(Math.floor(Date.now() / 86_400_000)));
  const endDay = parseIsoDate(endText);
  if (endDay === null) throw new UsageError(`synth: end must be a date written YYYY-MM-DD, got "${endText}"`);
  const end = ymd(endDay);
  const startDay = dayOf(end.year - years, end.month, Math.min(end.day, daysInMonth(end.year - years, end.month)));

  const holdable = syntheticInstruments(createRandom(seed, 'instruments'), instrumentCount, startDay, endDay);
  const instruments = [...INDICES, ...holdable];
  const market = simulateMarket(instruments, isoDate(startDay), isoDate(endDay), seed);
  // Holdings are dated the end itself (the period end a run reconciles at), even when it falls on a weekend.
  const holdingsDate = isoDate(endDay);

  const breakAccounts = new Set(createRandom(seed, 'breaks').sample([...Array(accountCount).keys()], Math.min(2, accountCount)));
  // The estimation window cannot be longer than the monthly returns the history holds (month ends with a price, less one).
  const pricedMonthEnds = monthEndsBetween(market.days[0]! - 1, endDay).length;
  const windowMonths = Math.max(1, Math.min(60, pricedMonthEnds - 1));
  const settings = bookYamlObject(SYNTHETIC_FIRM, 'en-GB');
  settings['estimation'] = { window_months: windowMonths, min_months: Math.min(24, windowMonths), shrinkage: 'ledoit-wolf' };
  const header = `Synthetic book written by quarterline synth (seed ${seed}, ${accountCount} accounts, ${instrumentCount} instruments, ${years} years to ${endText}).\nEverything in it is invented.`;
  const writer = await BookWriter.create(dir, {
    bookYaml: yamlText(header, settings),
    mandatesYaml: yamlText(header, mandatesYamlObject()),
    instruments,
    market,
    withHoldings: true,
  });
  try {
    for (let index = 0; index < accountCount; index++) {
      const sim = simulateAccount(index, accountCount, market, holdable, seed);
      const breaks = breakAccounts.has(index) ? holdingsBreak(sim, market) : [];
      await writer.addAccount(sim, null, holdingsDate, breaks);
    }
  } catch (error) {
    await writer.abandon();
    throw error;
  }
  return { files: await writer.close() };
}

/** The custodian misreports the first held position (sorted by id). */
function holdingsBreak(sim: AccountSimulation, market: Market): HoldingsBreak[] {
  const held = [...sim.heldPositions()].sort(([left], [right]) => (left < right ? -1 : 1))[0];
  if (!held) return [];
  const [instrument, quantity] = held;
  const lot = lotSize(market.instruments.get(instrument)!);
  const reportedQuantity = quantity > lot ? Math.round((quantity - lot) * 1000) / 1000 : quantity + lot;
  return [{ account: sim.plan.id, instrument, reportedQuantity }];
}

// ---- instruments -------------------------------------------------------------------

const NAME_STARTS = ['Alder', 'Bram', 'Cal', 'Dun', 'Elm', 'Fen', 'Gar', 'Hol', 'Ivel', 'Kel', 'Lin', 'Mor', 'Nor', 'Oak', 'Pel', 'Quar', 'Ros', 'Sel', 'Tor', 'Ulver', 'Val', 'Wex', 'Yar', 'Zan'];
const NAME_ENDS = ['brook', 'by', 'combe', 'dale', 'field', 'gate', 'holm', 'hurst', 'ley', 'mere', 'moor', 'ridge', 'stead', 'ton', 'well', 'wick'];
const SECTORS = ['Holdings', 'Industries', 'Systems', 'Foods', 'Energy', 'Logistics', 'Pharma', 'Materials', 'Networks', 'Retail', 'Software', 'Utilities', 'Engineering', 'Insurance', 'Media', 'Mining'];
const FUND_STYLES: Readonly<Record<string, readonly string[]>> = {
  equity: ['Global Equity', 'European Equity', 'US Equity', 'Emerging Markets Equity', 'Smaller Companies', 'Dividend Equity'],
  bonds: ['Government Bond', 'Corporate Bond', 'Short Duration Bond', 'Inflation-Linked Bond', 'Strategic Bond'],
  property: ['Property', 'Property Income', 'Real Estate Securities'],
  cash: ['Money Market', 'Liquidity'],
};
const CURRENCY_WEIGHTS: ReadonlyArray<readonly [string, number]> = [['EUR', 0.5], ['USD', 0.3], ['GBP', 0.12], ['CHF', 0.08]];
const DIVIDEND_MONTHS: Readonly<Record<string, ReadonlyArray<readonly number[]>>> = {
  EUR: [[5], [4, 10], [6]],
  USD: [[3, 6, 9, 12], [2, 5, 8, 11]],
  GBP: [[5, 11], [6, 12]],
  CHF: [[4], [5]],
};

interface InstrumentPlan {
  readonly prefix: string;
  readonly kind: 'security' | 'fund';
  readonly assetClass: string;
  readonly count: number;
}

/** Holdable instruments: about half shares, a fifth bonds in percent of nominal, the rest funds. */
function syntheticInstruments(random: Random, count: number, startDay: Day, endDay: Day): InstrumentSpec[] {
  const share = (fraction: number): number => Math.max(1, Math.round(count * fraction));
  const plans: InstrumentPlan[] = [
    { prefix: 'BD', kind: 'security', assetClass: 'bonds', count: share(0.2) },
    { prefix: 'EF', kind: 'fund', assetClass: 'equity', count: share(0.1) },
    { prefix: 'BF', kind: 'fund', assetClass: 'bonds', count: share(0.08) },
    { prefix: 'PF', kind: 'fund', assetClass: 'property', count: share(0.06) },
    { prefix: 'MM', kind: 'fund', assetClass: 'cash', count: share(0.02) },
  ];
  const equities = count - plans.reduce((sum, plan) => sum + plan.count, 0);
  plans.unshift({ prefix: 'EQ', kind: 'security', assetClass: 'equity', count: equities });
  const usedNames = new Set<string>();
  const companyName = (): string => {
    for (;;) {
      const name = `${random.choice(NAME_STARTS)}${random.choice(NAME_ENDS)} ${random.choice(SECTORS)}`;
      if (!usedNames.has(name)) {
        usedNames.add(name);
        return name;
      }
      if (usedNames.size > 4000) return `${name} ${usedNames.size}`;
    }
  };
  const house = (): string => `${random.choice(NAME_STARTS)}${random.choice(NAME_ENDS)}`;
  const historyDays = endDay - startDay;
  const result: InstrumentSpec[] = [];
  for (const plan of plans) {
    for (let number = 1; number <= plan.count; number++) {
      const id = `${plan.prefix}${String(number).padStart(4, '0')}`;
      const currency = random.weightedChoice(CURRENCY_WEIGHTS.map(([code]) => code), CURRENCY_WEIGHTS.map(([, weight]) => weight));
      if (plan.prefix === 'BD') {
        const couponRate = Math.round(random.between(0.5, 5) * 8) / 800;
        const maturity = ymd(endDay).year + random.integer(2, 15);
        const anchor = Math.round(random.between(95, 105) * 100) / 100;
        const income: IncomeModel = { kind: 'coupon', rate: couponRate, month: random.integer(1, 12), day: random.integer(1, 28) };
        result.push({
          id, name: `${house()} ${(couponRate * 100).toFixed(3).replace(/0+$/, '').replace(/\.$/, '')}% ${maturity}`, assetClass: 'bonds', currency,
          kind: 'security', multiplier: 0.01, proxy: null, income,
          price: {
            factorLoading: random.between(0.4, 0.8), annualDrift: 0, annualVolatility: random.between(0.03, 0.08),
            startLevel: Math.round((anchor + random.between(-2, 2)) * 1000) / 1000,
            dynamics: { kind: 'mean-reverting', anchor, reversionSpeed: random.between(1, 2.5) }, decimals: 3,
          },
        });
        continue;
      }
      if (plan.kind === 'security') {
        const listed = random.chance(0.05) && historyDays > 730;
        const suspended = !listed && random.chance(0.01);
        const pays = random.chance(0.7);
        const income: IncomeModel | null = pays
          ? { kind: 'dividend', annualYield: Math.round(random.between(0.005, 0.05) * 1000) / 1000, months: random.choice(DIVIDEND_MONTHS[currency]!) }
          : null;
        result.push({
          id, name: companyName(), assetClass: 'equity', currency, kind: 'security', multiplier: 1, proxy: null, income,
          price: {
            factorLoading: random.between(0.55, 0.85), annualDrift: random.between(0.03, 0.11), annualVolatility: random.between(0.15, 0.32),
            startLevel: Math.round(Math.exp(random.between(Math.log(5), Math.log(300))) * 100) / 100, dynamics: { kind: 'gbm' }, decimals: 2,
            ...(listed ? { firstDate: isoDate(startDay + random.integer(365, historyDays - 365)) } : {}),
            ...(suspended ? { lastDate: isoDate(endDay - random.integer(15, 30)) } : {}),
          },
        });
        continue;
      }
      const assetClass = ASSET_CLASSES.find((candidate) => candidate.id === plan.assetClass)!;
      const style = random.choice(FUND_STYLES[plan.assetClass]!);
      const distributing = plan.assetClass !== 'cash' && random.chance(0.5);
      const dynamics = {
        equity: { drift: random.between(0.05, 0.09), volatility: random.between(0.13, 0.22) },
        bonds: { drift: random.between(0.02, 0.04), volatility: random.between(0.03, 0.07) },
        property: { drift: random.between(0.04, 0.06), volatility: random.between(0.11, 0.16) },
        cash: { drift: random.between(0.015, 0.025), volatility: 0.002 },
      }[plan.assetClass]!;
      result.push({
        id, name: `${house()} ${currency} ${style} Fund (${distributing ? 'dist.' : 'acc.'})`, assetClass: assetClass.id, currency,
        kind: 'fund', multiplier: 1, proxy: null,
        income: distributing ? { kind: 'dividend', annualYield: Math.round(random.between(0.01, 0.04) * 1000) / 1000, months: random.choice([[6, 12], [3, 9], [3, 6, 9, 12]]) } : null,
        price: {
          factorLoading: random.between(0.85, 0.97), annualDrift: dynamics.drift, annualVolatility: dynamics.volatility,
          startLevel: plan.assetClass === 'cash' ? 100 : Math.round(random.between(8, 250) * 100) / 100, dynamics: { kind: 'gbm' }, decimals: 4,
        },
      });
    }
  }
  // At least one equity stops being priced before the end, so stale prices occur in every book.
  if (!result.some((instrument) => instrument.price.lastDate !== undefined)) {
    const position = result.findIndex((instrument) => instrument.id.startsWith('EQ') && instrument.price.firstDate === undefined);
    const chosen = result[position];
    if (chosen) result[position] = { ...chosen, price: { ...chosen.price, lastDate: isoDate(endDay - 21) } };
  }
  return result;
}

// ---- accounts ----------------------------------------------------------------------

const FIRST_NAMES = ['Anna', 'Ben', 'Chloé', 'Dmitri', 'Elif', 'Finn', 'Grace', 'Hamid', 'Ines', 'Jonas', 'Kaja', 'Luca', 'Maëlle', 'Niamh', 'Oskar', 'Priya', 'Quentin', 'Rosa', 'Søren', 'Tamsin', 'Umar', 'Vera', 'Wilhelm', 'Ximena', 'Yusuf', 'Zoë'];
const LAST_NAMES = ['Abbott', 'Bergström', 'Carvalho', "D'Souza", 'Eriksen', 'Fontaine', 'Grünewald', 'Hughes', 'Ibarra', 'Jansen', 'Kowalczyk', 'Lindqvist', 'Moreau', "O'Neill", 'Petrov', 'Quinlan', 'Rossi', 'Schäfer', 'Takahashi', 'Underwood', 'Varga', 'Whitfield', 'Yilmaz', 'Zimmermann'];
const ADVISERS = ['Alex Marsh', 'Bea Okafor', 'Carl Lindholm', 'Dana Whitley', 'Emil Novak', 'Farah Haddad'];

function asciiSlug(text: string): string {
  return text.normalize('NFD').replace(/[^A-Za-z]/g, '').toLowerCase();
}

/** Target class weights: the middle of each allowed range, jittered, normalised; breaching accounts hold far more equity than allowed. */
function classWeights(random: Random, mandate: MandateSpec, breach: boolean): Map<string, number> {
  const weights = new Map<string, number>();
  for (const assetClass of ASSET_CLASSES) {
    const range = mandate.allocation[assetClass.id];
    if (!range) continue;
    const [low, high] = range;
    const span = high - low;
    weights.set(assetClass.id, low + span * random.between(0.35, 0.65));
  }
  if (breach) {
    const equityMax = mandate.allocation['equity']?.[1] ?? 0;
    weights.set('equity', Math.min(0.95, equityMax + 0.25));
    const others = [...weights.keys()].filter((key) => key !== 'equity');
    const rest = others.reduce((sum, key) => sum + weights.get(key)!, 0);
    for (const key of others) weights.set(key, ((weights.get(key)! / rest) * (1 - weights.get('equity')!)));
    return weights;
  }
  const sum = [...weights.values()].reduce((total, weight) => total + weight, 0);
  for (const [key, weight] of weights) weights.set(key, weight / sum);
  return weights;
}

function simulateAccount(index: number, accountCount: number, market: Market, holdable: readonly InstrumentSpec[], seed: number): AccountSimulation {
  const random = createRandom(seed, `account:${index}`);
  const first = random.choice(FIRST_NAMES);
  const last = random.choice(LAST_NAMES);
  const mandate = random.choice(MANDATES);
  const baseCurrency = random.weightedChoice(['EUR', 'GBP', 'USD'], [0.8, 0.1, 0.1]);
  const plan: AccountPlan = {
    id: `SYN-${String(index + 1).padStart(6, '0')}`,
    client: `${first} ${last}`,
    mandate: mandate.id,
    baseCurrency,
    adviser: random.choice(ADVISERS),
    email: random.chance(0.95) ? `${asciiSlug(first)}.${asciiSlug(last)}.${index + 1}@example.org` : null,
    locale: null,
    annualFee: mandate.annualFee,
  };
  const sim = new AccountSimulation(plan, market, random);
  const dayCount = market.days.length;
  const lastIndex = dayCount - 1;
  const inception = random.chance(0.25) ? random.integer(0, Math.min(60, lastIndex - 1)) : random.integer(0, Math.max(0, lastIndex - 20));
  const breach = random.chance(0.03) || (accountCount >= 5 && index === 3);
  const total = Math.round(Math.min(20_000_000, Math.max(25_000, Math.exp(Math.log(400_000) + 0.9 * random.normal()))) / 1000) * 1000;

  // Choose about 30 holdings spread over the classes by weight, preferring the base currency.
  const weights = classWeights(random, mandate, breach);
  const holdingCount = random.integer(26, 34);
  const tradable = (instrument: InstrumentSpec, dayIndex: number): boolean =>
    !Number.isNaN(market.price(instrument.id, dayIndex)) && market.lastPriceIndex(instrument.id) > dayIndex + 5;
  const portfolio: Array<readonly [string, number]> = [];
  for (const [assetClass, classWeight] of weights) {
    const slots = assetClass === 'cash' ? (random.chance(0.3) ? 1 : 0) : Math.max(1, Math.round(holdingCount * classWeight));
    if (slots === 0 || classWeight < 0.01) continue;
    const candidates = holdable.filter((instrument) => instrument.assetClass === assetClass && tradable(instrument, inception));
    const chosen = pickPreferring(random, candidates, Math.min(slots, candidates.length), baseCurrency, (instrument) => market.lastPriceIndex(instrument.id) < lastIndex);
    const classShare = assetClass === 'cash' ? classWeight * 0.35 : classWeight;
    const raw = chosen.map(() => random.between(0.6, 1.4));
    const rawSum = raw.reduce((sum, value) => sum + value, 0);
    chosen.forEach((instrument, position) => portfolio.push([instrument.id, (classShare * raw[position]!) / rawSum]));
  }
  // Outside the deliberate breaches no position starts above 80 % of the mandate's limit (it matters in small universes).
  const positionCap = mandate.maxPosition !== undefined && !breach ? 0.8 * mandate.maxPosition : 1;
  for (let position = 0; position < portfolio.length; position++) {
    const [id, weight] = portfolio[position]!;
    if (weight > positionCap) portfolio[position] = [id, positionCap];
  }
  const investedWeight = portfolio.reduce((sum, [, weight]) => sum + weight, 0);
  sim.investPortfolio(inception, total, portfolio, Math.max(0.01, 1 - investedWeight), 'Initial investment', 'Initial deposit');
  if (random.chance(0.05)) {
    const candidates = holdable.filter((instrument) => instrument.assetClass === 'equity' && instrument.kind === 'security' && tradable(instrument, inception));
    for (const instrument of random.sample(candidates, Math.min(2, candidates.length))) {
      const quantity = Math.max(1, Math.round((total * 0.04 * market.fxRate(baseCurrency, instrument.currency, inception)) / market.price(instrument.id, inception)));
      sim.transferIn(inception, instrument.id, quantity, 'Transfer in from another custodian');
    }
  }
  let targets = sim.currentWeights(inception);

  // Yearly life: January rebalancing (not for breaching accounts), and now and then a deposit, a withdrawal, a switch or a transfer out.
  const { year: firstYear } = ymd(market.days[inception]!);
  const { year: lastYear } = ymd(market.days[lastIndex]!);
  for (let year = firstYear; year <= lastYear; year++) {
    const events: Array<{ dayIndex: number; run: (dayIndex: number) => void }> = [];
    const januaryIndex = market.indexOf(businessDayOnOrAfter(dayOf(year, 1, 12)));
    if (!breach && januaryIndex > inception) {
      events.push({ dayIndex: januaryIndex, run: (dayIndex) => sim.rebalance(dayIndex, targets.positions, 0.01, targets.baseCash * 0.8, `Yearly rebalancing ${year}`) });
    }
    const yearStart = market.indexOf(businessDayOnOrAfter(dayOf(year, 1, 1)));
    const yearEnd = Math.min(lastIndex, year === lastYear ? lastIndex : market.indexOf(businessDayOnOrAfter(dayOf(year + 1, 1, 1))) - 1);
    const randomDay = (): number => random.integer(Math.max(yearStart, inception + 1), yearEnd);
    const windowOpen = Math.max(yearStart, inception + 1) <= yearEnd;
    if (windowOpen && random.chance(0.3)) {
      const amount = random.between(0.05, 0.25);
      events.push({
        dayIndex: randomDay(),
        run: (dayIndex) => {
          sim.deposit(dayIndex, Math.round((sim.value(dayIndex) * amount) / 100) * 100, baseCurrency, 'Additional deposit');
          sim.rebalance(dayIndex, targets.positions, 0.005, targets.baseCash * 0.8, 'Investment of additional deposit');
        },
      });
    }
    if (windowOpen && random.chance(0.15)) {
      const share = random.between(0.05, 0.2);
      events.push({
        dayIndex: randomDay(),
        run: (dayIndex) => {
          const amount = Math.round(sim.value(dayIndex) * share / 100) * 100;
          if (amount <= 0) return;
          sim.raiseCash(dayIndex, baseCurrency, amount, 'pro-rata', 'Sale to fund a withdrawal');
          const paid = Math.min(amount, Math.floor(sim.cashBalance(baseCurrency)));
          if (paid >= 100) sim.withdraw(dayIndex, paid, baseCurrency, 'Withdrawal');
        },
      });
    }
    if (windowOpen && random.chance(0.3)) {
      events.push({ dayIndex: randomDay(), run: (dayIndex) => { targets = switchHolding(sim, market, holdable, random, dayIndex) ?? targets; } });
    }
    if (windowOpen && random.chance(0.03)) {
      events.push({
        dayIndex: randomDay(),
        run: (dayIndex) => {
          // Bring the ledger to this day first (fees due today may sell part of a holding).
          sim.advanceTo(dayIndex);
          const held = [...sim.heldPositions()].filter(([id]) => !Number.isNaN(market.price(id, dayIndex)));
          if (held.length === 0) return;
          const [id, quantity] = random.choice(held);
          const lot = lotSize(market.instruments.get(id)!);
          const moved = Math.floor((quantity * 0.5) / lot) * lot;
          if (moved > 0) {
            sim.transferOut(dayIndex, id, lot < 1 ? Math.round(moved * 1000) / 1000 : moved, 'Transfer out to another custodian');
            targets = sim.currentWeights(dayIndex);
          }
        },
      });
    }
    events.sort((left, right) => left.dayIndex - right.dayIndex);
    for (const event of events) event.run(event.dayIndex);
  }
  sim.finish(lastIndex);
  return sim;
}

/** Sells one holding in full and buys another instrument of its class and currency; returns the new targets, or null when no switch was possible. */
function switchHolding(
  sim: AccountSimulation, market: Market, holdable: readonly InstrumentSpec[], random: Random, dayIndex: number,
): ReturnType<AccountSimulation['currentWeights']> | null {
  // Bring the ledger to this day first: fees due today may sell part of a holding.
  sim.advanceTo(dayIndex);
  const held = [...sim.heldPositions().keys()].filter((id) => !Number.isNaN(market.price(id, dayIndex)));
  if (held.length === 0) return null;
  const sold = market.instruments.get(random.choice(held))!;
  const replacements = holdable.filter(
    (instrument) =>
      instrument.assetClass === sold.assetClass && instrument.currency === sold.currency && sim.quantity(instrument.id) === 0 &&
      !Number.isNaN(market.price(instrument.id, dayIndex)) && market.lastPriceIndex(instrument.id) > dayIndex + 5,
  );
  if (replacements.length === 0) return null;
  const proceeds = sim.sell(dayIndex, sold.id, sim.quantity(sold.id), 'Switch: sale');
  sim.buyForValue(dayIndex, random.choice(replacements).id, proceeds, 'Switch: purchase');
  return sim.currentWeights(dayIndex);
}

/** `count` distinct instruments, three times as likely in the base currency and a tenth as likely when `rare` says so. */
function pickPreferring(
  random: Random, candidates: readonly InstrumentSpec[], count: number, baseCurrency: string, rare: (instrument: InstrumentSpec) => boolean,
): InstrumentSpec[] {
  const pool = [...candidates];
  const chosen: InstrumentSpec[] = [];
  while (chosen.length < count && pool.length > 0) {
    const weights = pool.map((instrument) => (instrument.currency === baseCurrency ? 3 : 1) * (rare(instrument) ? 0.1 : 1));
    const pick = random.weightedChoice(pool.map((_, position) => position), weights);
    chosen.push(pool[pick]!);
    pool.splice(pick, 1);
  }
  return chosen;
}
