/**
 * Printing the demo run to PDF with the system Chromium: every statement
 * prints, with a sane page count, A4 pages, extractable text that shows
 * the figures of figures.json as formatted, embedded fonts, a header and
 * footer on every page, title and author, a tagged structure and outline,
 * byte-identical reprints; a hostile client name stays inert; a hung or
 * failed print is retried, then reported, and the others go on.
 */
import { execFileSync } from 'node:child_process';
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { PDFDict, PDFDocument, PDFHexString, PDFName, PDFString } from 'pdf-lib';
import { beforeAll, describe, expect, it } from 'vitest';
import { ChromiumNotFoundError, type PrintItem, type PrintResult, findChromium, printStatements } from '../../src/print/index.ts';
import { printItemsFor } from '../../src/render/index.ts';
import { formatterFor } from '../../src/report/format.ts';
import type { RunResult } from '../../src/run/build.ts';
import { HOSTILE_CLIENT, demoResult, hostile, normaliseSpaces, temporaryDir, withOutcomes, writeDemoRun } from '../render/helpers.ts';

let result: RunResult;
let runDir: string;
let items: PrintItem[];
let printed: Map<string, PrintResult>;
let progress: Array<[number, number]>;
let secondsPerStatement: number;

function pdfPath(account: string): string {
  return path.join(runDir, 'accounts', account, 'statement.pdf');
}

/** `pdfinfo` fields (Poppler). */
function pdfinfo(file: string): Record<string, string> {
  const out = execFileSync('pdfinfo', [file], { encoding: 'utf8' });
  return Object.fromEntries(out.split('\n').filter((line) => line.includes(':')).map((line) => {
    const at = line.indexOf(':');
    return [line.slice(0, at).trim(), line.slice(at + 1).trim()];
  }));
}

/** Text of the PDF (Poppler's pdftotext, layout kept), spaces normalised. */
function pdftext(file: string, page?: number): string {
  const range = page === undefined ? [] : ['-f', String(page), '-l', String(page)];
  return normaliseSpaces(execFileSync('pdftotext', ['-layout', ...range, file, '-'], { encoding: 'utf8' }));
}

/** Outline titles of a PDF, depth first. */
async function outlineTitles(file: string): Promise<string[]> {
  const document = await PDFDocument.load(await readFile(file), { updateMetadata: false });
  const titles: string[] = [];
  const visit = (item: PDFDict | undefined): void => {
    for (; item; item = item.lookupMaybe(PDFName.of('Next'), PDFDict)) {
      const title = item.lookup(PDFName.of('Title'));
      if (title instanceof PDFString || title instanceof PDFHexString) titles.push(title.decodeText());
      visit(item.lookupMaybe(PDFName.of('First'), PDFDict));
    }
  };
  visit(document.catalog.lookupMaybe(PDFName.of('Outlines'), PDFDict)?.lookupMaybe(PDFName.of('First'), PDFDict));
  return titles;
}

beforeAll(async () => {
  if (!findChromium()) throw new Error('these tests need Chromium: apt-get install chromium, or set QUARTERLINE_CHROMIUM');
  const demo = await demoResult();
  result = withOutcomes(demo, [hostile(demo.outcomes[0]!)]);
  runDir = await writeDemoRun(result, 'print');
  items = printItemsFor(result, runDir);
  progress = [];
  const started = performance.now();
  printed = await printStatements(items, { jobs: 2, onProgress: (done, total) => progress.push([done, total]) });
  secondsPerStatement = (performance.now() - started) / 1000 / items.length;
}, 170_000);

