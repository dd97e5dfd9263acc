/**
 * The view model of one client statement: what is shown, in which order,
 * formatted in the client's locale. Pure: figures and settings in, plain
 * strings and chart data out; the templates only lay it out.
 *
 * A figure that is null is shown as "not available" with a numbered note
 * that gives the reason (from figures.notes where it names one).
 */
import type { Check, Figures, HoldingFigure } from '../analysis/figures.ts';
import type { WindowFigures } from '../analysis/performance.ts';
import type { WindowId } from '../analysis/periods.ts';
import type { Firm } from '../book/types.ts';
import { cautionsFor } from './cautions.ts';
import {
  type ChartData,
  allocationChart,
  distributionChart,
  growthChart,
  riskReturnChart,
} from './charts.ts';
import { type Formatter, NOT_APPLICABLE, NOT_AVAILABLE, formatterFor, nextIsoDate } from './format.ts';
import {
  checkFiguresWords,
  checkName,
  compactPercent,
  sentence,
  shortfallEventWords,
  statusWord,
} from './wording.ts';

/** A shown figure: its text and, when it is not available, the number of the note that says why. */
export interface Shown {
  readonly text: string;
  readonly note: number | null;
  /** 'up' / 'down' for signed figures (returns, differences), for colour; '' otherwise. */
  readonly tone: 'up' | 'down' | '';
}

export interface Footnote {
  readonly number: number;
  readonly text: string;
}

/** Numbered reasons for figures that are not available, per section. */
class Footnotes {
  readonly #texts: string[] = [];

  ref(reason: string): number {
    const text = plainNote(reason);
    const existing = this.#texts.indexOf(text);
    if (existing >= 0) return existing + 1;
    this.#texts.push(text);
    return this.#texts.length;
  }

  list(): Footnote[] {
    return this.#texts.map((text, i) => ({ number: i + 1, text }));
  }
}

export interface LabelValue {
  readonly label: string;
  readonly value: Shown;
  readonly hint?: string;
}

export interface WindowRow {
  readonly id: WindowId;
  readonly label: string;
  readonly range: string;
  readonly annualised: boolean;
  /** Set when the whole window is not available (it starts before the account existed). */
  readonly unavailable: Shown | null;
  readonly cells: readonly Shown[];
}

export interface HoldingRow {
  readonly name: string;
  readonly instrument: string | null;
  readonly quantity: string;
  readonly price: string;
  readonly priceNote: string | null;
  readonly currency: string;
  readonly value: Shown;
  readonly weight: Shown;
  readonly stale: boolean;
}

export interface HoldingGroup {
  readonly label: string;
  readonly rows: readonly HoldingRow[];
  readonly value: Shown;
  readonly weight: Shown;
}

export interface ActivityRow {
  readonly date: string;
  readonly type: string;
  readonly description: string;
  readonly note: string;
  readonly quantity: string;
  readonly price: string;
  readonly fees: string;
  readonly amount: Shown;
  readonly currency: string;
}

export interface ShortfallRow {
  readonly number: number;
  readonly event: string;
  readonly sentence: string;
  readonly probability: string;
  readonly limit: string;
  readonly lognormal: string;
  readonly status: string;
  readonly statusClass: 'pass' | 'breach';
}

export interface CheckRow {
  readonly name: string;
  readonly status: string;
  readonly statusClass: 'pass' | 'breach' | 'na';
  readonly figures: string;
}

export interface ShiftRow {
  readonly label: string;
  readonly current: Shown;
  readonly model: string;
  readonly shift: string;
  readonly range: string;
  readonly tone: 'up' | 'down' | '';
}

