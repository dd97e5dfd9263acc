/**
 * Turning zod issues into diagnostics.
 *
 * A schema's own messages say "expected …; <fix>". Here each one gets its
 * location (file, line, column) and the value found, giving the one sentence
 * a diagnostic carries: `found "-5", expected a non-negative quantity; …`.
 */
import type { z } from 'zod';
import type { Diagnostic, DiagnosticScope } from '../errors.ts';
import type { CsvRow } from './csv.ts';
import type { YamlFile, YamlPath } from './yaml.ts';

type Issue = z.core.$ZodIssue;

/** How a CSV cell is quoted in a message. */
export function describeCell(text: string | undefined): string {
  return text === undefined || text === '' ? 'an empty cell' : JSON.stringify(text);
}

/** How a YAML value is quoted in a message. */
export function describeYamlValue(value: unknown): string {
  if (value === undefined) return 'nothing';
  if (value === null) return 'an empty value';
  if (Array.isArray(value)) return value.every(isScalarValue) ? JSON.stringify(value) : 'a list';
  if (typeof value === 'object') return 'a map';
  return JSON.stringify(value);
}

function isScalarValue(value: unknown): boolean {
  return value === null || ['string', 'number', 'boolean'].includes(typeof value);
}

/**
 * Fallback wording for zod's built-in checks that a schema did not word
 * itself; passed as the `error` option of safeParse.
 */
export function fallbackMessage(issue: z.core.$ZodRawIssue): string {
  switch (issue.code) {
    case 'invalid_type':
      return `expected ${article(String(issue.expected))}`;
    case 'too_small':
      return `expected at least ${String(issue.minimum)}`;
    case 'too_big':
      return `expected at most ${String(issue.maximum)}`;
    case 'invalid_value':
      return `expected one of ${issue.values.map((value) => JSON.stringify(value)).join(', ')}`;
    default:
      return 'expected a valid value';
  }
}

function article(type: string): string {
  const words: Record<string, string> = {
    number: 'a number', string: 'text', object: 'a map of keys and values', array: 'a list',
    boolean: 'true or false', int: 'a whole number',
  };
  return words[type] ?? type;
}

export function diagnostic(
  severity: Diagnostic['severity'],
  scope: DiagnosticScope,
  file: string,
  line: number | null,
  column: string | undefined,
  message: string,
): Diagnostic {
  return column === undefined
    ? { severity, scope, file, line, message }
    : { severity, scope, file, line, column, message };
}

/**
 * Diagnostics for the issues of one CSV row. `subject` is inserted after the
 * value found, for rows whose key is not the column at fault (fx.csv names
 * its currency pair).
 */
export function rowIssueDiagnostics(
  file: string,
  row: CsvRow,
  issues: readonly Issue[],
  scope: DiagnosticScope,
  subject?: string,
): Diagnostic[] {
  const about = subject === undefined ? '' : ` for ${subject}`;
  return issues.map((issue) => {
    const column = issue.path.length > 0 ? String(issue.path[0]) : undefined;
    const found = column === undefined ? 'this row' : describeCell(row.fields[column]);
    return diagnostic('error', scope, file, row.line, column, `found ${found}${about}, ${issue.message}`);
  });
}

/** Diagnostics (scope book) for the issues of a YAML file, located by key path. */
export function yamlIssueDiagnostics(yaml: YamlFile, issues: readonly Issue[]): Diagnostic[] {
  return byLine(issues.flatMap((issue): Diagnostic[] => {
    const path = issue.path as YamlPath;
    if (issue.code === 'unrecognized_keys') {
      return issue.keys.map((key) => diagnostic('error', { kind: 'book' }, yaml.file, yaml.lineOf([...path, key]), dotted([...path, key]),
        `found the unknown key "${key}", ${issue.message}`));
    }
    if (issue.code === 'invalid_key') {
      const key = String(path[path.length - 1]);
      const reason = issue.issues[0]?.message ?? 'expected a valid key';
      return [diagnostic('error', { kind: 'book' }, yaml.file, yaml.lineOf(path), dotted(path), `found the key ${JSON.stringify(key)}, ${reason}`)];
    }
    return [diagnostic('error', { kind: 'book' }, yaml.file, yaml.lineOf(path), dotted(path) || undefined,
      `found ${describeYamlValue(valueAt(yaml.value, path))}, ${issue.message}`)];
  }));
}

/** Diagnostics in line order (stable: several on one line keep their order). */
function byLine(diagnostics: Diagnostic[]): Diagnostic[] {
  return diagnostics.sort((left, right) => (left.line ?? 0) - (right.line ?? 0));
}

function dotted(path: YamlPath): string {
  return path.map(String).join('.');
}

function valueAt(root: unknown, path: YamlPath): unknown {
  let value = root;
  for (const step of path) {
    if (value === null || typeof value !== 'object') return undefined;
    value = (value as Record<PropertyKey, unknown>)[step as PropertyKey];
  }
  return value;
}
