/**
 * Reading book.yaml and mandates.yaml: the parsed value plus a way back from
 * a key path to the line it was written on, so that a schema problem found
 * later can name `book.yaml:12`.
 */
import { isMap, isPair, isScalar, isSeq, LineCounter, parseDocument, type Document } from 'yaml';
import { BookError, type Diagnostic } from '../errors.ts';

export type YamlPath = readonly PropertyKey[];

export interface YamlFile {
  readonly file: string;
  /** The document as plain JavaScript data (maps as objects). */
  readonly value: unknown;
  /** Editor line of the value at `path`, or of the nearest enclosing key when the path does not exist. */
  lineOf(path: YamlPath): number;
  /**
   * Keys of `map` (the parsed map at `path`) in the order written; object key
   * order would move integer-like keys first. Every key of `map` is returned,
   * so nothing can be dropped by the ordering.
   */
  keysInOrder(path: YamlPath, map: object): readonly string[];
}

/** Bounds the expansion of YAML aliases (a small file must not expand into a huge value). */
const MAX_ALIAS_COUNT = 100;

/** Parses one YAML file. Throws BookError naming the line for invalid YAML. */
export function parseYamlFile(file: string, text: string): YamlFile {
  const lineCounter = new LineCounter();
  const document = parseDocument(text, { lineCounter, prettyErrors: false, uniqueKeys: true });
  // An error found at the end of the file (an unclosed quote or bracket) is
  // reported on the last line that has text, not on the empty line after it.
  const lastTextOffset = Math.max(text.trimEnd().length - 1, 0);
  const lineAt = (offset: number): number => lineCounter.linePos(Math.min(offset, lastTextOffset)).line;
  if (document.errors.length > 0) {
    throw new BookError(document.errors.map((error): Diagnostic => ({
      severity: 'error',
      scope: { kind: 'book' },
      file,
      line: lineAt(error.pos[0]),
      message: `found invalid YAML (${yamlProblem(error.code, error.message)}), expected ${yamlExpectation(error.code)}; correct the line or the one above it (indent with spaces, quote text containing ": " or "#")`,
    })));
  }
  let value: unknown;
  try {
    value = document.toJS({ maxAliasCount: MAX_ALIAS_COUNT });
  } catch (error) {
    throw new BookError([{
      severity: 'error',
      scope: { kind: 'book' },
      file,
      line: null,
      message: `found a YAML alias that cannot be expanded (${(error as Error).message}), expected plain values; write the values out instead of using anchors and aliases`,
    }]);
  }
  const lineOf = (path: YamlPath): number => lineOfPath(document, path, lineAt);
  const prototypeKeys = pathsOfPrototypeKeys(value, []);
  if (prototypeKeys.length > 0) {
    throw new BookError(prototypeKeys.map((path): Diagnostic => ({
      severity: 'error',
      scope: { kind: 'book' },
      file,
      line: lineOf(path),
      column: path.map(String).join('.'),
      message: 'found the key "__proto__", expected an ordinary name (this one cannot be stored as a map key); rename it',
    })));
  }
  return {
    file,
    value,
    lineOf,
    keysInOrder: (path, map) => {
      const present = new Set(Object.keys(map));
      const written = keysOfMap(document, path).filter((key) => present.delete(key));
      return [...written, ...present];
    },
  };
}

/**
 * Paths of every `__proto__` key. As a key of a plain JavaScript object it
 * sets the object's prototype instead of adding an entry, so a record read
 * from it would silently lose the entry.
 */
function pathsOfPrototypeKeys(value: unknown, path: PropertyKey[]): PropertyKey[][] {
  if (value === null || typeof value !== 'object') return [];
  const found: PropertyKey[][] = [];
  if (!Array.isArray(value) && Object.hasOwn(value, '__proto__')) found.push([...path, '__proto__']);
  for (const [key, child] of Object.entries(value)) {
    found.push(...pathsOfPrototypeKeys(child, [...path, Array.isArray(value) ? Number(key) : key]));
  }
  return found;
}

function yamlProblem(code: string, message: string): string {
  return code === 'DUPLICATE_KEY' ? 'a key written twice in the same map' : message.replace(/\s+/g, ' ').trim();
}

function yamlExpectation(code: string): string {
  if (code === 'DUPLICATE_KEY') return 'each key once';
  if (code === 'MULTIPLE_DOCS') return 'a single document (no "---" separator)';
  return 'valid YAML';
}

function nodeLine(node: unknown, lineAt: (offset: number) => number): number | null {
  const range = (node as { range?: readonly number[] | null } | null)?.range;
  return range && typeof range[0] === 'number' ? lineAt(range[0]) : null;
}

/**
 * The line of the value at `path`: for a scalar or a flow collection, the
 * value's own line; for a block map or list, the line of its key; for a
 * missing key, the line of the nearest enclosing key.
 */
function lineOfPath(document: Document, path: YamlPath, lineAt: (offset: number) => number): number {
  let node: unknown = document.contents;
  let line = nodeLine(node, lineAt) ?? 1;
  for (const step of path) {
    if (isMap(node)) {
      const pair = node.items.find((item) => isPair(item) && jsKey(item.key) === String(step));
      if (!pair) return line;
      line = nodeLine(pair.key, lineAt) ?? line;
      node = pair.value;
    } else if (isSeq(node) && typeof step === 'number') {
      const item = node.items[step];
      if (item === undefined) return line;
      line = nodeLine(item, lineAt) ?? line;
      node = item;
    } else {
      return line;
    }
    const isBlockCollection = (isMap(node) || isSeq(node)) && !(node as { flow?: boolean }).flow;
    if (!isBlockCollection) line = nodeLine(node, lineAt) ?? line;
  }
  return line;
}

/** The keys of the map at `path`, as the plain object made by `toJS` names them (a null key is ''). */
function keysOfMap(document: Document, path: YamlPath): readonly string[] {
  let node: unknown = document.contents;
  for (const step of path) {
    if (!isMap(node)) return [];
    node = node.items.find((item) => isPair(item) && jsKey(item.key) === String(step))?.value;
  }
  return isMap(node) ? node.items.map((item) => jsKey(item.key)) : [];
}

function jsKey(key: unknown): string {
  const value = isScalar(key) ? key.value : key;
  return value === null || value === undefined ? '' : String(value);
}