export interface StatementView {
  /** Account id: the page's folder. */
  readonly account: string;
  /** Output path of the page, relative to the run folder. */
  readonly path: string;
  /** Relative link from the page to the run's shared assets. */
  readonly assets: string;
  readonly lang: string;
  readonly locale: string;
  readonly title: string;
  readonly firm: {
    readonly name: string;
    readonly contact: readonly string[];
    readonly regulatoryNote: string | null;
  };
  readonly client: string;
  readonly period: { readonly label: string; readonly range: string; readonly end: string };
  readonly facts: readonly LabelValue[];
  readonly glance: {
    readonly start: LabelValue;
    readonly end: LabelValue;
    readonly movements: readonly LabelValue[];
    readonly returnWindow: string;
    readonly returnFigures: readonly LabelValue[];
    readonly returnSentence: string;
    readonly breaches: number;
    readonly breachSentence: string;
    readonly footnotes: readonly Footnote[];
  };
  readonly performance: {
    readonly columns: readonly string[];
    readonly rows: readonly WindowRow[];
    readonly growth: ChartData | null;
    readonly growthUnavailable: string | null;
    readonly realised: {
      readonly caption: string;
      readonly rows: readonly LabelValue[];
    } | null;
    readonly realisedUnavailable: string | null;
    readonly footnotes: readonly Footnote[];
  };
  readonly holdings: {
    readonly currency: string;
    readonly groups: readonly HoldingGroup[];
    readonly total: Shown;
    /** Sum of the weights (1, or null when the account has no weights); formatted by the template's percent filter. */
    readonly totalWeight: number | null;
    readonly staleNote: string | null;
    readonly chart: ChartData | null;
    readonly footnotes: readonly Footnote[];
  };
  readonly activity: {
    readonly rows: readonly ActivityRow[];
    readonly empty: string;
  };
  readonly risk: {
    readonly expected: readonly LabelValue[] | null;
    readonly expectedUnavailable: string | null;
    readonly benchmarkSentence: string | null;
    readonly shortfall: readonly ShortfallRow[];
    readonly shortfallUnavailable: string | null;
    readonly riskReturn: ChartData | null;
    readonly distribution: ChartData | null;
  };
  readonly review: {
    readonly checks: readonly CheckRow[];
    readonly breaches: number;
    readonly shift: {
      readonly feasible: boolean;
      readonly intro: string;
      readonly rows: readonly ShiftRow[];
      readonly summary: string;
      readonly model: readonly LabelValue[];
    } | null;
    readonly shiftUnavailable: string | null;
    readonly footnotes: readonly Footnote[];
  };
  readonly method: {
    readonly returnMethod: 'daily' | 'modified-dietz';
    readonly benchmark: string;
    readonly realisedMonths: string;
    readonly notes: readonly string[];
  };
  readonly important: {
    readonly cautions: readonly string[];
  };
}

/** The firm-wide inputs of a statement (from book.yaml). */
export interface StatementSettings {
  readonly firm: Firm;
  readonly cautions: readonly string[] | null;
}

/** Window ids at the start of notes (`1y: the MWR is unavailable …`) in words. */
const NOTE_PREFIXES: ReadonlyArray<readonly [string, string]> = [
  ['period:', 'This period:'],
  ['ytd:', 'Year to date:'],
  ['1y:', '1 year:'],
  ['3y:', '3 years:'],
  ['5y:', '5 years:'],
  ['since_inception:', 'Since inception:'],
];

/** A note of figures.json as a sentence for the client: window ids in words, capital, full stop. */
export function plainNote(note: string): string {
  const prefix = NOTE_PREFIXES.find(([id]) => note.startsWith(id));
  return sentence(prefix ? `${prefix[1]}${note.slice(prefix[0].length)}` : note);
}

/** The first note that starts with one of the prefixes (case-insensitive, tried in order), or null. */
function noteStartingWith(notes: readonly string[], prefixes: readonly string[]): string | null {
  for (const prefix of prefixes) {
    const found = notes.find((note) => note.toLowerCase().startsWith(prefix.toLowerCase()));
    if (found) return found;
  }
  return null;
}

const WINDOW_LABELS: Readonly<Record<WindowId, string>> = {
  period: 'This period',
  ytd: 'Year to date',
  '1y': '1 year',
  '3y': '3 years',
  '5y': '5 years',
  since_inception: 'Since inception',
};