describe('printing the demo run', () => {
  it('prints every statement, requesting nothing outside the run, and reports progress', () => {
    expect(items).toHaveLength(result.outcomes.length);
    for (const item of items) expect(printed.get(item.account), item.account).toEqual({ ok: true, blocked: [] });
    expect(progress.at(-1)).toEqual([items.length, items.length]);
    // Seen on 2 busy cores: about 0.5–1.5 s a statement with 2 pages printing at once.
    expect(secondsPerStatement).toBeLessThan(10);
  });

  it('makes A4, tagged PDFs of a sane length with title, author and no print dates', () => {
    for (const item of items) {
      const info = pdfinfo(item.pdfPath);
      const pages = Number(info['Pages']);
      expect(pages, item.account).toBeGreaterThanOrEqual(4);
      expect(pages, item.account).toBeLessThanOrEqual(12);
      expect(info['Page size']).toMatch(/^595\.\d+ x 841\.\d+ pts \(A4\)$/);
      expect(info['Tagged']).toBe('yes');
      expect(info['Title']).toBe(item.title);
      expect(info['Author']).toBe('Tallowmere & Finch Private Wealth');
      expect(info['Producer']).toBe('quarterline');
      expect(info['CreationDate']).toBeUndefined();
      expect(info['ModDate']).toBeUndefined();
    }
  });

  it('embeds every font, the statement\'s own among them', () => {
    const fonts = execFileSync('pdffonts', [pdfPath('TF-1001')], { encoding: 'utf8' }).trim().split('\n').slice(2);
    expect(fonts.length).toBeGreaterThanOrEqual(2);
    for (const line of fonts) expect(line.split(/\s+/).at(-5), line).toBe('yes'); // the "emb" column
    expect(fonts.some((line) => line.includes('SourceSans3'))).toBe(true);
  });

  it('shows the key figures of figures.json as formatted, with a header and "Page x of y" on every page', () => {
    for (const outcome of result.outcomes.filter((o) => o.account.startsWith('TF-'))) {
      const figures = outcome.figures!;
      const format = formatterFor(figures.locale);
      const file = pdfPath(outcome.account);
      const text = pdftext(file);
      const headline = figures.returns.period ?? figures.returns.since_inception!;
      for (const expected of [
        format.money(figures.value.start, figures.base_currency),
        format.money(figures.value.end, figures.base_currency),
        format.percent(headline.twr_net, { signed: true }),
        format.percent(headline.benchmark, { signed: true }),
        format.amount(figures.holdings.at(-1)!.value),
        ...(figures.expected_risk ? [format.percent(figures.expected_risk.volatility)] : []),
      ]) expect(text, `${outcome.account}: ${expected}`).toContain(normaliseSpaces(expected));
      const pages = Number(pdfinfo(file)['Pages']);
      for (let page = 1; page <= pages; page++) {
        const pageText = pdftext(file, page);
        expect(pageText, `${outcome.account} page ${page}`).toContain(`Page ${page} of ${pages}`);
        expect(pageText).toContain(`${figures.client} · ${figures.account} · ${figures.period.label}`);
        expect(pageText).toContain('Tallowmere & Finch Private Wealth');
      }
    }
  }, 60_000);

  it('has a document outline of the sections, each heading once', async () => {
    const titles = await outlineTitles(pdfPath('TF-1001'));
    for (const section of ['At a glance', 'Performance', 'Holdings', 'Activity', 'Risk', 'Mandate review', 'How the figures are calculated', 'Important information']) {
      expect(titles).toContain(section);
    }
    expect(titles.filter((title) => /^(.+)\1$/.test(title))).toEqual([]);
  });

  it('prints the same statement byte for byte the second time', async () => {
    const item = items.find((candidate) => candidate.account === 'TF-1001')!;
    const again = { ...item, pdfPath: path.join(await temporaryDir('reprint'), 'statement.pdf') };
    const second = await printStatements([again], { jobs: 1, allowedRoot: runDir });
    expect(second.get('TF-1001')?.ok).toBe(true);
    expect((await readFile(again.pdfPath)).equals(await readFile(item.pdfPath))).toBe(true);
  }, 60_000);

  it('prints a statement byte for byte the same after a different one on the same page (structure ids renumbered)', async () => {
    // Regression: Chromium names tagged-PDF structure elements after DOM node
    // numbers, which grow with everything the page printed before.
    const other = items.find((candidate) => candidate.account === 'TF-1003')!;
    const item = items.find((candidate) => candidate.account === 'TF-1001')!;
    const dir = await temporaryDir('after-another');
    const again = { ...item, pdfPath: path.join(dir, 'statement.pdf') };
    const reprinted = await printStatements([{ ...other, pdfPath: path.join(dir, 'other.pdf') }, again], { jobs: 1, allowedRoot: runDir });
    expect(reprinted.get('TF-1001')?.ok).toBe(true);
    expect((await readFile(again.pdfPath)).equals(await readFile(item.pdfPath))).toBe(true);
  }, 60_000);
});

