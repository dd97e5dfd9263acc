/**
 * The curated demo book: an invented firm with twelve invented clients,
 * forty invented instruments and six years of synthetic prices, whose
 * accounts are scripted so that one reporting run over 2026-Q3 meets every
 * case the statements handle (see the README written beside it).
 */
import path from 'node:path';
import { dayOf } from '../dates.ts';
import { type AccountPlan, AccountSimulation, lotSize } from './account.ts';
import { BookWriter, type HoldingsBreak, yamlText } from './book-writer.ts';
import { writeTextFile } from './csv-writer.ts';
import {
  type FirmSpec,
  INDICES,
  type IncomeModel,
  type InstrumentSpec,
  type PriceModel,
  bookYamlObject,
  mandateById,
  mandatesYamlObject,
} from './house.ts';
import { type Market, simulateMarket } from './market.ts';
import { businessDayOnOrAfter } from './prices.ts';
import { createRandom } from './random.ts';

export const DEMO_FIRST_DATE = '2020-07-01';
export const DEMO_LAST_DATE = '2026-09-30';
export const DEMO_PERIOD = '2026-Q3';
const DEMO_PERIOD_START = '2026-07-01';
export const DEMO_SEED = 20260930;

export const DEMO_FIRM: FirmSpec = {
  name: 'Tallowmere & Finch Private Wealth',
  address: '3 Larkspur Yard, Exampleton, Northmarch',
  email: 'statements@example.org',
  phone: '+44 20 7946 0321',
  regulatoryNote:
    'Tallowmere & Finch Private Wealth is an invented firm that exists only to demonstrate this software. It is not authorised or supervised by any regulator, and its register number TF-000000 is fictitious.',
};

// ---- instruments -------------------------------------------------------------

const dividend = (annualYield: number, ...months: number[]): IncomeModel => ({ kind: 'dividend', annualYield, months });
const coupon = (rate: number, month: number, day: number): IncomeModel => ({ kind: 'coupon', rate, month, day });

function equity(
  id: string, name: string, currency: string, startLevel: number, drift: number, volatility: number, loading: number,
  income: IncomeModel | null, extra: { proxy?: string; firstDate?: string; lastDate?: string } = {},
): InstrumentSpec {
  const price: PriceModel = {
    factorLoading: loading, annualDrift: drift, annualVolatility: volatility, startLevel, dynamics: { kind: 'gbm' }, decimals: 2,
    ...(extra.firstDate === undefined ? {} : { firstDate: extra.firstDate }),
    ...(extra.lastDate === undefined ? {} : { lastDate: extra.lastDate }),
  };
  return { id, name, assetClass: 'equity', currency, kind: 'security', multiplier: 1, proxy: extra.proxy ?? null, price, income };
}

function fund(
  id: string, name: string, assetClass: string, currency: string, startLevel: number, drift: number, volatility: number, loading: number,
  income: IncomeModel | null, extra: { proxy?: string; firstDate?: string } = {},
): InstrumentSpec {
  const price: PriceModel = {
    factorLoading: loading, annualDrift: drift, annualVolatility: volatility, startLevel, dynamics: { kind: 'gbm' }, decimals: 4,
    ...(extra.firstDate === undefined ? {} : { firstDate: extra.firstDate }),
  };
  return { id, name, assetClass, currency, kind: 'fund', multiplier: 1, proxy: extra.proxy ?? null, price, income };
}

/** A bond quoted in percent of nominal (multiplier 0.01), its clean price mean-reverting around `anchor`. */
function bond(id: string, name: string, currency: string, startLevel: number, anchor: number, volatility: number, income: IncomeModel, proxy: string | null = null): InstrumentSpec {
  return {
    id, name, assetClass: 'bonds', currency, kind: 'security', multiplier: 0.01, proxy,
    price: { factorLoading: 0.6, annualDrift: 0, annualVolatility: volatility, startLevel, dynamics: { kind: 'mean-reverting', anchor, reversionSpeed: 1.5 }, decimals: 3 },
    income,
  };
}

/** The instrument whose prices stop three weeks before the period end. */
export const DEMO_STALE_INSTRUMENT = 'EQ-MARLOWE';
export const DEMO_STALE_LAST_DATE = '2026-09-09';

