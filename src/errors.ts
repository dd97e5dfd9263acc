/**
 * Errors and diagnostics.
 *
 * A diagnostic is a problem found in the book, located as precisely as the
 * input allows (`file:line`, column) and worded as: what was found, what was
 * expected, how to fix it. Problems are collected, then acted on: an error
 * scoped to one account fails that account only; an error in the firm's
 * settings or mandates stops the run before anything is written.
 */

/** What a diagnostic is about, which decides who it stops. */
export type DiagnosticScope =
  | { readonly kind: 'book' } // the run cannot start (exit 2)
  | { readonly kind: 'account'; readonly account: string }
  | { readonly kind: 'instrument'; readonly instrument: string } // fails every account that needs it
  | { readonly kind: 'currency'; readonly currency: string }; // an fx.csv row: fails accounts that need the pair

export interface Diagnostic {
  readonly severity: 'error' | 'warning';
  readonly scope: DiagnosticScope;
  /** Book file name relative to the book folder, e.g. `transactions.csv`. */
  readonly file: string;
  /** Line as a text editor shows it (header = 1); null when the problem is the whole file. */
  readonly line: number | null;
  readonly column?: string;
  /** One sentence: what was found, what was expected, how to fix it. */
  readonly message: string;
}

/** `file:line` (or just `file`) for messages. */
export function locate(diagnostic: Pick<Diagnostic, 'file' | 'line'>): string {
  return diagnostic.line === null ? diagnostic.file : `${diagnostic.file}:${diagnostic.line}`;
}

/** One-line rendering of a diagnostic for terminals and logs. */
export function formatDiagnostic(diagnostic: Diagnostic): string {
  const column = diagnostic.column ? ` [${diagnostic.column}]` : '';
  return `${locate(diagnostic)}${column}: ${diagnostic.severity}: ${diagnostic.message}`;
}

/** Base of every error quarterline raises on purpose. */
export class QuarterlineError extends Error {
  constructor(message: string, options?: { cause?: unknown }) {
    super(message, options);
    this.name = new.target.name;
  }
}

/** The book cannot be used at all (unreadable folder, invalid book.yaml or mandates.yaml, a file missing a required column). */
export class BookError extends QuarterlineError {
  constructor(readonly diagnostics: readonly Diagnostic[]) {
    super(diagnostics.map(formatDiagnostic).join('\n'));
  }
}

/** One account cannot be reported; carries the diagnostics that say why. */
export class AccountError extends QuarterlineError {
  constructor(readonly account: string, readonly diagnostics: readonly Diagnostic[]) {
    super(`${account}: ${diagnostics.map(formatDiagnostic).join('; ')}`);
  }
}

/** A figure could not be computed from valid input (for example a root finder found no unique root). */
export class MetricError extends QuarterlineError {}

/** Bad command-line arguments (exit 2). */
export class UsageError extends QuarterlineError {}
