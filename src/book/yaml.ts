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
  /** Keys of the map at `path` in the order written (object key order would move integer-like keys first). */
  keysInOrder(path: YamlPath): readonly string[];
}

/** Bounds the expansion of YAML aliases (a small file must not expand into a huge value). */
const MAX_ALIAS_COUNT = 100;

/** Parses one YAML file. Throws BookError naming the line for invalid YAML. */
export function parseYamlFile(file: string, text: string): YamlFile {
  const lineCounter = new LineCounter();
  const document = parseDocument(text, { lineCounter, prettyErrors: false, uniqueKeys: true });
  const lineAt = (offset: number): number => lineCounter.linePos(offset).line;
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
  return {
    file,
    value,
    lineOf: (path) => lineOfPath(document, path, lineAt),
    keysInOrder: (path) => keysOfMap(document, path),
  };
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

function scalarKey(key: unknown): string {
  return String(isScalar(key) ? key.value : key);
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
      const pair = node.items.find((item) => isPair(item) && scalarKey(item.key) === String(step));
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

function keysOfMap(document: Document, path: YamlPath): readonly string[] {
  const node: unknown = path.length === 0 ? document.contents : document.getIn([...path], true);
  return isMap(node) ? node.items.map((item) => scalarKey(item.key)) : [];
}