export const DEMO_HOLDABLE_INSTRUMENTS: readonly InstrumentSpec[] = [
  equity('EQ-ALDERMOOR', 'Aldermoor Industrial Holdings', 'EUR', 42, 0.07, 0.24, 0.7, dividend(0.028, 5), { proxy: 'IX-EQ-EUROPE' }),
  equity('EQ-BREVANT', 'Brevant Pharma', 'EUR', 118, 0.06, 0.22, 0.6, dividend(0.02, 4, 10), { proxy: 'IX-EQ-EUROPE' }),
  equity('EQ-CORVANE', 'Corvane Energy Networks', 'EUR', 18.5, 0.05, 0.2, 0.65, dividend(0.042, 6)),
  equity('EQ-DALSEN', 'Dalsen Logistics', 'EUR', 64, 0.07, 0.26, 0.7, dividend(0.015, 5)),
  equity('EQ-ESKERHOLM', 'Eskerholm Foods', 'EUR', 36, 0.055, 0.18, 0.6, dividend(0.03, 4, 10)),
  equity('EQ-FENTURO', 'Fenturo Software', 'EUR', 210, 0.1, 0.32, 0.65, null),
  equity('EQ-SOLVENHOLT', 'Solvenholt Chemicals', 'EUR', 57, 0.06, 0.23, 0.7, dividend(0.031, 5)),
  equity(DEMO_STALE_INSTRUMENT, 'Marlowe Textiles (trading suspended)', 'EUR', 12.4, 0.04, 0.3, 0.5, dividend(0.025, 6), { lastDate: DEMO_STALE_LAST_DATE }),
  equity('EQ-VANTOR', 'Vantor Grid Storage', 'EUR', 25, 0.09, 0.38, 0.55, null, { firstDate: '2025-03-03' }),
  equity('EQ-HALCREST', 'Halcrest Semiconductors', 'USD', 145, 0.11, 0.34, 0.7, dividend(0.008, 3, 6, 9, 12)),
  equity('EQ-IVERNOOK', 'Ivernook Health Systems', 'USD', 88, 0.07, 0.22, 0.65, dividend(0.016, 3, 6, 9, 12)),
  equity('EQ-QUELLBROOK', 'Quellbrook Retail Group', 'USD', 54, 0.06, 0.25, 0.7, dividend(0.022, 3, 6, 9, 12)),
  equity('EQ-KESTONBURY', 'Kestonbury Payments', 'USD', 230, 0.09, 0.27, 0.7, dividend(0.005, 6, 12)),
  equity('EQ-LUMENVALE', 'Lumenvale Cloud Services', 'USD', 76, 0.12, 0.36, 0.65, null),
  equity('EQ-TARNWICK', 'Tarnwick Aerospace', 'USD', 132, 0.06, 0.24, 0.7, dividend(0.018, 3, 6, 9, 12)),
  equity('EQ-MERRIDEW', 'Merridew Insurance', 'GBP', 7.85, 0.06, 0.2, 0.65, dividend(0.045, 5, 11)),
  equity('EQ-OAKHARROW', 'Oakharrow Water', 'GBP', 11.2, 0.04, 0.15, 0.5, dividend(0.04, 7, 12)),
  equity('EQ-WYNSCOMBE', 'Wynscombe Mining', 'GBP', 23.4, 0.07, 0.3, 0.7, dividend(0.05, 4, 9)),
  equity('EQ-THISTLEGATE', 'Thistlegate Media', 'GBP', 4.6, 0.05, 0.28, 0.6, dividend(0.02, 6)),
  equity('EQ-GLARNSTEIN', 'Glarnstein Precision Instruments', 'CHF', 96, 0.065, 0.2, 0.65, dividend(0.024, 4)),
  equity('EQ-FELSACHER', 'Felsacher Nutrition', 'CHF', 104, 0.05, 0.16, 0.6, dividend(0.028, 4)),
  fund('FD-NORTHGATE-EUEQ', 'Northgate European Equity Fund (acc.)', 'equity', 'EUR', 148.2, 0.065, 0.17, 0.95, null, { proxy: 'IX-EQ-EUROPE' }),
  fund('FD-GREYWATER-GLEQ', 'Greywater Global Equity Fund (dist.)', 'equity', 'EUR', 23.8, 0.07, 0.15, 0.97, dividend(0.015, 3, 9)),
  fund('FD-ASHCOMBE-USEQ', 'Ashcombe US Equity Fund (acc.)', 'equity', 'USD', 312, 0.08, 0.17, 0.95, null),
  fund('FD-PELLWORTH-EMEQ', 'Pellworth Emerging Markets Equity Fund (acc.)', 'equity', 'USD', 41, 0.07, 0.21, 0.8, null),
  fund('FD-LINDENHALL-GOV', 'Lindenhall Euro Government Bond Fund (dist.)', 'bonds', 'EUR', 102.5, 0.025, 0.05, 0.95, dividend(0.02, 6, 12)),
  fund('FD-LINDENHALL-CORP', 'Lindenhall Euro Corporate Bond Fund (dist.)', 'bonds', 'EUR', 50, 0.03, 0.06, 0.9, dividend(0.028, 6, 12), { proxy: 'IX-BD-CORP', firstDate: '2023-02-01' }),
  fund('FD-CASTLEMERE-GBPBD', 'Castlemere Sterling Bond Fund (acc.)', 'bonds', 'GBP', 1.84, 0.025, 0.06, 0.85, null),
  fund('FD-FENNICK-PROP', 'Fennick European Property Fund (dist.)', 'property', 'EUR', 9.6, 0.05, 0.14, 0.85, dividend(0.032, 5, 11)),
  fund('FD-WREYFORD-PROP', 'Wreyford Property Income Fund (dist.)', 'property', 'GBP', 1.12, 0.045, 0.15, 0.8, dividend(0.036, 3, 6, 9, 12)),
  fund('FD-MOSSGROVE-MM', 'Mossgrove Euro Money Market Fund (acc.)', 'cash', 'EUR', 100, 0.019, 0.002, 0.9, null),
  bond('BD-ALDMARK-2031', 'Republic of Aldmark 2.25% 2031', 'EUR', 100.4, 99, 0.045, coupon(0.0225, 3, 15)),
  bond('BD-ALDMARK-2036', 'Republic of Aldmark 3.00% 2036', 'EUR', 101.2, 98, 0.07, coupon(0.03, 11, 1)),
  bond('BD-VESTRIA-2029', 'Vestrian Federal Treasury 1.50% 2029', 'EUR', 98.9, 97.5, 0.03, coupon(0.015, 7, 20)),
  bond('BD-KESTREL-2030', 'Kestrel Rail Finance 3.75% 2030', 'EUR', 102.3, 101, 0.05, coupon(0.0375, 9, 1), 'IX-BD-CORP'),
  bond('BD-ORMONDE-2028', 'Ormonde Utilities 4.10% 2028', 'EUR', 103.5, 102, 0.035, coupon(0.041, 5, 12), 'IX-BD-CORP'),
  bond('BD-TRESSEL-2032', 'Federated States of Tressel 3.50% 2032', 'USD', 100.8, 99.5, 0.05, coupon(0.035, 8, 17)),
  bond('BD-HALCREST-2030', 'Halcrest Semiconductors 4.50% 2030', 'USD', 102.1, 101.5, 0.05, coupon(0.045, 2, 10), 'IX-BD-CORP'),
  bond('BD-DUNMORE-2030', 'Exchequer of Dunmore 1.75% 2030', 'GBP', 98.2, 97, 0.04, coupon(0.0175, 1, 22)),
  bond('BD-DUNMORE-2035', 'Exchequer of Dunmore 4.00% 2035', 'GBP', 100.9, 100.5, 0.07, coupon(0.04, 7, 7)),
];