/** Keys of WindowFigures shown in the performance table, their column heads and note labels. */
const WINDOW_COLUMNS: ReadonlyArray<{ readonly key: keyof WindowFigures & ('twr_net' | 'twr_gross' | 'mwr' | 'benchmark' | 'excess_arithmetic'); readonly head: string; readonly noteLabel: string }> = [
  { key: 'twr_net', head: 'Your return after fees', noteLabel: 'net TWR' },
  { key: 'twr_gross', head: 'Before fees', noteLabel: 'gross TWR' },
  { key: 'mwr', head: 'Money-weighted', noteLabel: 'money-weighted return' },
  { key: 'benchmark', head: 'Benchmark', noteLabel: 'benchmark return' },
  { key: 'excess_arithmetic', head: 'Difference', noteLabel: 'net TWR' },
];

const ACTIVITY_TYPES: Readonly<Record<string, string>> = {
  deposit: 'Deposit',
  withdrawal: 'Withdrawal',
  transfer_in: 'Transfer in',
  transfer_out: 'Transfer out',
  buy: 'Purchase',
  sell: 'Sale',
  dividend: 'Dividend',
  interest: 'Interest',
  fee: 'Fee',
  tax: 'Tax',
};

const tone = (value: number | null): 'up' | 'down' | '' =>
  value === null || !Number.isFinite(value) || value === 0 ? '' : value > 0 ? 'up' : 'down';

function shown(text: string, note: number | null = null, toneOf: 'up' | 'down' | '' = ''): Shown {
  return { text, note, tone: toneOf };
}

/** The title of a statement (HTML title, PDF title): "Statement 2026-Q3: Client, account ID". */
export function statementTitle(figures: Pick<Figures, 'period' | 'client' | 'account'>): string {
  return `Statement ${figures.period.label}: ${figures.client}, account ${figures.account}`;
}

