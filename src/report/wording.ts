/**
 * Plain words for shortfall rules and mandate checks, with every number in
 * the client's locale. figures.json keeps its own locale-independent
 * `detail`; a statement words the same figures for the client, and falls
 * back to that detail when a check carries figures it does not know.
 */
import type { Check, ShortfallFigure } from '../analysis/figures.ts';
import type { Formatter } from './format.ts';

/** A percentage with as few decimals as the value needs (0.1 → "10%", 0.025 → "2.5%"), at most two. */
export function compactPercent(format: Formatter, value: number): string {
  const hundredths = Math.round(value * 10000);
  const digits = hundredths % 100 === 0 ? 0 : hundredths % 10 === 0 ? 1 : 2;
  return format.percent(value, { digits });
}

function years(format: Formatter, count: number): string {
  return count === 1 ? 'one year' : `${format.decimal(count, Number.isInteger(count) ? 0 : 1)} years`;
}

/** The event a shortfall rule guards against, in words: "a loss worse than 10% over one year". */
export function shortfallEventWords(format: Formatter, rule: Pick<ShortfallFigure, 'threshold' | 'horizon_years' | 'basis'>): string {
  const level = rule.threshold < 0
    ? `a loss worse than ${compactPercent(format, -rule.threshold)}`
    : `a return below ${compactPercent(format, rule.threshold)}`;
  const h = rule.horizon_years;
  if (h === 1) return `${level} over one year`;
  switch (rule.basis) {
    case 'average':
      return `${level} a year on average over ${years(format, h)}`;
    case 'cumulative':
      return `${level} in total over ${years(format, h)}`;
    case 'every_year':
      return `${level} in any single year of the next ${years(format, h)}`;
  }
}

/** The rule with its estimate and limit: "a loss worse than 10% over one year: 3.1% probability, limit 5%". */
export function shortfallRuleSentence(format: Formatter, rule: ShortfallFigure): string {
  return `${shortfallEventWords(format, rule)}: ${format.percent(rule.probability, { digits: 1 })} probability, limit ${compactPercent(format, 1 - rule.confidence)}`;
}

export type StatusWord = 'Within limits' | 'Outside limits' | 'Not assessed';

export function statusWord(status: Check['status']): StatusWord {
  return status === 'pass' ? 'Within limits' : status === 'breach' ? 'Outside limits' : 'Not assessed';
}

export interface CheckContext {
  readonly format: Formatter;
  /** Asset class id → label. */
  readonly classLabel: (id: string) => string;
  /** Instrument id → name (or the id when unknown). */
  readonly instrumentName: (id: string) => string;
  readonly shortfall: readonly ShortfallFigure[] | null;
}

/** The name of a check in plain words. */
export function checkName(id: string, context: Pick<CheckContext, 'classLabel'>): string {
  if (id.startsWith('allocation.')) return `Share of ${context.classLabel(id.slice('allocation.'.length))}`;
  if (id.startsWith('shortfall.')) {
    const index = Number(id.slice('shortfall.'.length));
    return Number.isInteger(index) ? `Shortfall rule ${index + 1}` : id;
  }
  switch (id) {
    case 'max_position': return 'Largest single holding';
    case 'max_volatility': return 'Expected volatility';
    case 'max_tracking_error': return 'Expected tracking error';
    case 'stale_prices': return 'Up-to-date prices';
    case 'negative_cash': return 'Cash balances';
    case 'reconciliation': return 'Agreement with the custodian';
    default: return id;
  }
}

type Record_ = Readonly<Record<string, unknown>>;

function num(record: Record_ | undefined, key: string): number | null {
  const value = record?.[key];
  return typeof value === 'number' && Number.isFinite(value) ? value : null;
}

function list(record: Record_ | undefined, key: string): Record_[] | null {
  const value = record?.[key];
  return Array.isArray(value) && value.every((item) => typeof item === 'object' && item !== null) ? (value as Record_[]) : null;
}

function text(record: Record_, key: string): string | null {
  const value = record[key];
  return typeof value === 'string' ? value : null;
}