export const DEMO_INSTRUMENTS: readonly InstrumentSpec[] = [...INDICES, ...DEMO_HOLDABLE_INSTRUMENTS];

// ---- scripting helpers -----------------------------------------------------------

type Weights = ReadonlyArray<readonly [string, number]>;

/** What an account's scripted actions work on. */
interface Script {
  readonly sim: AccountSimulation;
  readonly market: Market;
  /** Weights the yearly rebalancing returns to (instrument → share of value), and the base cash it keeps. */
  targets: Weights;
  cashReserve: number;
}

type Action = (script: Script) => void;

/** Collects an account's actions with their dates; they run in date order (same date: in the order given). */
interface Schedule {
  on(date: string, action: Action): void;
  /** A rebalancing to the current targets in January of each year from `firstYear` to `lastYear`. */
  rebalanceEachJanuary(firstYear: number, lastYear: number): void;
}

/** Funds and buys a portfolio (see AccountSimulation.investPortfolio). */
function invest({ sim, market }: Script, date: string, total: number, weights: Weights, cashWeight: number, note = 'Initial investment'): void {
  sim.investPortfolio(market.indexOfDate(date), total, weights, cashWeight, note, note === 'Initial investment' ? 'Initial deposit' : 'Additional deposit');
}

/** Makes the current weights of the account the rebalancing targets. */
function keepCurrentWeights(script: Script, date: string): void {
  const weights = script.sim.currentWeights(script.market.indexOfDate(date));
  script.targets = weights.positions;
  script.cashReserve = weights.baseCash * 0.8;
}

/** Sells a fraction of a holding (whole lots, rounded down); returns the proceeds. */
function sellFraction({ sim, market }: Script, date: string, instrument: string, fraction: number, note: string): number {
  const lot = lotSize(market.instruments.get(instrument)!);
  const quantity = Math.floor((sim.quantity(instrument) * fraction) / lot + 1e-9) * lot;
  const rounded = lot < 1 ? Math.round(quantity * 1000) / 1000 : quantity;
  return rounded > 0 ? sim.sell(market.indexOfDate(date), instrument, rounded, note) : 0;
}

/** Buys with the given budget (instrument currency). */
function buyFor({ sim, market }: Script, date: string, instrument: string, budget: number, note: string): void {
  sim.buyForValue(market.indexOfDate(date), instrument, budget, note);
}

/** Invests at `date` and makes the resulting weights the rebalancing targets. */
function openAccount(schedule: Schedule, date: string, total: number, weights: Weights, cashWeight: number): void {
  schedule.on(date, (script) => {
    invest(script, date, total, weights, cashWeight);
    keepCurrentWeights(script, date);
  });
}

// ---- the accounts ------------------------------------------------------------------

interface DemoAccount {
  readonly plan: Omit<AccountPlan, 'annualFee'>;
  /** What this account demonstrates, for the README. */
  readonly shows: readonly string[];
  readonly schedule: (schedule: Schedule) => void;
}

const RENNER = 'Tobias Renner';
const CASTELLANOS = 'Priya Castellanos';
const BLACKTHORN = 'Owen Blackthorn';