/** Builds the view model of one statement. */
export function statementView(figures: Figures, settings: StatementSettings): StatementView {
  const format = formatterFor(figures.locale);
  const currency = figures.base_currency;
  const notes = figures.notes;
  const instrumentNames = new Map(figures.holdings.map((row) => [row.instrument, row.name]));
  const classLabels = new Map(figures.allocation.map((row) => [row.asset_class, row.label]));
  const classLabel = (id: string): string => classLabels.get(id) ?? id;
  const instrumentName = (id: string): string => instrumentNames.get(id) ?? id;
  const periodFirstDay = nextIsoDate(figures.period.start);
  const periodRange = `${format.date(periodFirstDay)} to ${format.date(figures.period.end)}`;
  const breaches = figures.checks.filter((check) => check.status === 'breach').length;

  /** A figure, or "not available" with a note giving the reason. */
  const figure = (footnotes: Footnotes, value: number | null, show: (value: number) => string, reason: () => string, signed = false): Shown => {
    if (value === null || !Number.isFinite(value)) return shown(NOT_AVAILABLE, footnotes.ref(reason()));
    return shown(show(value), null, signed ? tone(value) : '');
  };

  // --- At a glance -------------------------------------------------------
  const glanceNotes = new Footnotes();
  const value = figures.value;
  const market = value.investment_result - value.income + value.fees + value.taxes;
  const money = (amount: number, signed = false): Shown => figure(glanceNotes, amount, (v) => format.money(v, currency, { signed }), () => 'this value could not be computed', signed);
  const periodWindow = figures.returns.period;
  const headlineWindow: { id: WindowId; figures: WindowFigures } | null = periodWindow
    ? { id: 'period', figures: periodWindow }
    : figures.returns.since_inception ? { id: 'since_inception', figures: figures.returns.since_inception } : null;
  const windowReason = (id: WindowId, ...labels: string[]) => (): string =>
    noteStartingWith(notes, [...labels.map((label) => `${id}: the ${label}`), `${id}:`, 'Net-of-fee time-weighted', 'Gross-of-fee time-weighted'])
      ?? `the ${labels.join(' or ')} could not be computed for this window`;
  const headline = headlineWindow?.figures ?? null;
  const returnFigures: LabelValue[] = headline
    ? [
      { label: 'Your return after fees', value: figure(glanceNotes, headline.twr_net, (v) => format.percent(v, { signed: true }), windowReason(headlineWindow!.id, 'net TWR'), true) },
      { label: 'Benchmark', value: figure(glanceNotes, headline.benchmark, (v) => format.percent(v, { signed: true }), windowReason(headlineWindow!.id, 'benchmark return'), true) },
      { label: 'Difference', value: figure(glanceNotes, headline.excess_arithmetic, (v) => format.percentagePoints(v, 2), windowReason(headlineWindow!.id, 'net TWR', 'benchmark return'), true) },
    ]
    : [{ label: 'Your return after fees', value: shown(NOT_AVAILABLE, glanceNotes.ref(noteStartingWith(notes, ['period:', 'Net-of-fee']) ?? 'no return window could be computed for this account')) }];
  const returnWindow = headlineWindow
    ? headlineWindow.id === 'period'
      ? `This period, ${periodRange}`
      : `Since inception on ${format.date(figures.inception)} (the account opened during this period)`
    : 'This period';
  let returnSentence = '';
  if (headline && headline.twr_net !== null && headline.benchmark !== null && headline.excess_arithmetic !== null) {
    const diff = headline.excess_arithmetic;
    returnSentence = Math.abs(diff) < 0.00005
      ? 'Your account returned the same as its benchmark.'
      : `Your account returned ${format.percentagePoints(Math.abs(diff), 2).replace(/^\+/, '')} ${diff > 0 ? 'more' : 'less'} than its benchmark${headline.annualised ? ' a year' : ''}.`;
  }

  const facts: LabelValue[] = [
    { label: 'Client', value: shown(figures.client) },
    { label: 'Account', value: shown(figures.account) },
    { label: 'Mandate', value: shown(figures.mandate_label) },
    { label: 'Reporting currency', value: shown(currency) },
    { label: 'Account opened', value: shown(format.date(figures.inception)) },
    ...(figures.adviser ? [{ label: 'Your adviser', value: shown(figures.adviser) }] : []),
  ];

  // --- Performance -------------------------------------------------------
  const performanceNotes = new Footnotes();
  const rows: WindowRow[] = [];
  for (const id of ['period', 'ytd', '1y', '3y', '5y', 'since_inception'] as const) {
    const window = figures.returns[id];
    const label = id === 'period' ? `This period (${figures.period.label})` : WINDOW_LABELS[id];
    if (!window) {
      const reason = id === 'since_inception'
        ? noteStartingWith(notes, ['since_inception:', 'Net-of-fee']) ?? 'the since-inception return could not be computed'
        : `the account opened on ${format.date(figures.inception)}, after this window began`;
      rows.push({ id, label, range: '', annualised: false, unavailable: shown(NOT_AVAILABLE, performanceNotes.ref(reason)), cells: [] });
      continue;
    }
    const cells = WINDOW_COLUMNS.map((column) => {
      const raw = window[column.key];
      const show = column.key === 'excess_arithmetic'
        ? (v: number) => format.percentagePoints(v, 2)
        : (v: number) => format.percent(v, { signed: true });
      const labels = column.key === 'excess_arithmetic' ? ['net TWR', 'benchmark return'] : [column.noteLabel];
      return figure(performanceNotes, raw, show, windowReason(id, ...labels), true);
    });
    rows.push({
      id,
      label,
      range: `${format.dateShort(nextIsoDate(window.start))} – ${format.dateShort(window.end)}`,
      annualised: window.annualised,
      unavailable: null,
      cells,
    });
  }
  const growth = growthChart(figures, format);
  const growthUnavailable = growth
    ? null
    : sentence(noteStartingWith(notes, ['The daily net return index', 'Net-of-fee']) ?? 'The growth chart needs at least one month-end since inception; there is none yet');

  const realisedRisk = figures.realised_risk;
  const realisedNotes = performanceNotes;
  const realised = realisedRisk
    ? {
      caption: `Measured on the ${format.integer(realisedRisk.months)} complete months from ${format.month(realisedRisk.first_month)} to ${format.month(realisedRisk.last_month)}, net of fees.`,
      rows: [
        { label: 'Volatility (how much monthly returns varied, a year)', value: figure(realisedNotes, realisedRisk.volatility, (v) => format.percent(v), () => 'not computed') },
        { label: 'Tracking error (how far returns strayed from the benchmark, a year)', value: figure(realisedNotes, realisedRisk.tracking_error, (v) => format.percent(v), () => noteStartingWith(notes, ['Realised tracking error']) ?? 'the benchmark returns of these months are not available') },
        { label: 'Information ratio (difference from the benchmark per unit of tracking error)', value: figure(realisedNotes, realisedRisk.information_ratio, (v) => format.decimal(v, 2), () => noteStartingWith(notes, ['Realised tracking error']) ?? 'the benchmark returns of these months are not available') },
        { label: 'Sharpe ratio (return above cash per unit of volatility)', value: figure(realisedNotes, realisedRisk.sharpe, (v) => format.decimal(v, 2), () => noteStartingWith(notes, ['The Sharpe ratio']) ?? 'the risk-free returns of these months are not available') },
        { label: 'Largest fall from a peak since inception (maximum drawdown)', value: figure(realisedNotes, realisedRisk.max_drawdown, (v) => format.percent(v), () => 'not computed') },
      ],
    }
    : null;
  const realisedUnavailable = realisedRisk ? null : sentence(noteStartingWith(notes, ['Realised risk']) ?? 'Realised risk could not be computed for this account');

  // --- Holdings ----------------------------------------------------------
  const holdingNotes = new Footnotes();
  const noWeightReason = (): string => 'the account has no positive value at the period end, so it has no weights';
  const holdingRow = (row: HoldingFigure): HoldingRow => ({
    name: row.name,
    instrument: row.kind === 'cash' ? null : row.instrument,
    quantity: row.kind === 'cash' ? format.amount(row.quantity) : format.quantity(row.quantity),
    price: row.kind === 'cash' ? NOT_APPLICABLE : format.price(row.price),
    priceNote: row.stale ? `last price ${format.dateShort(row.price_date)}` : null,
    currency: row.currency,
    value: figure(holdingNotes, row.value, (v) => format.amount(v), () => 'the value could not be computed'),
    weight: figure(holdingNotes, row.weight, (v) => format.percent(v, { digits: 1 }), noWeightReason),
    stale: row.stale,
  });
  const classOrder = [...figures.allocation.map((row) => row.asset_class)];
  for (const row of figures.holdings) if (!classOrder.includes(row.asset_class)) classOrder.push(row.asset_class);
  const groups: HoldingGroup[] = classOrder
    .map((id) => {
      const members = figures.holdings.filter((row) => row.asset_class === id);
      const groupValue = members.reduce((sum, row) => sum + row.value, 0);
      const allocation = figures.allocation.find((row) => row.asset_class === id);
      const weights = members.map((row) => row.weight);
      const groupWeight = allocation?.weight ?? (weights.every((w): w is number => w !== null) ? weights.reduce((s, w) => s + w, 0) : null);
      return {
        label: classLabel(id),
        rows: members.map(holdingRow),
        value: figure(holdingNotes, groupValue, (v) => format.amount(v), () => 'not computed'),
        weight: figure(holdingNotes, groupWeight, (v) => format.percent(v, { digits: 1 }), noWeightReason),
      };
    })
    .filter((group) => group.rows.length > 0);
  const staleCount = figures.holdings.filter((row) => row.stale).length;
  const staleCheck = figures.checks.find((check) => check.id === 'stale_prices');
  const staleDays = typeof staleCheck?.figures?.['stale_after_days'] === 'number' ? staleCheck.figures['stale_after_days'] : null;

  // --- Activity ----------------------------------------------------------
  const activityTypesWithUnits = new Set(['buy', 'sell', 'transfer_in', 'transfer_out']);
  const activityRows: ActivityRow[] = figures.activity.map((row) => {
    const withUnits = activityTypesWithUnits.has(row.type) && row.instrument !== null;
    return {
      date: format.dateShort(row.date),
      type: ACTIVITY_TYPES[row.type] ?? row.type,
      description: row.instrument ? instrumentName(row.instrument) : '',
      note: row.note,
      quantity: withUnits && row.quantity !== null && row.quantity !== 0 ? format.quantity(row.quantity) : NOT_APPLICABLE,
      price: withUnits && row.price !== null ? format.price(row.price) : NOT_APPLICABLE,
      fees: row.fees !== null && row.fees !== 0 ? format.amount(row.fees) : NOT_APPLICABLE,
      amount: Number.isFinite(row.amount) ? shown(format.amount(row.amount, { signed: true }), null, tone(row.amount)) : shown(NOT_AVAILABLE),
      currency: row.currency,
    };
  });

  // --- Risk --------------------------------------------------------------
  const expectedRisk = figures.expected_risk;
  const p95 = format.percent(0.95, { digits: 0 });
  const p5 = format.percent(0.05, { digits: 0 });
  const expectedReason = noteStartingWith(notes, ['Expected risk is unavailable']);
  const expected: LabelValue[] | null = expectedRisk
    ? [
      { label: 'Expected return (estimate)', value: shown(`${format.percent(expectedRisk.expected_return)} a year`), hint: 'The model’s central estimate for the coming year, not a promise.' },
      { label: 'Expected volatility (estimate)', value: shown(`${format.percent(expectedRisk.volatility)} a year`), hint: 'How widely yearly returns could spread around that estimate.' },
      { label: 'Expected tracking error (estimate)', value: shown(`${format.percent(expectedRisk.tracking_error)} a year`), hint: 'How far your return could stray from the benchmark’s in a year.' },
      { label: `Value at risk, ${p95}, one year (estimate)`, value: shown(`a loss of ${format.percent(expectedRisk.var95_1y)}`), hint: `The model puts the chance of losing this much or more in a year at ${p5}, about one year in twenty.` },
      { label: `Expected shortfall, ${p95}, one year (estimate)`, value: shown(`a loss of ${format.percent(expectedRisk.cvar95_1y)}`), hint: 'The average loss in that worst one year in twenty, under the model.' },
    ]
    : null;
  const benchmarkSentence = expectedRisk && figures.benchmark.expected_return !== null && figures.benchmark.volatility !== null
    ? `For comparison, the model estimates the benchmark’s return at ${format.percent(figures.benchmark.expected_return)} a year with a volatility of ${format.percent(figures.benchmark.volatility)}.`
    : null;
  const shortfallRows: ShortfallRow[] = (figures.shortfall ?? []).map((rule, i) => ({
    number: i + 1,
    event: sentence(shortfallEventWords(format, rule)),
    sentence: sentence(`${shortfallEventWords(format, rule)}: ${format.percent(rule.probability, { digits: 1 })} probability, limit ${compactPercent(format, 1 - rule.confidence)}`),
    probability: format.percent(rule.probability, { digits: 1 }),
    limit: compactPercent(format, 1 - rule.confidence),
    lognormal: format.percent(rule.probability_lognormal, { digits: 1 }),
    status: rule.holds ? 'Within limit' : 'Outside limit',
    statusClass: rule.holds ? 'pass' : 'breach',
  }));

  // --- Mandate review ----------------------------------------------------
  const reviewNotes = new Footnotes();
  const checkContext = { format, classLabel, instrumentName, shortfall: figures.shortfall };
  const checkRows: CheckRow[] = orderChecks(figures.checks).map((check) => ({
    name: checkName(check.id, checkContext),
    status: statusWord(check.status),
    statusClass: check.status === 'n/a' ? 'na' : check.status,
    figures: checkFiguresWords(check, checkContext),
  }));
  const mix = figures.optimal_mix;
  const shift = mix ? shiftView(figures, mix, format, classLabel, reviewNotes) : null;
  const shiftUnavailable = mix
    ? null
    : sentence(noteStartingWith(notes, ['The optimal mix is unavailable', 'Expected risk is unavailable']) ?? 'The model mix could not be computed for this account');

  // --- Method and important information ----------------------------------
  const benchmarkWords = figures.benchmark.components.length > 0
    ? figures.benchmark.components.map((component) => `${component.name} ${format.percent(component.weight, { digits: 0 })}`).join(', ')
    : 'no components';

  const firm = settings.firm;
  const contact = [firm.address, firm.email, firm.phone].filter((line): line is string => line !== null && line.trim() !== '');

  return {
    account: figures.account,
    path: `accounts/${figures.account}/index.html`,
    assets: '../../assets/',
    lang: 'en',
    locale: format.locale,
    title: statementTitle(figures),
    firm: { name: firm.name, contact, regulatoryNote: firm.regulatoryNote },
    client: figures.client,
    period: { label: figures.period.label, range: periodRange, end: format.date(figures.period.end) },
    facts,
    glance: {
      start: { label: `Value at the close of ${format.date(figures.period.start)}`, value: money(value.start) },
      end: { label: `Value at the close of ${format.date(figures.period.end)}`, value: money(value.end) },
      movements: [
        { label: 'Money paid in less money taken out', value: money(value.net_external_flows, true) },
        { label: 'Income: dividends and interest', value: money(value.income, true) },
        { label: 'Fees', value: money(-value.fees, true) },
        { label: 'Taxes', value: money(-value.taxes, true) },
        { label: 'Market movement (prices and exchange rates)', value: money(market, true) },
      ],
      returnWindow,
      returnFigures,
      returnSentence,
      breaches,
      breachSentence: breachSentence(breaches, figures.checks.filter((check) => check.status === 'n/a').length, format),
      footnotes: glanceNotes.list(),
    },
    performance: {
      columns: WINDOW_COLUMNS.map((column) => column.head),
      rows,
      growth,
      growthUnavailable,
      realised,
      realisedUnavailable,
      footnotes: performanceNotes.list(),
    },
    holdings: {
      currency,
      groups,
      total: figure(holdingNotes, value.end, (v) => format.amount(v), () => 'not computed'),
      totalWeight: figures.holdings.every((row) => row.weight !== null) && figures.holdings.length > 0
        ? figures.holdings.reduce((sum, row) => sum + row.weight!, 0)
        : null,
      staleNote: staleCount > 0
        ? `Marked “old price”: no price newer than ${staleDays === null ? 'the allowed age' : `${format.integer(staleDays)} days`} before the period end; the holding is valued at its last price, shown beside it.`
        : null,
      chart: allocationChart(figures, format),
      footnotes: holdingNotes.list(),
    },
    activity: {
      rows: activityRows,
      empty: 'There were no transactions in this period.',
    },
    risk: {
      expected,
      expectedUnavailable: expectedRisk ? null : sentence(expectedReason ?? 'Expected risk could not be computed for this account'),
      benchmarkSentence,
      shortfall: shortfallRows,
      shortfallUnavailable: figures.shortfall === null ? sentence(expectedReason ?? 'The shortfall probabilities could not be computed for this account') : null,
      riskReturn: riskReturnChart(figures, format),
      distribution: distributionChart(figures, format),
    },
    review: {
      checks: checkRows,
      breaches,
      shift,
      shiftUnavailable,
      footnotes: reviewNotes.list(),
    },
    method: {
      returnMethod: figures.return_method,
      benchmark: benchmarkWords,
      realisedMonths: realisedRisk
        ? `the last ${format.integer(realisedRisk.months)} complete months`
        : 'up to the last 36 complete months, once there are at least 12',
      notes: notes.map(plainNote),
    },
    important: {
      cautions: cautionsFor(settings.cautions),
    },
  };
}