/**
 * The figures behind a check, worded for the client in their locale; the
 * check's own detail when its figures are missing or of an unknown shape.
 */
export function checkFiguresWords(check: Check, context: CheckContext): string {
  const { format } = context;
  const figures = check.figures;
  if (check.status === 'n/a' || !figures) return sentence(check.detail);
  const id = check.id;
  if (id.startsWith('allocation.')) {
    const weight = num(figures, 'weight');
    const min = num(figures, 'min');
    const max = num(figures, 'max');
    if (weight !== null && min !== null && max !== null) {
      return `${format.percent(weight, { digits: 1 })} of the account; mandate range ${format.percent(min, { digits: 1 })} to ${format.percent(max, { digits: 1 })}.`;
    }
  } else if (id === 'max_position') {
    const limit = num(figures, 'limit');
    const over = list(figures, 'over');
    const largest = num(figures, 'largest');
    if (limit !== null && over !== null) {
      if (over.length > 0) {
        const named = over.map((row) => `${context.instrumentName(text(row, 'instrument') ?? '?')} ${format.percent(num(row, 'weight'), { digits: 1 })}`);
        return `${named.join('; ')}; limit ${format.percent(limit, { digits: 1 })} per holding.`;
      }
      return largest === null
        ? `No holdings; limit ${format.percent(limit, { digits: 1 })} per holding.`
        : `Largest holding ${format.percent(largest, { digits: 1 })} of the account; limit ${format.percent(limit, { digits: 1 })} per holding.`;
    }
  } else if (id === 'max_volatility' || id === 'max_tracking_error') {
    const value = num(figures, 'value');
    const limit = num(figures, 'limit');
    if (value !== null && limit !== null) {
      return `${format.percent(value)} a year (model estimate); limit ${format.percent(limit)}.`;
    }
  } else if (id.startsWith('shortfall.')) {
    const rule = context.shortfall?.[Number(id.slice('shortfall.'.length))];
    if (rule) return sentence(`${shortfallRuleSentence(context.format, rule)} (model estimate)`);
  } else if (id === 'stale_prices') {
    const days = num(figures, 'stale_after_days');
    const instruments = list(figures, 'instruments');
    if (days !== null && instruments !== null) {
      if (instruments.length === 0) return `Every holding has a price from the last ${format.integer(days)} days of the period.`;
      const named = instruments.map((row) => {
        const date = text(row, 'price_date');
        return `${context.instrumentName(text(row, 'instrument') ?? '?')}: last price ${date ? format.date(date) : 'unknown'}`;
      });
      return `Older than ${format.integer(days)} days: ${named.join('; ')}.`;
    }
  } else if (id === 'negative_cash') {
    const entries = Object.entries(figures).filter(([, value]) => typeof value === 'object' && value !== null) as Array<[string, Record_]>;
    if (entries.length === 0) return 'No cash balance fell below zero during the period.';
    const named = entries.map(([currency, row]) => {
      const date = text(row, 'date');
      return `${currency} cash fell to ${format.money(num(row, 'balance'), currency)}${date ? ` on ${format.date(date)}` : ''}`;
    });
    return `${named.join('; ')}.`;
  } else if (id === 'reconciliation') {
    const breaks = list(figures, 'breaks');
    if (breaks !== null) {
      if (breaks.length === 0) return 'Every position agrees with the custodian’s records at the period end.';
      const named = breaks.map((row) => `${context.instrumentName(text(row, 'instrument') ?? '?')}: our records ${format.quantity(num(row, 'ours'))}, custodian ${format.quantity(num(row, 'custodian'))}`);
      return `${named.join('; ')}.`;
    }
  }
  return sentence(check.detail);
}

/** A text with a capital first letter and a final full stop. */
export function sentence(text: string): string {
  const trimmed = text.trim();
  if (trimmed.length === 0) return trimmed;
  const first = trimmed.charAt(0).toUpperCase() + trimmed.slice(1);
  return /[.!?]$/.test(first) ? first : `${first}.`;
}
