/**
 * The quarterline benchmark: prints figures, asserts nothing.
 *
 *   npm run bench [-- --accounts N] [--keep]
 *
 * 1. writes a synthetic book (default 1,000 accounts, 300 instruments,
 *    5 years of daily prices) unless it already exists;
 * 2. runs the whole build with PDFs, sampling the peak memory of the whole
 *    process tree (quarterline and Chromium) from /proc;
 * 3. runs it again with nothing changed;
 * 4. prints the same statements by the barest means: one Chromium, each
 *    HTML file opened and printed to PDF with nothing else, with as many
 *    pages at once as the build's --jobs;
 * 5. prints a table and writes bench/RESULTS.md.
 */
import { execFileSync, spawn } from 'node:child_process';
import { existsSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import puppeteer from 'puppeteer-core';
import { findChromium } from '../src/print/index.ts';

const args = process.argv.slice(2);
const option = (name: string, fallback: string): string => {
  const index = args.indexOf(name);
  return index >= 0 && args[index + 1] ? args[index + 1]! : fallback;
};
const accounts = Number(option('--accounts', '1000'));
const jobs = Number(option('--jobs', String(os.availableParallelism())));
const root = path.resolve(option('--dir', '.tmp/bench'));
const book = path.join(root, `book-${accounts}`);
const out = path.join(root, 'out');
const bareOut = path.join(root, 'bare');
const period = '2026-Q3';

function log(text: string): void {
  process.stderr.write(`bench: ${text}\n`);
}

/**
 * Memory (bytes) of a process and all its descendants, from /proc: the sum
 * of each process's proportional set size (Pss), which splits pages shared
 * between processes (Chromium's are many) among them instead of counting
 * them once per process as a sum of RSS would.
 */
function treeMemory(rootPid: number): number {
  const children = new Map<number, number[]>();
  for (const entry of readdirSync('/proc')) {
    if (!/^\d+$/.test(entry)) continue;
    try {
      const parent = Number(/PPid:\s+(\d+)/.exec(readFileSync(`/proc/${entry}/status`, 'utf8'))?.[1]);
      if (!children.has(parent)) children.set(parent, []);
      children.get(parent)!.push(Number(entry));
    } catch {
      // the process ended while we looked
    }
  }
  let total = 0;
  const stack = [rootPid];
  while (stack.length > 0) {
    const pid = stack.pop()!;
    try {
      total += Number(/Pss:\s+(\d+) kB/.exec(readFileSync(`/proc/${pid}/smaps_rollup`, 'utf8'))?.[1] ?? 0) * 1024;
    } catch {
      // gone
    }
    stack.push(...(children.get(pid) ?? []));
  }
  return total;
}

/** Runs a command, sampling its process tree's memory every 100 ms. */
function timed(command: string, commandArgs: string[]): Promise<{ seconds: number; peakBytes: number; code: number }> {
  return new Promise((resolve, reject) => {
    const started = performance.now();
    const child = spawn(command, commandArgs, { stdio: ['ignore', 'inherit', 'inherit'] });
    let peakBytes = 0;
    const sampler = setInterval(() => { peakBytes = Math.max(peakBytes, treeMemory(child.pid!)); }, 250);
    child.on('error', reject);
    child.on('exit', (code) => {
      clearInterval(sampler);
      resolve({ seconds: (performance.now() - started) / 1000, peakBytes, code: code ?? -1 });
    });
  });
}

/** One Chromium, a pool of `jobs` pages, each statement opened from disk and printed. Nothing else. */
async function barePrint(htmlFiles: readonly string[]): Promise<{ seconds: number; peakBytes: number }> {
  rmSync(bareOut, { recursive: true, force: true });
  execFileSync('mkdir', ['-p', bareOut]);
  const started = performance.now();
  let peakBytes = 0;
  const sampler = setInterval(() => { peakBytes = Math.max(peakBytes, treeMemory(process.pid)); }, 250);
  const browser = await puppeteer.launch({
    executablePath: findChromium()!,
    headless: true,
    args: ['--no-sandbox', '--disable-gpu', '--disable-dev-shm-usage', '--no-first-run', '--disable-background-networking', '--host-resolver-rules=MAP * ~NOTFOUND'],
  });
  let next = 0;
  await Promise.all(Array.from({ length: jobs }, async () => {
    const page = await browser.newPage();
    while (next < htmlFiles.length) {
      const file = htmlFiles[next++]!;
      await page.goto(`file://${file}`, { waitUntil: 'load' });
      const pdf = await page.pdf({ format: 'A4', printBackground: true });
      writeFileSync(path.join(bareOut, `${path.basename(path.dirname(file))}.pdf`), pdf);
    }
    await page.close();
  }));
  await browser.close();
  clearInterval(sampler);
  return { seconds: (performance.now() - started) / 1000, peakBytes };
}

const gib = (bytes: number): string => `${(bytes / 1024 ** 3).toFixed(2)} GiB`;

async function benchmark(): Promise<void> {
  if (!existsSync(path.join(book, 'accounts.csv'))) {
    log(`writing a synthetic book of ${accounts} accounts to ${book}`);
    const synth = await timed('node', ['bin/quarterline.js', 'synth', book, '--accounts', String(accounts), '--end', '2026-09-30']);
    log(`synthetic book written in ${synth.seconds.toFixed(1)} s`);
  }
  rmSync(out, { recursive: true, force: true });
  log('first run (everything)');
  const first = await timed('node', ['bin/quarterline.js', 'build', book, '--period', period, '--out', out, '--jobs', String(jobs)]);
  const record = JSON.parse(readFileSync(path.join(out, period, 'run.json'), 'utf8'));
  log('second run (nothing changed)');
  const second = await timed('node', ['bin/quarterline.js', 'build', book, '--period', period, '--out', out, '--jobs', String(jobs)]);
  const secondRecord = JSON.parse(readFileSync(path.join(out, period, 'run.json'), 'utf8'));
  if (JSON.stringify(secondRecord.accounts) !== JSON.stringify(record.accounts)) log('warning: the second run reported different accounts');
  const htmlFiles = readdirSync(path.join(out, period, 'accounts')).map((id) => path.join(out, period, 'accounts', id, 'index.html')).filter((file) => existsSync(file));
  log(`bare print of ${htmlFiles.length} statements`);
  const bareRun = await barePrint(htmlFiles);
  const bare = bareRun.seconds;

  const timings = record.timings as { load: number; compute: number; compute_expected_risk: number; html: number; pdf: number };
  const before = timings.load + timings.compute + timings.html;
  const rows: Array<[string, string, string, string]> = [
    ['whole run (first)', `${first.seconds.toFixed(1)} s`, '', ''],
    ['  load', `${timings.load.toFixed(1)} s`, '', ''],
    ['  compute', `${timings.compute.toFixed(1)} s`, '', ''],
    ['    of which expected risk, shortfall, optimal mix', `${timings.compute_expected_risk.toFixed(1)} s`, '', ''],
    ['  html', `${timings.html.toFixed(1)} s`, '', ''],
    ['  pdf', `${timings.pdf.toFixed(1)} s`, '', ''],
    ['bare print', `${bare.toFixed(1)} s`, '', ''],
    ['run / bare print', (first.seconds / bare).toFixed(2), '≤ 1.30', first.seconds / bare <= 1.3 ? 'met' : 'missed'],
    ['(load + compute + html) / run', `${((100 * before) / first.seconds).toFixed(1)} %`, '≤ 15 %', before / first.seconds <= 0.15 ? 'met' : 'missed'],
    ['peak memory (process tree, Pss)', gib(first.peakBytes), '< 1.5 GiB', first.peakBytes < 1.5 * 1024 ** 3 ? 'met' : 'missed'],
    ['  bare print, for comparison', gib(bareRun.peakBytes), '', ''],
    ['second run, nothing changed', `${second.seconds.toFixed(1)} s (${((100 * second.seconds) / first.seconds).toFixed(1)} %)`, '≤ 10 %', second.seconds / first.seconds <= 0.1 ? 'met' : 'missed'],
  ];
  const reported = record.accounts.filter((a: { status: string }) => a.status === 'reported').length;
  const pdfs = record.accounts.filter((a: { pdf: boolean }) => a.pdf).length;
  const machine = `${os.cpus().length} × ${os.cpus()[0]?.model ?? 'cpu'}, ${gib(os.totalmem())} memory, Node ${process.version}, ${os.type()} ${os.release()}`;
  const table = [
    `| figure | measured | target | |`,
    `|---|---|---|---|`,
    ...rows.map((row) => `| ${row.join(' | ')} |`),
  ].join('\n');
  const text = `# Benchmark results\n\nMachine: ${machine}.\nBook: ${accounts} synthetic accounts (\`quarterline synth --accounts ${accounts}\`: 300 instruments, 5 years of daily prices), period ${period}, \`--jobs ${jobs}\`.\nFirst run: ${reported} reported, ${pdfs} PDFs; the second run makes again only what changed (its own summary line, printed above the table, says how many statements it wrote and printed).\n\n${table}\n\nMeasured by \`npm run bench\` on ${new Date().toISOString().slice(0, 10)}.\n`;
  process.stdout.write(`${table}\n`);
  writeFileSync('bench/RESULTS.md', text);
  log('wrote bench/RESULTS.md');
}

await benchmark();