/** What the checks found, in one sentence for the first page. */
function breachSentence(breaches: number, notAssessed: number, format: Formatter): string {
  const count = (n: number): string => (n === 1 ? 'one' : format.integer(n));
  if (breaches > 0) {
    return `${breaches === 1 ? 'One check of your mandate is' : `${format.integer(breaches)} checks of your mandate are`} outside ${breaches === 1 ? 'its limit' : 'their limits'}; see “Mandate review”.`;
  }
  if (notAssessed > 0) return `No check of your mandate is outside its limits; ${count(notAssessed)} could not be assessed.`;
  return 'Every check of your mandate is within its limits.';
}

/** Checks in the order a reader expects: allocation, positions, risk, rules, then book-keeping. */
function orderChecks(checks: readonly Check[]): Check[] {
  const rank = (id: string): number => {
    if (id.startsWith('allocation.')) return 0;
    if (id === 'max_position') return 1;
    if (id === 'max_volatility') return 2;
    if (id === 'max_tracking_error') return 3;
    if (id.startsWith('shortfall.')) return 4;
    return 5;
  };
  return checks.map((check, index) => ({ check, index }))
    .sort((a, b) => rank(a.check.id) - rank(b.check.id) || a.index - b.index)
    .map((entry) => entry.check);
}

