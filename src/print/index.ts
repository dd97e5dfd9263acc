/**
 * Prints statements to PDF with the system Chromium through puppeteer-core:
 * one browser per run, a pool of pages sized by `jobs`, JavaScript off,
 * every request refused except the run's own files, A4 with margins, header
 * and footer on every page, tagged PDF with a document outline, title and
 * author set, and no creation dates (two prints of the same HTML are
 * byte-identical). A print that fails or hangs is retried once; then that
 * account's PDF is reported failed and the others go on.
 */
import { existsSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import puppeteer, { type Browser, type HTTPRequest, type Page } from 'puppeteer-core';
import { QuarterlineError } from '../errors.ts';
import { writeFileAtomic } from '../run/files.ts';
import { startFinisher } from './finisher.ts';
import { describeError, runPool, withTimeout } from './pool.ts';
import { PAGE_MARGINS, footerTemplate, headerTemplate } from './templates.ts';

/** What every page of a statement's PDF shows in its header and footer. */
export interface PrintHeader {
  readonly firm: string;
  readonly client: string;
  readonly account: string;
  readonly period: string;
}

export interface PrintItem {
  readonly account: string;
  /** The statement's HTML (RUN/accounts/ID/index.html). */
  readonly htmlPath: string;
  /** Where to write the PDF (RUN/accounts/ID/statement.pdf). */
  readonly pdfPath: string;
  readonly title: string;
  readonly author: string;
  readonly header: PrintHeader;
}

export interface PrintOptions {
  /** Pages printing at once in the one browser. */
  readonly jobs: number;
  /** Time limit of one print (load and PDF), default 30 s. */
  readonly timeoutMs?: number;
  readonly onProgress?: (done: number, total: number) => void;
  /**
   * The folder whose files pages may load. Default: the run folder of the
   * first item (RUN in RUN/accounts/ID/index.html). Everything else is refused.
   */
  readonly allowedRoot?: string;
  /** The Chromium binary; default findChromium(). */
  readonly executablePath?: string;
}

export interface PrintResult {
  readonly ok: boolean;
  readonly error?: string;
  /** Requests the page made that were refused (none for a sound statement). */
  readonly blocked?: readonly string[];
}

/** Errors of the print stage. */
export class PrintError extends QuarterlineError {}

/** No Chromium on this machine: the PDF step cannot run (the HTML is kept). */
export class ChromiumNotFoundError extends PrintError {
  constructor() {
    super(CHROMIUM_MISSING_MESSAGE);
  }
}

export const CHROMIUM_ENV = 'QUARTERLINE_CHROMIUM';

export const CHROMIUM_MISSING_MESSAGE = 'No Chromium found to print PDFs: install it (Debian/Ubuntu: `apt-get install chromium`) '
  + `or set ${CHROMIUM_ENV} to the path of a Chromium or Chrome binary. The HTML statements were written; rerun to print the PDFs.`;

/** Usual install paths, searched in order after QUARTERLINE_CHROMIUM. */
export const CHROMIUM_PATHS: readonly string[] = ['/usr/bin/chromium', '/usr/bin/chromium-browser', '/usr/bin/google-chrome'];

/**
 * The Chromium binary to print with: QUARTERLINE_CHROMIUM when it names an
 * existing file, else the first usual path that exists; null when none does.
 */
export function findChromium(env: Readonly<Record<string, string | undefined>> = process.env, exists: (file: string) => boolean = existsSync): string | null {
  const configured = env[CHROMIUM_ENV];
  if (configured !== undefined && configured !== '') return exists(configured) ? configured : null;
  return CHROMIUM_PATHS.find((candidate) => exists(candidate)) ?? null;
}

/** Flags that keep Chromium quiet and offline (no DNS, no updates, no sync). */
export const CHROMIUM_FLAGS: readonly string[] = [
  '--no-sandbox',
  '--disable-gpu',
  '--disable-background-networking',
  '--disable-component-update',
  '--no-first-run',
  '--disable-sync',
  '--disable-quic',
  '--disable-dev-shm-usage',
  '--disable-extensions',
  '--host-resolver-rules=MAP * ~NOTFOUND',
];

const DEFAULT_TIMEOUT_MS = 30_000;

/** True when `url` is a file inside `root` (after resolving `..`), or data:/about:blank. */
export function isAllowedUrl(url: string, root: string): boolean {
  if (url.startsWith('data:') || url === 'about:blank') return true;
  if (!url.startsWith('file:')) return false;
  let file: string;
  try {
    file = fileURLToPath(url);
  } catch {
    return false;
  }
  const relative = path.relative(path.resolve(root), path.resolve(file));
  return relative === '' || (!relative.startsWith('..') && !path.isAbsolute(relative));
}

/** Launches the one browser of a run. */
async function launch(executablePath: string): Promise<Browser> {
  return puppeteer.launch({
    executablePath,
    headless: true,
    pipe: true,
    args: [...CHROMIUM_FLAGS],
    handleSIGINT: false,
    handleSIGTERM: false,
    handleSIGHUP: false,
  });
}

/** A page of the pool: JavaScript off, every request outside `root` refused (and recorded). */
async function preparePage(browser: Browser, root: string): Promise<{ page: Page; blocked: string[] }> {
  const page = await browser.newPage();
  const blocked: string[] = [];
  await page.setJavaScriptEnabled(false);
  await page.setRequestInterception(true);
  page.on('request', (request: HTTPRequest) => {
    const url = request.url();
    if (isAllowedUrl(url, root)) {
      void request.continue().catch(() => undefined);
    } else {
      blocked.push(url);
      void request.abort('blockedbyclient').catch(() => undefined);
    }
  });
  return { page, blocked };
}

/**
 * Prints every item to its pdfPath. Resolves with each account's result
 * (never rejects for one account's failure); throws ChromiumNotFoundError
 * when there is no Chromium to print with.
 */
export async function printStatements(items: readonly PrintItem[], options: PrintOptions): Promise<Map<string, PrintResult>> {
  if (items.length === 0) return new Map();
  const executablePath = options.executablePath ?? findChromium();
  if (!executablePath || !existsSync(executablePath)) throw new ChromiumNotFoundError();
  const timeoutMs = options.timeoutMs ?? DEFAULT_TIMEOUT_MS;
  const root = path.resolve(options.allowedRoot ?? path.dirname(path.dirname(path.dirname(items[0]!.htmlPath))));
  for (const item of items) {
    if (!isAllowedUrl(pathToFileURL(item.htmlPath).href, root)) {
      throw new PrintError(`the statement ${item.htmlPath} of ${item.account} is outside the run folder ${root}; pass allowedRoot`);
    }
  }

  let browser: Browser | null = null;
  let launching: Promise<Browser> | null = null;
  const browserNow = async (): Promise<Browser> => {
    if (browser?.connected) return browser;
    launching ??= launch(executablePath).then((launched) => {
      browser = launched;
      launching = null;
      return launched;
    }, (error: unknown) => {
      launching = null;
      throw new PrintError(`Chromium (${executablePath}) did not start: ${describeError(error)}`, { cause: error });
    });
    return launching;
  };

  const jobs = Math.max(1, Math.min(options.jobs, items.length));
  const workerPages: Array<{ page: Page; blocked: string[] } | null> = Array.from({ length: jobs }, () => null);
  const blockedBy = new Map<string, string[]>();

  const discard = (worker: number): void => {
    const held = workerPages[worker];
    workerPages[worker] = null;
    if (held && !held.page.isClosed()) void held.page.close().catch(() => undefined);
  };

  const attempt = async (item: PrintItem, worker: number): Promise<void> => {
    const current = await browserNow();
    let held = workerPages[worker];
    if (!held || held.page.isClosed() || held.page.browser() !== current) {
      held = await preparePage(current, root);
      workerPages[worker] = held;
    }
    const { page, blocked } = held;
    blocked.length = 0;
    // Puppeteer's own limits sit above ours, so a hang is always reported in one wording.
    const innerTimeout = timeoutMs + 5_000;
    let pdf: Uint8Array;
    try {
      pdf = await withTimeout((async () => {
        await page.goto(pathToFileURL(item.htmlPath).href, { waitUntil: 'load', timeout: innerTimeout });
        return page.pdf({
          format: 'A4',
          printBackground: true,
          displayHeaderFooter: true,
          headerTemplate: headerTemplate(item.header),
          footerTemplate: footerTemplate(item.header),
          margin: PAGE_MARGINS,
          tagged: true,
          outline: true,
          waitForFonts: true,
          timeout: innerTimeout,
        });
      })(), timeoutMs, `printing ${item.account}`, () => discard(worker));
    } catch (error) {
      discard(worker);
      throw error;
    }
    blockedBy.set(item.account, [...blocked]);
    const finished = await finisher.finish(pdf, { title: item.title, author: item.author, subject: `${item.header.period} · ${item.account}` });
    await writeFileAtomic(item.pdfPath, finished);
  };

  const finisher = startFinisher();
  try {
    await browserNow();
    const outcomes = await runPool(items, {
      jobs,
      keyOf: (item) => item.account,
      attempt: (item, worker) => attempt(item, worker),
      ...(options.onProgress ? { onProgress: options.onProgress } : {}),
    });
    const results = new Map<string, PrintResult>();
    for (const item of items) {
      const outcome = outcomes.get(item.account);
      const blocked = blockedBy.get(item.account) ?? [];
      results.set(item.account, outcome?.ok
        ? { ok: true, blocked }
        : { ok: false, error: outcome?.error ?? 'not printed' });
    }
    return results;
  } finally {
    await finisher.close();
    await closeBrowser(browser);
  }
}

/** Closes the browser, killing its process when it does not close in time. */
async function closeBrowser(browser: Browser | null): Promise<void> {
  if (!browser) return;
  const instance: Browser = browser;
  try {
    await withTimeout(instance.close(), 5_000, 'closing Chromium');
  } catch {
    instance.process()?.kill('SIGKILL');
  }
}