export const DEMO_ACCOUNTS: readonly DemoAccount[] = [
  {
    plan: { id: 'TF-1001', client: 'Eleanor Whitcombe', mandate: 'balanced', baseCurrency: 'EUR', adviser: RENNER, email: 'eleanor.whitcombe@example.org', locale: null },
    shows: [
      'oldest account (first deposit 2020-07-06): every window up to 5 years exists',
      'US-dollar dividends with 15 % withholding tax on a euro account',
      'yearly rebalancing, a switch in 2022, an additional deposit in 2024, and a switch inside 2026-Q3',
    ],
    schedule: (schedule) => {
      openAccount(schedule, '2020-07-06', 850_000, [
        ['EQ-ALDERMOOR', 0.06], ['EQ-BREVANT', 0.06], ['EQ-ESKERHOLM', 0.05], ['EQ-HALCREST', 0.05], ['EQ-IVERNOOK', 0.05],
        ['EQ-QUELLBROOK', 0.04], ['FD-GREYWATER-GLEQ', 0.1], ['FD-ASHCOMBE-USEQ', 0.04],
        ['BD-ALDMARK-2031', 0.1], ['BD-ORMONDE-2028', 0.08], ['FD-LINDENHALL-GOV', 0.1], ['BD-TRESSEL-2032', 0.08],
        ['FD-FENNICK-PROP', 0.08],
      ], 0.11);
      schedule.rebalanceEachJanuary(2021, 2026);
      schedule.on('2022-05-16', (script) => {
        const proceeds = sellFraction(script, '2022-05-16', 'EQ-HALCREST', 0.5, 'Switch: reduce semiconductors');
        buyFor(script, '2022-05-16', 'EQ-TARNWICK', proceeds, 'Switch: add aerospace');
        keepCurrentWeights(script, '2022-05-16');
      });
      schedule.on('2024-01-15', (script) => {
        invest(script, '2024-01-15', 150_000, [['FD-NORTHGATE-EUEQ', 0.35], ['BD-ALDMARK-2036', 0.35], ['FD-LINDENHALL-CORP', 0.25]], 0.05, 'Investment of additional deposit');
        keepCurrentWeights(script, '2024-01-15');
      });
      schedule.on('2026-07-14', (script) => {
        const proceeds = sellFraction(script, '2026-07-14', 'EQ-ALDERMOOR', 0.3, 'Switch, part 1: trim Aldermoor');
        buyFor(script, '2026-07-14', 'EQ-SOLVENHOLT', proceeds, 'Switch, part 2: buy Solvenholt');
      });
    },
  },
  {
    plan: { id: 'TF-1002', client: 'Margarethe Öberg-Lind', mandate: 'cautious', baseCurrency: 'EUR', adviser: RENNER, email: 'margarethe.oberg-lind@example.org', locale: null },
    shows: [
      'client name with non-ASCII letters',
      'bonds quoted in percent of nominal (multiplier 0.01) paying annual coupons, two of them inside 2026-Q3 (20 July and 1 September)',
      'a money-market fund in the cash class',
    ],
    schedule: (schedule) => {
      openAccount(schedule, '2021-03-01', 1_400_000, [
        ['FD-MOSSGROVE-MM', 0.08], ['BD-ALDMARK-2031', 0.08], ['BD-ALDMARK-2036', 0.08], ['BD-VESTRIA-2029', 0.08], ['BD-KESTREL-2030', 0.08],
        ['BD-ORMONDE-2028', 0.08], ['FD-LINDENHALL-GOV', 0.08], ['BD-TRESSEL-2032', 0.06], ['BD-HALCREST-2030', 0.06],
        ['FD-GREYWATER-GLEQ', 0.06], ['FD-NORTHGATE-EUEQ', 0.05], ['EQ-CORVANE', 0.04], ['EQ-ESKERHOLM', 0.02], ['FD-FENNICK-PROP', 0.03],
      ], 0.12);
      schedule.rebalanceEachJanuary(2022, 2026);
      schedule.on('2023-03-01', (script) => {
        const proceeds = sellFraction(script, '2023-03-01', 'FD-MOSSGROVE-MM', 0.5, 'Switch from money market');
        buyFor(script, '2023-03-01', 'FD-LINDENHALL-CORP', proceeds, 'Switch into corporate bonds');
        keepCurrentWeights(script, '2023-03-01');
      });
    },
  },
  {
    plan: { id: 'TF-1003', client: "Declan O'Rourke", mandate: 'cautious', baseCurrency: 'EUR', adviser: CASTELLANOS, email: 'declan.orourke@example.org', locale: null },
    shows: [
      'client name with an apostrophe',
      'mandate breach: a cautious mandate (equities 5–30 %) held at about 70 % equities and never rebalanced; bonds below their minimum, single positions above 10 %',
    ],
    schedule: (schedule) => {
      openAccount(schedule, '2022-09-15', 600_000, [
        ['EQ-FENTURO', 0.09], ['EQ-DALSEN', 0.09], ['EQ-ALDERMOOR', 0.08], ['EQ-SOLVENHOLT', 0.08], ['EQ-LUMENVALE', 0.09],
        ['EQ-KESTONBURY', 0.09], ['FD-NORTHGATE-EUEQ', 0.09], ['FD-ASHCOMBE-USEQ', 0.09],
        ['BD-ALDMARK-2031', 0.1], ['FD-LINDENHALL-GOV', 0.1], ['BD-VESTRIA-2029', 0.05],
      ], 0.05);
    },
  },
  {
    plan: { id: 'TF-1004', client: 'Harriet Fenwick-Shaw', mandate: 'growth', baseCurrency: 'GBP', adviser: BLACKTHORN, email: 'h.fenwick-shaw@example.org', locale: 'en-GB' },
    shows: [
      'pound sterling base currency: US-dollar holdings need the cross rate USD→GBP via EUR (fx.csv quotes only EUR/USD and EUR/GBP)',
      'sterling bonds in percent of nominal, a sterling property fund paying quarterly, an additional deposit in 2025',
    ],
    schedule: (schedule) => {
      openAccount(schedule, '2021-11-01', 720_000, [
        ['EQ-MERRIDEW', 0.07], ['EQ-OAKHARROW', 0.07], ['EQ-WYNSCOMBE', 0.06], ['EQ-THISTLEGATE', 0.05], ['FD-CASTLEMERE-GBPBD', 0.09],
        ['BD-DUNMORE-2030', 0.11], ['BD-DUNMORE-2035', 0.06], ['FD-WREYFORD-PROP', 0.07], ['EQ-HALCREST', 0.07], ['EQ-TARNWICK', 0.06],
        ['FD-ASHCOMBE-USEQ', 0.1], ['FD-PELLWORTH-EMEQ', 0.06], ['FD-NORTHGATE-EUEQ', 0.08],
      ], 0.05);
      schedule.rebalanceEachJanuary(2022, 2026);
      schedule.on('2023-10-16', (script) => {
        sellFraction(script, '2023-10-16', 'EQ-WYNSCOMBE', 0.4, 'Take profits in mining');
        keepCurrentWeights(script, '2023-10-16');
      });
      schedule.on('2025-02-17', (script) => {
        invest(script, '2025-02-17', 100_000, [
          ['FD-CASTLEMERE-GBPBD', 0.2], ['EQ-MERRIDEW', 0.2], ['BD-DUNMORE-2030', 0.25], ['FD-WREYFORD-PROP', 0.1], ['FD-PELLWORTH-EMEQ', 0.2],
        ], 0.05, 'Investment of additional deposit');
        keepCurrentWeights(script, '2025-02-17');
      });
    },
  },
  {
    plan: { id: 'TF-1005', client: 'Jonah Whitaker-Beaumont', mandate: 'adventurous', baseCurrency: 'USD', adviser: BLACKTHORN, email: 'jonah.wb@example.org', locale: 'en-US' },
    shows: ['US-dollar base currency holding euro shares and funds', 'account locale en-US overriding the firm default'],
    schedule: (schedule) => {
      openAccount(schedule, '2022-01-10', 950_000, [
        ['EQ-HALCREST', 0.1], ['EQ-LUMENVALE', 0.09], ['EQ-KESTONBURY', 0.1], ['EQ-IVERNOOK', 0.08], ['EQ-TARNWICK', 0.08],
        ['FD-ASHCOMBE-USEQ', 0.11], ['FD-PELLWORTH-EMEQ', 0.08], ['EQ-FENTURO', 0.08], ['FD-NORTHGATE-EUEQ', 0.1],
        ['BD-TRESSEL-2032', 0.1],
      ], 0.08);
      schedule.rebalanceEachJanuary(2023, 2026);
      schedule.on('2024-09-16', (script) => {
        const proceeds = sellFraction(script, '2024-09-16', 'EQ-LUMENVALE', 0.5, 'Reduce cloud exposure');
        buyFor(script, '2024-09-16', 'EQ-IVERNOOK', proceeds, 'Add health care');
        keepCurrentWeights(script, '2024-09-16');
      });
    },
  },
  {
    plan: { id: 'TF-1006', client: 'Anneliese & Joost van Berkel', mandate: 'growth', baseCurrency: 'EUR', adviser: CASTELLANOS, email: 'vanberkel@example.org', locale: 'nl-NL' },
    shows: [
      "transfer_in of securities from another custodian (2023-04-17) valued at that day's market value, alongside a cash deposit",
      'joint account (ampersand in the name), account locale nl-NL',
    ],
    schedule: (schedule) => {
      schedule.on('2023-04-17', ({ sim, market }) => {
        const day = market.indexOfDate('2023-04-17');
        const sharesWorth = (id: string, value: number): number => Math.round(value / market.price(id, day));
        sim.transferIn(day, 'EQ-BREVANT', sharesWorth('EQ-BREVANT', 60_000), 'Transfer in from another custodian, portfolio of J. van Berkel');
        sim.transferIn(day, 'EQ-ESKERHOLM', sharesWorth('EQ-ESKERHOLM', 50_000), 'Transfer in from another custodian, portfolio of J. van Berkel');
        sim.transferIn(day, 'BD-ALDMARK-2036', 70_000, 'Transfer in from another custodian, portfolio of A. van Berkel');
        sim.transferIn(day, 'EQ-HALCREST', sharesWorth('EQ-HALCREST', 50_000), 'Transfer in from another custodian, portfolio of A. van Berkel');
        sim.deposit(day, 300_000, 'EUR', 'Initial cash deposit');
      });
      schedule.on('2023-04-19', (script) => {
        for (const [id, budget] of [
          ['FD-GREYWATER-GLEQ', 60_000], ['FD-NORTHGATE-EUEQ', 55_000], ['EQ-DALSEN', 35_000], ['EQ-SOLVENHOLT', 35_000],
          ['FD-FENNICK-PROP', 35_000], ['FD-LINDENHALL-CORP', 50_000],
        ] as const) {
          buyFor(script, '2023-04-19', id, budget, 'Initial investment');
        }
        keepCurrentWeights(script, '2023-04-19');
      });
      schedule.rebalanceEachJanuary(2024, 2026);
    },
  },
  {
    plan: { id: 'TF-1007', client: 'Sunita Raman', mandate: 'balanced', baseCurrency: 'EUR', adviser: RENNER, email: 'sunita.raman@example.org', locale: null },
    shows: ['large withdrawal inside 2026-Q3: holdings sold pro rata on 2026-08-18, about 40 % of the account paid out on 2026-08-20'],
    schedule: (schedule) => {
      openAccount(schedule, '2020-10-01', 1_100_000, [
        ['EQ-ALDERMOOR', 0.04], ['EQ-CORVANE', 0.04], ['EQ-DALSEN', 0.04], ['EQ-ESKERHOLM', 0.05], ['FD-GREYWATER-GLEQ', 0.1],
        ['FD-NORTHGATE-EUEQ', 0.06], ['EQ-IVERNOOK', 0.04], ['FD-ASHCOMBE-USEQ', 0.04],
        ['BD-ALDMARK-2031', 0.11], ['BD-VESTRIA-2029', 0.09], ['BD-ORMONDE-2028', 0.09], ['FD-LINDENHALL-GOV', 0.12],
        ['FD-FENNICK-PROP', 0.08],
      ], 0.1);
      schedule.rebalanceEachJanuary(2021, 2026);
      schedule.on('2026-08-18', ({ sim, market }) => {
        const saleDay = market.indexOfDate('2026-08-18');
        const payout = Math.round((0.4 * sim.value(saleDay)) / 1000) * 1000;
        // The sale covers the whole payout, so the account keeps its cash weight.
        if (!sim.raiseCash(saleDay, 'EUR', payout + sim.cashBalance('EUR'), 'pro-rata', 'Sale to fund the withdrawal')) {
          throw new Error('Internal error: the demo withdrawal could not be funded; please report this');
        }
        sim.withdraw(market.indexOfDate('2026-08-20'), payout, 'EUR', 'Withdrawal: purchase of a house');
      });
    },
  },
  {
    plan: { id: 'TF-1008', client: 'Lukas Brenner', mandate: 'balanced', baseCurrency: 'EUR', adviser: CASTELLANOS, email: 'lukas.brenner@example.org', locale: null },
    shows: ['account opened inside 2026-Q3: first deposit 2026-08-10, purchases 2026-08-12; only the since-inception window'],
    schedule: (schedule) => {
      schedule.on('2026-08-10', ({ sim, market }) => sim.deposit(market.indexOfDate('2026-08-10'), 500_000, 'EUR', 'Initial deposit'));
      schedule.on('2026-08-12', (script) => {
        for (const [id, weight] of [
          ['FD-GREYWATER-GLEQ', 0.2], ['FD-NORTHGATE-EUEQ', 0.12], ['EQ-BREVANT', 0.06], ['EQ-SOLVENHOLT', 0.05],
          ['FD-LINDENHALL-GOV', 0.2], ['FD-LINDENHALL-CORP', 0.12], ['BD-ALDMARK-2031', 0.1], ['FD-FENNICK-PROP', 0.08],
        ] as const) {
          buyFor(script, '2026-08-12', id, 500_000 * weight, 'Initial investment');
        }
      });
    },
  },
  {
    plan: { id: 'TF-1009', client: 'Chiara Montefiori', mandate: 'growth', baseCurrency: 'EUR', adviser: RENNER, email: 'chiara.montefiori@example.org', locale: null },
    shows: [
      `stale price: holds ${DEMO_STALE_INSTRUMENT}, whose last price is ${DEMO_STALE_LAST_DATE} (21 days before the period end; stale after 7)`,
      'a share listed on 2025-03-03 (EQ-VANTOR, short history filled by its proxy), Swiss-franc dividends with 35 % withholding tax',
    ],
    schedule: (schedule) => {
      openAccount(schedule, '2023-06-01', 480_000, [
        [DEMO_STALE_INSTRUMENT, 0.06], ['EQ-FENTURO', 0.08], ['EQ-DALSEN', 0.07], ['EQ-SOLVENHOLT', 0.07], ['FD-NORTHGATE-EUEQ', 0.12],
        ['FD-GREYWATER-GLEQ', 0.1], ['EQ-ALDERMOOR', 0.02], ['EQ-GLARNSTEIN', 0.06], ['EQ-FELSACHER', 0.05],
        ['FD-LINDENHALL-CORP', 0.1], ['BD-KESTREL-2030', 0.1], ['FD-FENNICK-PROP', 0.08],
      ], 0.09);
      schedule.rebalanceEachJanuary(2024, 2026);
      schedule.on('2025-04-14', (script) => {
        const proceeds = sellFraction(script, '2025-04-14', 'FD-NORTHGATE-EUEQ', 0.5, 'Switch into a new listing');
        buyFor(script, '2025-04-14', 'EQ-VANTOR', proceeds, 'Buy Vantor Grid Storage after its listing');
        keepCurrentWeights(script, '2025-04-14');
      });
    },
  },
  {
    plan: { id: 'TF-1010', client: 'Wendell Ashby', mandate: 'adventurous', baseCurrency: 'EUR', adviser: BLACKTHORN, email: null, locale: null },
    shows: ['no e-mail address (listed, not mailed)', 'max_position breach: a quarter of the account kept in one share (limit 15 %)'],
    schedule: (schedule) => {
      openAccount(schedule, '2024-02-05', 320_000, [
        ['EQ-HALCREST', 0.25], ['EQ-LUMENVALE', 0.08], ['FD-ASHCOMBE-USEQ', 0.1], ['FD-NORTHGATE-EUEQ', 0.1], ['FD-GREYWATER-GLEQ', 0.1],
        ['FD-PELLWORTH-EMEQ', 0.08], ['EQ-FENTURO', 0.07], ['EQ-DALSEN', 0.06], ['BD-KESTREL-2030', 0.07], ['FD-FENNICK-PROP', 0.04],
      ], 0.05);
      schedule.rebalanceEachJanuary(2025, 2026);
    },
  },
  {
    plan: { id: 'TF-1011', client: 'Ingrid Solheim', mandate: 'cautious', baseCurrency: 'EUR', adviser: CASTELLANOS, email: 'ingrid.solheim@example.org', locale: null },
    shows: [
      `reconciliation break: holdings.csv reports 25 fewer EQ-CORVANE shares than the transactions give`,
      'five-year history (first deposit 2020-08-03), bonds in three currencies',
    ],
    schedule: (schedule) => {
      openAccount(schedule, '2020-08-03', 2_000_000, [
        ['FD-MOSSGROVE-MM', 0.08], ['BD-ALDMARK-2031', 0.08], ['BD-VESTRIA-2029', 0.08], ['BD-ORMONDE-2028', 0.08], ['BD-ALDMARK-2036', 0.07],
        ['FD-LINDENHALL-GOV', 0.08], ['BD-KESTREL-2030', 0.06], ['BD-TRESSEL-2032', 0.06], ['BD-DUNMORE-2030', 0.05], ['BD-HALCREST-2030', 0.05],
        ['FD-GREYWATER-GLEQ', 0.06], ['FD-NORTHGATE-EUEQ', 0.06], ['EQ-CORVANE', 0.05], ['EQ-ESKERHOLM', 0.04], ['FD-FENNICK-PROP', 0.03],
      ], 0.07);
      schedule.rebalanceEachJanuary(2021, 2026);
    },
  },
  {
    plan: { id: 'TF-1012', client: 'Rafael Quintero Ibáñez', mandate: 'balanced', baseCurrency: 'EUR', adviser: RENNER, email: 'rafael.quintero@example.org', locale: 'es-ES' },
    shows: ['recent account (first deposit 2025-05-12): 1-year window, no 3- or 5-year window', 'account locale es-ES'],
    schedule: (schedule) => {
      openAccount(schedule, '2025-05-12', 650_000, [
        ['EQ-GLARNSTEIN', 0.06], ['EQ-FELSACHER', 0.06], ['EQ-VANTOR', 0.05], ['EQ-BREVANT', 0.06], ['FD-GREYWATER-GLEQ', 0.1],
        ['FD-ASHCOMBE-USEQ', 0.08], ['FD-LINDENHALL-CORP', 0.1], ['BD-ALDMARK-2036', 0.1], ['BD-KESTREL-2030', 0.08],
        ['FD-LINDENHALL-GOV', 0.1], ['FD-FENNICK-PROP', 0.08], ['FD-MOSSGROVE-MM', 0.05],
      ], 0.08);
      schedule.rebalanceEachJanuary(2026, 2026);
    },
  },
];