function shiftView(
  figures: Figures,
  mix: NonNullable<Figures['optimal_mix']>,
  format: Formatter,
  classLabel: (id: string) => string,
  footnotes: Footnotes,
): NonNullable<StatementView['review']['shift']> {
  const ids = [...new Set([...figures.allocation.map((row) => row.asset_class), ...Object.keys(mix.weights)])];
  const rows: ShiftRow[] = [];
  const moves: Array<{ label: string; change: number }> = [];
  for (const id of ids) {
    const allocation = figures.allocation.find((row) => row.asset_class === id);
    const current = allocation?.weight ?? null;
    const model = mix.weights[id] ?? 0;
    const change = current === null ? null : model - current;
    if (change !== null && Math.abs(change) >= 0.005) moves.push({ label: classLabel(id), change });
    rows.push({
      label: classLabel(id),
      current: current === null
        ? shown(NOT_AVAILABLE, footnotes.ref('the account has no positive value at the period end, so it has no weights'))
        : shown(format.percent(current, { digits: 1 })),
      model: format.percent(model, { digits: 1 }),
      shift: change === null ? NOT_AVAILABLE : format.percentagePoints(change, 1),
      range: allocation ? `${format.percent(allocation.min, { digits: 0 })} to ${format.percent(allocation.max, { digits: 0 })}` : NOT_APPLICABLE,
      tone: tone(change),
    });
  }
  const more = moves.filter((move) => move.change > 0).map((move) => `${move.label} (${format.percentagePoints(move.change, 1)})`);
  const less = moves.filter((move) => move.change < 0).map((move) => `${move.label} (${format.percentagePoints(move.change, 1)})`);
  const parts = [more.length > 0 ? `more ${joinWords(more)}` : null, less.length > 0 ? `less ${joinWords(less)}` : null].filter((part): part is string => part !== null);
  const summary = parts.length === 0
    ? 'The model mix is close to your current mix; there is no shift to discuss.'
    : `Compared with your current mix, the model mix holds ${parts.join(' and ')}. A topic to discuss with your adviser, who will weigh it against your circumstances, costs and taxes; it is not an instruction to trade.`;
  const current = figures.expected_risk;
  return {
    feasible: mix.feasible,
    intro: mix.feasible
      ? 'The model mix is the asset-class mix our model rates best for your mandate: the highest expected return for the risk your mandate accepts, within its ranges and shortfall rules. It is built from estimates and is not a recommendation.'
      : 'No mix within your mandate’s ranges meets every one of its rules under the model. The mix shown is the one that comes closest to the shortfall rules; it does not meet them all.',
    rows,
    summary,
    model: [
      { label: 'Expected return (estimate)', value: shown(`${current ? format.percent(current.expected_return) : NOT_AVAILABLE} now; ${format.percent(mix.expected_return)} with the model mix`) },
      { label: 'Expected volatility (estimate)', value: shown(`${current ? format.percent(current.volatility) : NOT_AVAILABLE} now; ${format.percent(mix.volatility)} with the model mix`) },
    ],
  };
}

function joinWords(items: readonly string[]): string {
  if (items.length <= 1) return items.join('');
  return `${items.slice(0, -1).join(', ')} and ${items[items.length - 1]}`;
}
