/**
 * The demo run's pages in the system Chromium (puppeteer-core): no console
 * errors, no request outside the run's folder, the embedded font in use,
 * nothing wider than the A4 content width, and the overview's links
 * resolving to files of the run.
 */
import { existsSync } from 'node:fs';
import { writeFile } from 'node:fs/promises';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import puppeteer, { type Browser, type Page } from 'puppeteer-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CHROMIUM_FLAGS, findChromium, isAllowedUrl } from '../../src/print/index.ts';
import { PAGE_MARGINS } from '../../src/print/templates.ts';
import type { RunResult } from '../../src/run/build.ts';
import { HOSTILE_CLIENT, demoResult, hostile, unavailable, withOutcomes, writeDemoRun } from './helpers.ts';

// The functions given to page.evaluate run in the page; these declarations
// describe the little of the DOM they use (the project compiles without DOM types).
interface DomElement {
  readonly tagName: string;
  readonly className: string;
  readonly textContent: string | null;
  readonly href?: string;
  getBoundingClientRect(): { readonly left: number; readonly right: number; readonly width: number };
}
declare const document: {
  readonly fonts: Iterable<{ readonly status: string; readonly family: string; readonly weight: string }> & { readonly ready: Promise<unknown> };
  querySelectorAll(selector: string): ArrayLike<DomElement>;
  querySelector(selector: string): DomElement | null;
  readonly documentElement: { readonly scrollWidth: number };
  readonly body: DomElement;
};
declare const window: { readonly innerWidth: number };
declare function getComputedStyle(element: DomElement): { readonly fontFamily: string };

/** A4 width less the left and right print margins, in CSS pixels (96 px per inch). */
const CONTENT_WIDTH_PX = Math.floor(((210 - parseFloat(PAGE_MARGINS.left) - parseFloat(PAGE_MARGINS.right)) * 96) / 25.4);

const chromium = findChromium();

interface PageReport {
  readonly requests: string[];
  readonly consoleErrors: string[];
}

let browser: Browser;
let result: RunResult;
let runDir: string;

/** Opens a file of the run with every request recorded and every non-file request refused. */
async function open(file: string, options: { readonly width: number; readonly print: boolean }): Promise<{ page: Page; report: PageReport }> {
  const page = await browser.newPage();
  const report: PageReport = { requests: [], consoleErrors: [] };
  await page.setRequestInterception(true);
  page.on('request', (request) => {
    report.requests.push(request.url());
    if (request.url().startsWith('file:') || request.url().startsWith('data:')) void request.continue();
    else void request.abort('blockedbyclient');
  });
  page.on('console', (message) => {
    if (message.type() === 'error') report.consoleErrors.push(message.text());
  });
  page.on('pageerror', (error) => report.consoleErrors.push(String(error)));
  await page.setViewport({ width: options.width, height: 1000 });
  if (options.print) await page.emulateMediaType('print');
  await page.goto(pathToFileURL(file).href, { waitUntil: 'load' });
  await page.evaluate(() => document.fonts.ready.then(() => undefined));
  return { page, report };
}

/** Elements that stick out of the viewport (any element of the body), and the page's scroll width. */
async function overflow(page: Page): Promise<{ scrollWidth: number; innerWidth: number; outside: string[] }> {
  return page.evaluate(() => {
    const outside: string[] = [];
    for (const element of Array.from(document.querySelectorAll('body *'))) {
      const box = element.getBoundingClientRect();
      if (box.width > 0 && (box.right > window.innerWidth + 0.5 || box.left < -0.5)) {
        outside.push(`${element.tagName.toLowerCase()}.${element.className || ''} [${Math.round(box.left)}, ${Math.round(box.right)}]`);
      }
    }
    return { scrollWidth: document.documentElement.scrollWidth, innerWidth: window.innerWidth, outside };
  });
}

beforeAll(async () => {
  if (!chromium) throw new Error('these tests need Chromium: apt-get install chromium, or set QUARTERLINE_CHROMIUM');
  const demo = await demoResult();
  result = withOutcomes(demo, [hostile(demo.outcomes[0]!), unavailable(demo.outcomes[2]!)]);
  runDir = await writeDemoRun(result, 'browser');
  browser = await puppeteer.launch({ executablePath: chromium, headless: true, pipe: true, args: [...CHROMIUM_FLAGS] });
}, 120_000);

afterAll(async () => {
  await browser?.close();
});

