/**
 * Pictures to look at: PNGs of the first pages of a few statements (from
 * their PDFs, through Poppler's pdftoppm) and of the adviser overview
 * (through Chromium), for reviewing the layout by eye.
 *
 *   node bin/run-ts.js scripts/shots.ts [OUTDIR] [--run RUN] [--accounts A,B] [--pages N]
 *
 * Without --run it builds the demo book (data/demo, 2026-Q3) into
 * OUTDIR/run first. OUTDIR defaults to .tmp/shots. --accounts defaults to
 * the first two reported accounts, --pages to 2.
 */
import { execFileSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdir, readFile } from 'node:fs/promises';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import puppeteer from 'puppeteer-core';
import { CHROMIUM_FLAGS, findChromium, printStatements } from '../src/print/index.ts';
import { overviewSourceOf, printItemsFor, renderRunHtml, writeOverview } from '../src/render/index.ts';
import { computeRun, runDirOf, writeAccountFigures, writeRunRecord } from '../src/run/build.ts';

interface Arguments {
  readonly outDir: string;
  readonly runDir: string | null;
  readonly accounts: readonly string[] | null;
  readonly pages: number;
}

function parseArguments(argv: readonly string[]): Arguments {
  let outDir = '.tmp/shots';
  let runDir: string | null = null;
  let accounts: string[] | null = null;
  let pages = 2;
  for (let i = 0; i < argv.length; i++) {
    const argument = argv[i]!;
    const value = (): string => {
      const next = argv[++i];
      if (next === undefined) throw new Error(`${argument} needs a value`);
      return next;
    };
    if (argument === '--run') runDir = value();
    else if (argument === '--accounts') accounts = value().split(',').map((id) => id.trim()).filter(Boolean);
    else if (argument === '--pages') pages = Number(value());
    else if (argument.startsWith('--')) throw new Error(`unknown option ${argument}`);
    else outDir = argument;
  }
  if (!Number.isInteger(pages) || pages < 1) throw new Error('--pages must be a whole number of at least 1');
  return { outDir, runDir, accounts, pages };
}

/** Builds the demo book's run (HTML and PDF) under `outDir/run`; returns the run folder. */
async function buildDemo(outDir: string, accounts: readonly string[] | null): Promise<string> {
  const result = await computeRun({ bookDir: 'data/demo', period: '2026-Q3', accounts: null });
  const runDir = runDirOf(path.join(outDir, 'run'), result.period);
  await writeAccountFigures(result, runDir);
  await writeRunRecord(result, runDir, new Date());
  const html = await renderRunHtml(result, runDir, result.timings);
  const items = printItemsFor(result, runDir).filter((item) => accounts === null || accounts.includes(item.account));
  const started = performance.now();
  const pdf = await printStatements(items, { jobs: 2 });
  await writeOverview(overviewSourceOf(result, { ...result.timings, html: html.seconds, pdf: Math.round(performance.now() - started) / 1000 }), runDir, { pdf });
  return runDir;
}

async function main(): Promise<void> {
  const args = parseArguments(process.argv.slice(2));
  await mkdir(args.outDir, { recursive: true });
  const runDir = args.runDir ?? await buildDemo(args.outDir, args.accounts);
  const record = JSON.parse(await readFile(path.join(runDir, 'run.json'), 'utf8')) as { accounts: Array<{ account: string; status: string }> };
  const accounts = args.accounts ?? record.accounts.filter((entry) => entry.status === 'reported').slice(0, 2).map((entry) => entry.account);
  const written: string[] = [];
  for (const account of accounts) {
    const pdf = path.join(runDir, 'accounts', account, 'statement.pdf');
    if (!existsSync(pdf)) throw new Error(`${pdf} does not exist; print the run first (build without --no-pdf)`);
    const prefix = path.join(args.outDir, `${account}-page`);
    execFileSync('pdftoppm', ['-png', '-r', '80', '-f', '1', '-l', String(args.pages), pdf, prefix]);
    written.push(`${prefix}-*.png`);
  }
  const chromium = findChromium();
  if (!chromium) throw new Error('no Chromium found for the overview picture; set QUARTERLINE_CHROMIUM');
  const browser = await puppeteer.launch({ executablePath: chromium, headless: true, pipe: true, args: [...CHROMIUM_FLAGS] });
  try {
    const page = await browser.newPage();
    await page.setViewport({ width: 1280, height: 900, deviceScaleFactor: 1 });
    await page.goto(pathToFileURL(path.join(runDir, 'index.html')).href, { waitUntil: 'load' });
    const target = path.join(args.outDir, 'overview.png');
    await page.screenshot({ path: target as `${string}.png`, fullPage: true });
    written.push(target);
  } finally {
    await browser.close();
  }
  process.stdout.write(`wrote ${written.join(', ')}\n`);
}

await main();