describe('a hostile client name in the PDF', () => {
  it('appears as plain text in the page and in every header, and breaks nothing', () => {
    const file = pdfPath('HOSTILE-1');
    const pages = Number(pdfinfo(file)['Pages']);
    const twinPages = Number(pdfinfo(pdfPath(result.outcomes[0]!.account))['Pages']);
    expect(Math.abs(pages - twinPages)).toBeLessThanOrEqual(1);
    const first = pdftext(file, 1);
    // As text (the masthead may wrap it over lines): markup characters and all.
    expect(first).toContain('<script>alert("x")</script> "Quoted" &');
    expect(first).toContain('Sons <img src=x onerror=alert(1)>');
    for (let page = 1; page <= pages; page++) {
      const text = pdftext(file, page);
      // The header cuts the long name with an ellipsis but keeps its start; the footer keeps its page numbers.
      expect(text, `page ${page}`).toContain('<script>alert("x")</script>');
      expect(text, `page ${page}`).toContain('· HOSTILE-1 · 2026-Q3');
      expect(text, `page ${page}`).toContain(`Page ${page} of ${pages}`);
    }
    expect(pdfinfo(file)['Title']).toBe(`Statement 2026-Q3: ${HOSTILE_CLIENT}, account HOSTILE-1`);
    expect(pdfinfo(file)['JavaScript']).toBe('no');
  });
});

describe('when printing goes wrong', () => {
  it('retries a print that hangs, then reports it failed', async () => {
    const item = { ...items.find((candidate) => candidate.account === 'TF-1001')!, pdfPath: path.join(await temporaryDir('timeout'), 'statement.pdf') };
    const outcome = await printStatements([item], { jobs: 1, timeoutMs: 1, allowedRoot: runDir });
    expect(outcome.get(item.account)?.ok).toBe(false);
    expect(outcome.get(item.account)?.error).toMatch(/^printing TF-1001 did not finish within 1 ms; the retry failed too: printing TF-1001 did not finish within 1 ms$/);
  }, 60_000);

  it('reports one account\'s failure and prints the others', async () => {
    const dir = await temporaryDir('partial');
    const good = { ...items[1]!, pdfPath: path.join(dir, 'good.pdf') };
    const missing = { ...items[2]!, account: 'MISSING-1', htmlPath: path.join(runDir, 'accounts', 'MISSING-1', 'index.html'), pdfPath: path.join(dir, 'missing.pdf') };
    const outcome = await printStatements([missing, good], { jobs: 1, allowedRoot: runDir });
    expect(outcome.get('MISSING-1')?.ok).toBe(false);
    expect(outcome.get('MISSING-1')?.error).toMatch(/ERR_FILE_NOT_FOUND.*the retry failed too/);
    expect(outcome.get(good.account)?.ok).toBe(true);
    expect(pdfinfo(good.pdfPath)['Title']).toBe(good.title);
  }, 60_000);

  it('fails the PDF step with how to install Chromium when there is none', async () => {
    const attempt = printStatements(items.slice(0, 1), { jobs: 1, executablePath: '/nonexistent/chromium' });
    await expect(attempt).rejects.toBeInstanceOf(ChromiumNotFoundError);
    await expect(attempt).rejects.toThrow(/apt-get install chromium.*QUARTERLINE_CHROMIUM.*HTML statements were written/);
  });
});