describe('every statement in Chromium', () => {
  it(`loads with no console error, no request outside the run folder, in the embedded font, nothing wider than the A4 content width (${CONTENT_WIDTH_PX} px)`, async () => {
    for (const outcome of result.outcomes) {
      const { page, report } = await open(path.join(runDir, 'accounts', outcome.account, 'index.html'), { width: CONTENT_WIDTH_PX, print: true });
      expect(report.consoleErrors, outcome.account).toEqual([]);
      expect(report.requests.filter((url) => !isAllowedUrl(url, runDir)), outcome.account).toEqual([]);
      const fonts = await page.evaluate(() => ({
        loaded: Array.from(document.fonts).filter((face) => face.status === 'loaded').map((face) => `${face.family} ${face.weight}`),
        scripts: document.querySelectorAll('script').length,
        body: getComputedStyle(document.body).fontFamily,
      }));
      expect(fonts.scripts).toBe(0);
      expect(fonts.body).toMatch(/^"Source Sans 3"/);
      expect(fonts.loaded.some((face) => face.startsWith('"Source Sans 3" 400') || face.startsWith('Source Sans 3 400'))).toBe(true);
      const measured = await overflow(page);
      expect(measured.outside, outcome.account).toEqual([]);
      expect(measured.scrollWidth, outcome.account).toBeLessThanOrEqual(measured.innerWidth);
      await page.close();
    }
  }, 120_000);

  it('keeps the hostile client name inert and the layout intact on screen too', async () => {
    for (const width of [CONTENT_WIDTH_PX, 794, 420]) {
      const { page, report } = await open(path.join(runDir, 'accounts', 'HOSTILE-1', 'index.html'), { width, print: false });
      expect(report.consoleErrors).toEqual([]);
      const state = await page.evaluate(() => ({
        scripts: document.querySelectorAll('script, img').length,
        client: document.querySelector('.facts dd bdi')?.textContent ?? '',
      }));
      expect(state.scripts).toBe(0);
      expect(state.client).toBe(HOSTILE_CLIENT);
      const measured = await overflow(page);
      expect(measured.outside, `width ${width}`).toEqual([]);
      expect(measured.scrollWidth).toBeLessThanOrEqual(measured.innerWidth);
      await page.close();
    }
  }, 60_000);

  it('would notice a request that leaves the machine (negative control, .invalid host)', async () => {
    const probe = path.join(runDir, 'probe.html');
    await writeFile(probe, '<!doctype html><html lang="en"><title>probe</title><img src="https://statements.example.invalid/pixel.png" alt=""><link rel="stylesheet" href="../outside.css">');
    const { page, report } = await open(probe, { width: CONTENT_WIDTH_PX, print: true });
    expect(report.requests.filter((url) => !isAllowedUrl(url, runDir)).length).toBe(2);
    await page.close();
  });
});

describe('the overview in Chromium', () => {
  it('links only to files of the run that exist, and fits its window with the hostile name in it', async () => {
    const { page, report } = await open(path.join(runDir, 'index.html'), { width: 1280, print: false });
    expect(report.consoleErrors).toEqual([]);
    const measured = await overflow(page);
    expect(measured.outside).toEqual([]);
    expect(measured.scrollWidth).toBeLessThanOrEqual(measured.innerWidth);
    expect(report.requests.filter((url) => !isAllowedUrl(url, runDir))).toEqual([]);
    const links = await page.evaluate(() => Array.from(document.querySelectorAll('a[href]')).map((a) => a.href ?? ''));
    expect(links.length).toBeGreaterThanOrEqual(result.outcomes.length * 2);
    for (const link of links) {
      expect(link.startsWith('file:'), link).toBe(true);
      const file = fileURLToPath(link);
      expect(isAllowedUrl(link, runDir), link).toBe(true);
      expect(existsSync(file), link).toBe(true);
    }
    await page.close();
  });

  it('sorts a column on request (progressive enhancement) and lists most breaches first without it', async () => {
    const { page } = await open(path.join(runDir, 'index.html'), { width: 1280, print: false });
    const accounts = (): Promise<string[]> => page.evaluate(() => Array.from(document.querySelectorAll('table.accounts tbody th[scope="row"]')).map((th) => th.textContent ?? ''));
    const initial = await accounts();
    const breaches = new Map(result.outcomes.map((outcome) => [outcome.account, outcome.breaches]));
    const byBreaches = [...breaches.keys()].sort((a, b) => breaches.get(b)! - breaches.get(a)! || (a < b ? -1 : 1));
    expect(initial).toEqual(byBreaches);
    await page.click('table.accounts thead th:first-child button');
    const sorted = await accounts();
    expect(sorted).toEqual([...initial].sort());
    await page.close();

    const plain = await browser.newPage();
    await plain.setJavaScriptEnabled(false);
    await plain.goto(pathToFileURL(path.join(runDir, 'index.html')).href, { waitUntil: 'load' });
    const withoutScript = await plain.evaluate(() => Array.from(document.querySelectorAll('table.accounts tbody th[scope="row"]')).map((th) => th.textContent ?? ''));
    expect(withoutScript).toEqual(initial);
    await plain.close();
  });
});
