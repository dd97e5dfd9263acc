/**
 * Writing the CSV files of a book: RFC 4180 fields, plain decimal numbers,
 * and a buffered file writer that makes a file appear only when complete.
 */
import { open, rename, rm } from 'node:fs/promises';
import type { FileHandle } from 'node:fs/promises';

/**
 * One CSV field per RFC 4180 (section 2, rules 5–7): a field containing a
 * comma, a double quote, a carriage return or a line feed is enclosed in
 * double quotes, and each double quote inside it is doubled. Other fields
 * are written as they are.
 */
export function csvField(text: string): string {
  return /[",\r\n]/.test(text) ? `"${text.replaceAll('"', '""')}"` : text;
}

/** One CSV record: the fields quoted as needed, joined by commas, ended by a line feed. */
export function csvLine(fields: readonly string[]): string {
  return `${fields.map(csvField).join(',')}\n`;
}

/**
 * A number in plain decimal notation with at most `maxDecimals` places,
 * rounded half away from zero by `toFixed` on the binary value, without
 * trailing zeros, a trailing point, exponent notation or a negative zero
 * (book format: `.` as decimal mark, no thousands separators).
 */
export function formatDecimal(value: number, maxDecimals: number): string {
  if (!Number.isFinite(value)) throw new RangeError(`cannot write a non-finite number (${value}) to a book file`);
  let text = value.toFixed(maxDecimals);
  if (text.includes('.')) text = text.replace(/0+$/, '').replace(/\.$/, '');
  return text === '-0' ? '0' : text;
}

/** Buffer size at which rows are written out. */
const FLUSH_CHARACTERS = 1 << 20;

/**
 * A CSV file written in large chunks to a temporary name beside the target
 * and renamed into place by `close`, so a reader never sees half a file.
 * Rows are added synchronously; call `flushIfFull` between batches (for
 * example once per account) to keep memory bounded.
 */
export class CsvFileWriter {
  private chunks: string[] = [];
  private bufferedCharacters = 0;
  private rowCount = 0;

  private constructor(
    private readonly handle: FileHandle,
    private readonly temporaryPath: string,
    private readonly finalPath: string,
  ) {}

  /** Opens `path` for writing (through a temporary file) and writes the header row. */
  static async create(path: string, header: readonly string[]): Promise<CsvFileWriter> {
    const temporaryPath = `${path}.tmp-${process.pid}`;
    const handle = await open(temporaryPath, 'w');
    const writer = new CsvFileWriter(handle, temporaryPath, path);
    writer.chunks.push(csvLine(header));
    return writer;
  }

  /** Data rows added so far (the header is not counted). */
  get rows(): number {
    return this.rowCount;
  }

  /** Adds one data row. */
  add(fields: readonly string[]): void {
    const line = csvLine(fields);
    this.chunks.push(line);
    this.bufferedCharacters += line.length;
    this.rowCount++;
  }

  /** Writes the buffered rows when they exceed the chunk size. */
  async flushIfFull(): Promise<void> {
    if (this.bufferedCharacters >= FLUSH_CHARACTERS) await this.flush();
  }

  private async flush(): Promise<void> {
    if (this.chunks.length === 0) return;
    const text = this.chunks.join('');
    this.chunks = [];
    this.bufferedCharacters = 0;
    await this.handle.write(text, null, 'utf8');
  }

  /** Writes what is left, closes the file and moves it into place; returns the number of data rows. */
  async close(): Promise<number> {
    try {
      await this.flush();
      await this.handle.close();
    } catch (error) {
      await this.handle.close().catch(() => undefined);
      await rm(this.temporaryPath, { force: true });
      throw error;
    }
    await rename(this.temporaryPath, this.finalPath);
    return this.rowCount;
  }

  /** Closes and deletes the temporary file (after a failure elsewhere). */
  async abandon(): Promise<void> {
    await this.handle.close().catch(() => undefined);
    await rm(this.temporaryPath, { force: true });
  }
}

/** Writes a whole text file through a temporary name. */
export async function writeTextFile(path: string, text: string): Promise<void> {
  const temporaryPath = `${path}.tmp-${process.pid}`;
  const handle = await open(temporaryPath, 'w');
  try {
    await handle.write(text, null, 'utf8');
  } finally {
    await handle.close();
  }
  await rename(temporaryPath, path);
}