/** Runs one account's schedule in date order. */
function runSchedule(account: DemoAccount, script: Script): void {
  const actions: { dayIndex: number; order: number; action: Action }[] = [];
  const schedule: Schedule = {
    on: (date, action) => {
      actions.push({ dayIndex: script.market.indexOfDate(date), order: actions.length, action });
    },
    rebalanceEachJanuary: (firstYear, lastYear) => {
      for (let year = firstYear; year <= lastYear; year++) {
        const dayIndex = script.market.indexOf(businessDayOnOrAfter(dayOf(year, 1, 12)));
        actions.push({
          dayIndex,
          order: actions.length,
          action: (current) => current.sim.rebalance(dayIndex, current.targets, 0.01, current.cashReserve, `Yearly rebalancing ${year}`),
        });
      }
    },
  };
  account.schedule(schedule);
  actions.sort((left, right) => left.dayIndex - right.dayIndex || left.order - right.order);
  for (const { action } of actions) action(script);
}

/** The deliberate reconciliation break of the demo. */
export const DEMO_HOLDINGS_BREAK = { account: 'TF-1011', instrument: 'EQ-CORVANE', shortBy: 25 } as const;

// ---- writing -------------------------------------------------------------------------

/** Simulates the demo market and accounts; exposed for tests and the README. */
export function simulateDemo(): { market: Market; accounts: AccountSimulation[] } {
  const market = simulateMarket(DEMO_INSTRUMENTS, DEMO_FIRST_DATE, DEMO_LAST_DATE, DEMO_SEED);
  const lastIndex = market.days.length - 1;
  const accounts = DEMO_ACCOUNTS.map((account) => {
    const plan: AccountPlan = { ...account.plan, annualFee: mandateById(account.plan.mandate).annualFee };
    const sim = new AccountSimulation(plan, market, createRandom(DEMO_SEED, `account:${plan.id}`));
    runSchedule(account, { sim, market, targets: [], cashReserve: 0 });
    sim.finish(lastIndex);
    return sim;
  });
  return { market, accounts };
}

