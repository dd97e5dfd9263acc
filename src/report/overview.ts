/**
 * The view model of the adviser overview of a run: every account with its
 * status, headline figures, breaches and links; failed accounts with their
 * errors; the run's timings. Figures are formatted in the firm's locale.
 */
import type { AccountOutcome } from '../run/build.ts';
import { NOT_AVAILABLE, formatterFor, nextIsoDate } from './format.ts';

export interface OverviewRow {
  readonly account: string;
  readonly client: string;
  readonly mandate: string;
  readonly status: string;
  readonly statusClass: 'reported' | 'breach' | 'failed';
  readonly value: string;
  readonly currency: string;
  readonly periodReturn: string;
  readonly benchmark: string;
  readonly difference: string;
  readonly differenceTone: 'up' | 'down' | '';
  readonly breaches: number;
  readonly breachNames: string;
  /** Links relative to the overview; null where the file does not exist. */
  readonly links: { readonly html: string | null; readonly pdf: string | null; readonly figures: string | null };
  /** 'printed', 'not printed', 'failed' or 'no statement'. */
  readonly pdfStatus: string;
  /** The print error when pdfStatus is 'failed'. */
  readonly pdfError: string;
  readonly errors: readonly string[];
  /** Raw values for the optional column sorting (data-sort attributes). */
  readonly sort: { readonly value: string; readonly periodReturn: string; readonly benchmark: string; readonly difference: string };
}

export interface OverviewView {
  readonly lang: string;
  readonly title: string;
  readonly firm: string;
  readonly period: { readonly label: string; readonly range: string };
  readonly counts: readonly { readonly label: string; readonly value: string; readonly tone: '' | 'breach' | 'failed' }[];
  readonly reported: readonly OverviewRow[];
  readonly failed: readonly OverviewRow[];
  readonly timings: readonly { readonly label: string; readonly value: string }[];
  readonly warnings: readonly string[];
}

/** The PDF state of an account: printed, failed (with the error), or not printed in this run. */
export type PdfState = { readonly ok: true } | { readonly ok: false; readonly error: string } | null;

export interface OverviewInput {
  readonly firm: string;
  readonly locale: string;
  readonly period: { readonly label: string; readonly start: string; readonly end: string };
  readonly outcomes: readonly AccountOutcome[];
  readonly timings: { readonly load: number; readonly compute: number; readonly html: number; readonly pdf: number };
  /** Accounts whose statement pages were written (safe ids with figures). */
  readonly written: ReadonlySet<string>;
  readonly pdf: (account: string) => PdfState;
  readonly warnings: readonly string[];
}

function sortValue(value: number | null | undefined): string {
  return value === null || value === undefined || !Number.isFinite(value) ? '' : String(value);
}

/** Builds the overview of a run. Reported accounts are sorted by breaches (most first), then account id. */
export function overviewView(input: OverviewInput): OverviewView {
  const format = formatterFor(input.locale);
  const byId = (a: AccountOutcome, b: AccountOutcome): number => (a.account < b.account ? -1 : a.account > b.account ? 1 : 0);
  const reported = input.outcomes.filter((outcome) => outcome.status === 'reported')
    .sort((a, b) => b.breaches - a.breaches || byId(a, b));
  const failed = input.outcomes.filter((outcome) => outcome.status === 'failed').sort(byId);

  const row = (outcome: AccountOutcome): OverviewRow => {
    const figures = outcome.figures;
    const window = figures?.returns.period ?? figures?.returns.since_inception ?? null;
    const sinceInception = figures !== null && figures.returns.period === null && window !== null;
    const written = input.written.has(outcome.account);
    const base = `accounts/${encodeURIComponent(outcome.account)}/`;
    const pdf = written ? input.pdf(outcome.account) : null;
    const breachNames = figures ? figures.checks.filter((check) => check.status === 'breach').map((check) => check.id).join(' · ') : '';
    const suffix = sinceInception ? ' (since inception)' : '';
    return {
      account: outcome.account,
      client: outcome.client ?? '',
      mandate: figures?.mandate_label ?? '',
      status: outcome.status === 'failed' ? 'Failed' : outcome.breaches > 0 ? 'Breach' : 'Reported',
      statusClass: outcome.status === 'failed' ? 'failed' : outcome.breaches > 0 ? 'breach' : 'reported',
      value: figures ? format.amount(figures.value.end) : NOT_AVAILABLE,
      currency: figures?.base_currency ?? '',
      periodReturn: figures ? `${format.percent(window?.twr_net ?? null, { signed: true })}${suffix}` : NOT_AVAILABLE,
      benchmark: figures ? format.percent(window?.benchmark ?? null, { signed: true }) : NOT_AVAILABLE,
      difference: figures ? format.percentagePoints(window?.excess_arithmetic ?? null, 2) : NOT_AVAILABLE,
      differenceTone: window?.excess_arithmetic ? (window.excess_arithmetic > 0 ? 'up' : 'down') : '',
      breaches: outcome.breaches,
      breachNames,
      links: {
        html: written ? `${base}index.html` : null,
        pdf: pdf?.ok ? `${base}statement.pdf` : null,
        figures: written ? `${base}figures.json` : null,
      },
      pdfStatus: !written ? 'no statement' : pdf === null ? 'not printed' : pdf.ok ? 'printed' : 'failed',
      pdfError: pdf !== null && !pdf.ok ? pdf.error : '',
      errors: outcome.errors.map((error) => `${error.file}${error.line === null ? '' : `:${error.line}`}: ${error.message}`),
      sort: {
        value: sortValue(figures?.value.end),
        periodReturn: sortValue(window?.twr_net),
        benchmark: sortValue(window?.benchmark),
        difference: sortValue(window?.excess_arithmetic),
      },
    };
  };

  const breaches = reported.reduce((sum, outcome) => sum + outcome.breaches, 0);
  const withBreaches = reported.filter((outcome) => outcome.breaches > 0).length;
  const seconds = (value: number): string => `${format.decimal(value, 2)} s`;
  return {
    lang: 'en',
    title: `${input.firm}: statements ${input.period.label}`,
    firm: input.firm,
    period: { label: input.period.label, range: `${format.date(nextIsoDate(input.period.start))} to ${format.date(input.period.end)}` },
    counts: [
      { label: 'Accounts reported', value: format.integer(reported.length), tone: '' },
      { label: 'Accounts with breaches', value: format.integer(withBreaches), tone: withBreaches > 0 ? 'breach' : '' },
      { label: 'Breaches in all', value: format.integer(breaches), tone: breaches > 0 ? 'breach' : '' },
      { label: 'Accounts failed', value: format.integer(failed.length), tone: failed.length > 0 ? 'failed' : '' },
    ],
    reported: reported.map(row),
    failed: failed.map(row),
    timings: [
      { label: 'Loading the book', value: seconds(input.timings.load) },
      { label: 'Computing figures', value: seconds(input.timings.compute) },
      { label: 'Writing HTML', value: seconds(input.timings.html) },
      { label: 'Printing PDF', value: seconds(input.timings.pdf) },
    ],
    warnings: input.warnings,
  };
}