/** Writes the demo book (book.yaml, mandates.yaml, the six CSV files and README.md) into `dir`. */
export async function writeDemoBook(dir: string): Promise<void> {
  const { market, accounts } = simulateDemo();
  const header = 'Demo book of quarterline: an invented firm, invented clients and synthetic prices.\nGenerated by scripts/generate-demo.ts; edit the generator, not this file.';
  const writer = await BookWriter.create(dir, {
    bookYaml: yamlText(header, bookYamlObject(DEMO_FIRM, 'en-GB')),
    mandatesYaml: yamlText(header, mandatesYamlObject()),
    instruments: DEMO_INSTRUMENTS,
    market,
    withHoldings: true,
  });
  try {
    for (const sim of accounts) {
      const breaks: HoldingsBreak[] = [];
      if (sim.plan.id === DEMO_HOLDINGS_BREAK.account) {
        const derived = sim.quantity(DEMO_HOLDINGS_BREAK.instrument);
        if (derived <= DEMO_HOLDINGS_BREAK.shortBy) throw new Error('Internal error: the demo reconciliation break needs a larger position; please report this');
        breaks.push({ account: sim.plan.id, instrument: DEMO_HOLDINGS_BREAK.instrument, reportedQuantity: derived - DEMO_HOLDINGS_BREAK.shortBy });
      }
      await writer.addAccount(sim, null, DEMO_LAST_DATE, breaks);
    }
  } catch (error) {
    await writer.abandon();
    throw error;
  }
  await writer.close();
  await writeTextFile(path.join(dir, 'README.md'), demoReadme(market));
}

function demoReadme(market: Market): string {
  const rows = DEMO_ACCOUNTS.map((account) => {
    const mandate = mandateById(account.plan.mandate).label;
    return `| ${account.plan.id} | ${account.plan.client} | ${mandate} | ${account.plan.baseCurrency} | ${account.shows.join('; ')} |`;
  });
  return [
    '# Demo book',
    '',
    'Everything in this folder is invented: the firm, its clients and advisers, every',
    'instrument and index, and all prices and exchange rates (simulated with a fixed',
    `seed, ${DEMO_SEED}). Nothing here describes a real company, person or market.`,
    'The files are generated by `scripts/generate-demo.ts`; change the generator and',
    'run it again rather than editing them by hand.',
    '',
    `The reporting period is ${DEMO_PERIOD} (${DEMO_PERIOD_START} to ${DEMO_LAST_DATE}):`,
    '',
    '```',
    'quarterline build data/demo --period 2026-Q3',
    '```',
    '',
    '## What is in it',
    '',
    `- Daily prices (Monday to Friday, no holidays) from ${DEMO_FIRST_DATE} to ${DEMO_LAST_DATE}: ${market.days.length} business days for`,
    `  ${DEMO_HOLDABLE_INSTRUMENTS.length} instruments (shares, funds, and bonds quoted in percent of nominal with multiplier 0.01)`,
    `  in EUR, USD, GBP and CHF, and ${INDICES.length} total-return indices (asset-class proxies, benchmark components, and`,
    '  the cash index used as the risk-free rate).',
    '- fx.csv quotes only EUR/USD, EUR/GBP and EUR/CHF; every other pair is a cross via EUR.',
    '- Four mandates from Cautious to Adventurous, using all three shortfall bases',
    '  (average, cumulative, every_year).',
    '- Every account pays a quarterly management fee (`fee` rows on the last business day',
    '  of each quarter), receives dividends and coupons on the instruments it holds, and pays',
    '  withholding tax (`tax` rows, same day, same currency) on US-dollar (15 %) and',
    '  Swiss-franc (35 %) dividends. Trades carry a commission in `fees`; about half of them',
    '  also give `amount`. No cash balance ever goes below zero.',
    `- holdings.csv gives every account's positions on ${DEMO_LAST_DATE}; they agree with`,
    '  transactions.csv except for one deliberate break.',
    '',
    '## Accounts',
    '',
    '| account | client | mandate | base | demonstrates |',
    '|---|---|---|---|---|',
    ...rows,
    '',
  ].join('\n');
}
