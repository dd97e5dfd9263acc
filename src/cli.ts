/**
 * The quarterline command line: the only place that reads argv and the
 * environment, prints, and decides exit codes.
 *
 * Exit codes: 0 every selected account reported (breaches included);
 * 1 at least one account failed, the others were reported; 2 the run could
 * not start (bad arguments, unreadable book, invalid book.yaml or
 * mandates.yaml), nothing written.
 */
import { readFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { Command, CommanderError, InvalidArgumentError, Option } from 'commander';
import { BookError, QuarterlineError, UsageError, formatDiagnostic } from './errors.ts';
import { type RunResult, type Shard, computeRun, mergeShards } from './run/build.ts';
import { overviewPath, runBuild } from './run/pipeline.ts';
import { type Progress, lineProgress, terminalProgress } from './run/progress.ts';
import { checkTable } from './run/summary.ts';
import { lastQuarterEndBefore, writeSyntheticBook } from './synth/synthetic.ts';
import { isoDate } from './dates.ts';
import { parsePeriod } from './analysis/periods.ts';
import { signRun, signSummary, verifyArchive, verifySummary, writeTestCertificate } from './archive/index.ts';
import { formatMailSummary, mailExitCode, prepareMail, sendMail, summaryOfPrepared } from './mail/index.ts';

export const EXIT_OK = 0;
export const EXIT_ACCOUNT_FAILED = 1;
export const EXIT_CANNOT_START = 2;

interface Io {
  readonly out: (text: string) => void;
  readonly err: (text: string) => void;
  /** Progress display: a live bar on a terminal, plain lines otherwise. */
  readonly progress: () => Progress;
}

const processIo: Io = {
  out: (text) => process.stdout.write(text),
  err: (text) => process.stderr.write(text),
  progress: () => (process.stderr.isTTY ? terminalProgress(process.stderr) : lineProgress((text) => process.stderr.write(text))),
};

function shardSpec(value: string): Shard {
  const match = /^(\d+)\/(\d+)$/.exec(value);
  const index = Number(match?.[1]);
  const count = Number(match?.[2]);
  if (!match || count < 1 || index < 1 || index > count) throw new InvalidArgumentError(`--shard must be k/n with 1 ≤ k ≤ n, e.g. 2/8; got "${value}"`);
  return { index, count };
}

function positiveInteger(name: string) {
  return (value: string): number => {
    const parsed = Number(value);
    if (!Number.isInteger(parsed) || parsed < 1) throw new InvalidArgumentError(`${name} must be a whole number of at least 1, got "${value}"`);
    return parsed;
  };
}

function positiveNumber(name: string) {
  return (value: string): number => {
    const parsed = Number(value);
    if (!Number.isFinite(parsed) || parsed <= 0) throw new InvalidArgumentError(`${name} must be a number above 0, got "${value}"`);
    return parsed;
  };
}

function accountList(value: string): string[] {
  const ids = value.split(',').map((id) => id.trim()).filter((id) => id.length > 0);
  if (ids.length === 0) throw new InvalidArgumentError('--accounts needs at least one account id, e.g. --accounts A-1001,A-1002');
  return ids;
}

/** Options shared by the verbs that run a period, declared once. */
const periodOption = (): Option => new Option('--period <P>', 'reporting period: YYYY-Qn, YYYY-MM or YYYY').makeOptionMandatory();
const accountsOption = (): Option => new Option('--accounts <IDS>', 'only these account ids, comma-separated').argParser(accountList);

function exitCodeOf(result: RunResult): number {
  return result.outcomes.some((outcome) => outcome.status === 'failed') ? EXIT_ACCOUNT_FAILED : EXIT_OK;
}

function summaryLine(result: RunResult): string {
  const reported = result.outcomes.filter((o) => o.status === 'reported').length;
  const failed = result.outcomes.length - reported;
  const breaches = result.outcomes.reduce((sum, o) => sum + o.breaches, 0);
  return `${reported} reported, ${failed} failed, ${breaches} breaches`;
}

const toolVersion = (JSON.parse(readFileSync(new URL('../package.json', import.meta.url), 'utf8')) as { version: string }).version;

/** A secret from the environment variable a flag names; never from the flag itself. */
function secretFrom(variable: string, what: string, flag: string): string {
  const value = process.env[variable];
  if (!value) throw new UsageError(`set ${what} in the environment variable ${variable} (named by ${flag}); it is never taken from a flag`);
  return value;
}

function buildProgram(io: Io, setExitCode: (code: number) => void): Command {
  const program = new Command('quarterline')
    .description('Quarterly client statements for a wealth manager\'s book: figures, statements, overview.')
    .configureOutput({ writeOut: io.out, writeErr: io.err })
    .version(toolVersion)
    .exitOverride()
    .showHelpAfterError();

  program.command('build')
    .description('the reporting run: validate, compute, write statements, figures, the overview and the run record')
    .argument('<BOOK>', 'the book folder')
    .addOption(periodOption())
    .option('--out <DIR>', 'output folder', './out')
    .addOption(accountsOption())
    .option('--no-pdf', 'skip printing PDFs')
    .option('--jobs <N>', 'parallel print jobs', positiveInteger('--jobs'), os.availableParallelism())
    .option('--shard <k/n>', 'report only the k-th of n deterministic shares of the accounts (merge them with `quarterline merge`)', shardSpec)
    .action(async (bookDir: string, options: { period: string; out: string; accounts?: string[]; pdf: boolean; jobs: number; shard?: Shard }) => {
      const built = await runBuild({
        bookDir,
        period: options.period,
        accounts: options.accounts ?? null,
        shard: options.shard ?? null,
        progress: io.progress(),
        outDir: options.out,
        pdf: options.pdf,
        jobs: options.jobs,
      });
      const { result, runDir } = built;
      for (const outcome of result.outcomes.filter((o) => o.status === 'failed')) {
        const first = outcome.errors[0];
        io.err(`failed ${outcome.account}: ${first ? `${first.file}${first.line === null ? '' : `:${first.line}`}: ${first.message}` : 'unknown reason'}\n`);
      }
      if (built.pdfStepError) io.err(`PDFs were not printed: ${built.pdfStepError}\nThe HTML statements, figures and overview were written.\n`);
      const timings = Object.entries(result.timings).map(([stage, seconds]) => `${stage} ${seconds.toFixed(1)} s`).join(', ');
      const made = `${built.rendered} statements written, ${built.printed} printed (the others were current)`;
      const where = options.shard ? `shard ${options.shard.index}/${options.shard.count} recorded in ${runDir}` : `overview: ${overviewPath(runDir)}`;
      io.out(`${summaryLine(result)}; ${made}; ${timings}; ${where}\n`);
      setExitCode(built.pdfStepError ? EXIT_ACCOUNT_FAILED : exitCodeOf(result));
    });

  program.command('merge')
    .description('after `build --shard k/n` for every k: write the run\'s overview and run.json from the shards')
    .argument('<RUN>', 'the run folder, OUT/P')
    .action(async (runDir: string) => {
      if (!parsePeriod(path.basename(path.resolve(runDir)))) throw new UsageError(`${runDir} is not a run folder; give OUT/P, e.g. out/2026-Q3`);
      const merged = await mergeShards(runDir);
      io.out(`merged ${merged.accounts} accounts (${merged.failed} failed); overview: ${path.join(runDir, 'index.html')}\n`);
      setExitCode(merged.failed > 0 ? EXIT_ACCOUNT_FAILED : EXIT_OK);
    });

  program.command('check')
    .description('validate the book and compute the checks only; prints each account\'s errors and breaches')
    .argument('<BOOK>', 'the book folder')
    .addOption(periodOption())
    .addOption(accountsOption())
    .option('--json', 'print JSON instead of a table')
    .action(async (bookDir: string, options: { period: string; accounts?: string[]; json?: boolean }) => {
      const result = await computeRun({ bookDir, period: options.period, accounts: options.accounts ?? null, progress: io.progress() });
      if (options.json) {
        io.out(`${JSON.stringify(result.outcomes.map((o) => ({ account: o.account, status: o.status, errors: o.errors, breaches: o.breaches, checks: o.figures?.checks ?? [] })), null, 2)}\n`);
      } else {
        io.out(checkTable(result));
        io.out(`${summaryLine(result)}\n`);
      }
      setExitCode(exitCodeOf(result));
    });

  program.command('sign')
    .description('sign every reported statement of a run and file it in the write-once archive')
    .argument('<RUN>', 'the run folder, OUT/P')
    .requiredOption('--cert <FILE.p12>', "the signer's PKCS#12 certificate")
    .option('--passphrase-env <VAR>', "environment variable holding the certificate's passphrase", 'QUARTERLINE_CERT_PASSPHRASE')
    .option('--archive <DIR>', 'archive folder', './archive')
    .addOption(accountsOption())
    .option('--supersede', 'replace the archived version of the period, keeping it under superseded/')
    .option('--reason <TEXT>', 'why the archived version is superseded (required with --supersede)')
    .action(async (runDir: string, options: { cert: string; passphraseEnv: string; archive: string; accounts?: string[]; supersede?: boolean; reason?: string }) => {
      if (options.supersede && !options.reason?.trim()) throw new UsageError('--supersede needs --reason "why the archived version is replaced"');
      if (!options.supersede && options.reason !== undefined) throw new UsageError('--reason goes with --supersede');
      const result = await signRun({
        runDir,
        certFile: options.cert,
        passphrase: secretFrom(options.passphraseEnv, "the certificate's passphrase", '--passphrase-env'),
        archiveDir: options.archive,
        accounts: options.accounts ?? null,
        supersede: options.supersede ? { reason: options.reason! } : null,
        now: new Date(),
        toolVersion,
      });
      io.out(signSummary(result, options.archive));
      setExitCode(result.skipped.length > 0 ? EXIT_ACCOUNT_FAILED : EXIT_OK);
    });

  program.command('verify')
    .description('check every file, signature and manifest of the archive; exit 0 only when all is intact')
    .argument('<ARCHIVE>', 'the archive folder')
    .option('--period <P>', 'only this period (its versions and its link to the period before)')
    .action(async (archiveDir: string, options: { period?: string }) => {
      const report = await verifyArchive({ archiveDir, period: options.period ?? null });
      io.out(verifySummary(report));
      setExitCode(report.ok ? EXIT_OK : EXIT_ACCOUNT_FAILED);
    });

  program.command('keygen')
    .description('write a self-signed test certificate (PKCS#12) for trials and tests, not for real statements')
    .requiredOption('--out <FILE.p12>', 'the file to write (never overwritten)')
    .option('--name <NAME>', 'signer name (certificate common name)', 'quarterline test signer')
    .option('--passphrase-env <VAR>', 'environment variable holding the passphrase', 'QUARTERLINE_CERT_PASSPHRASE')
    .action(async (options: { out: string; name: string; passphraseEnv: string }) => {
      await writeTestCertificate({ out: options.out, name: options.name, passphrase: secretFrom(options.passphraseEnv, 'the passphrase', '--passphrase-env') });
      io.out(`wrote ${options.out}: a self-signed test certificate for "${options.name}", valid two years; for trials only\n`);
    });

  program.command('mail')
    .description('prepare one e-mail per statement of a run (RUN/mail/ID.eml); with --send deliver each over SMTP at most once')
    .argument('<RUN>', 'the run folder, OUT/P')
    .option('--archive <DIR>', 'archive of signed statements', './archive')
    .option('--from <ADDR>', 'sender address (default: firm.email of book.yaml)')
    .option('--send', 'deliver the messages (without it nothing leaves the machine)')
    .option('--smtp <URL>', 'smtp://HOST[:PORT] (STARTTLS when offered) or smtps://HOST[:PORT]; credentials only from QUARTERLINE_SMTP_USER / QUARTERLINE_SMTP_PASSWORD')
    .option('--resend <ID>', 'send this account again even if the ledger shows it sent or unknown (repeatable)', (value: string, all: string[]) => [...all, ...value.split(',')], [] as string[])
    .option('--rate <N>', 'at most N messages per second (fractions allowed)', positiveNumber('--rate'), 2)
    .action(async (runDir: string, options: { archive: string; from?: string; send?: boolean; smtp?: string; resend: string[]; rate: number }) => {
      if (Boolean(options.send) !== Boolean(options.smtp)) throw new UsageError(options.send ? '--send needs --smtp URL' : '--smtp needs --send');
      if (!options.send && options.resend.length > 0) throw new UsageError('--resend needs --send');
      const prepared = await prepareMail({ runDir, archiveDir: options.archive, from: options.from ?? null });
      const summary = options.send
        ? await sendMail(prepared, {
          smtpUrl: options.smtp!,
          user: process.env['QUARTERLINE_SMTP_USER'] ?? null,
          password: process.env['QUARTERLINE_SMTP_PASSWORD'] ?? null,
          ratePerSecond: options.rate,
          resend: options.resend,
          log: (line) => io.err(`${line}\n`),
        })
        : summaryOfPrepared(prepared);
      io.out(formatMailSummary(summary));
      setExitCode(mailExitCode(summary));
    });

  program.command('synth')
    .description('write a synthetic book of the given size, for trials and benchmarks')
    .argument('<DIR>', 'the folder to write (created)')
    .requiredOption('--accounts <N>', 'number of accounts', positiveInteger('--accounts'))
    .option('--instruments <M>', 'number of instruments', positiveInteger('--instruments'), 300)
    .option('--years <Y>', 'years of daily history', positiveInteger('--years'), 5)
    .option('--end <DATE>', 'last day of the history (default: the last quarter end before today)')
    .option('--seed <S>', 'random seed', positiveInteger('--seed'), 1)
    .action(async (dir: string, options: { accounts: number; instruments: number; years: number; end?: string; seed: number }) => {
      const end = options.end ?? isoDate(lastQuarterEndBefore(Math.floor(Date.now() / 86_400_000)));
      if (!/^\d{4}-\d{2}-\d{2}$/.test(end)) throw new UsageError(`--end "${end}" is not a date; write YYYY-MM-DD`);
      const written = await writeSyntheticBook(dir, { accounts: options.accounts, instruments: options.instruments, years: options.years, end, seed: options.seed });
      io.out(`wrote ${dir}: ${Object.entries(written.files).map(([file, rows]) => `${file} ${rows} rows`).join(', ')}\n`);
    });

  return program;
}

/** Runs the command line; returns the exit code. */
export async function main(argv: readonly string[], io: Io = processIo): Promise<number> {
  let exitCode = EXIT_OK;
  const program = buildProgram(io, (code) => { exitCode = code; });
  try {
    await program.parseAsync([...argv], { from: 'user' });
    return exitCode;
  } catch (error) {
    if (error instanceof CommanderError) {
      return error.exitCode === 0 ? EXIT_OK : EXIT_CANNOT_START;
    }
    if (error instanceof BookError) {
      io.err(`The book cannot be used; nothing was written:\n${error.diagnostics.map((d) => `  ${formatDiagnostic(d)}`).join('\n')}\n`);
      return EXIT_CANNOT_START;
    }
    if (error instanceof QuarterlineError) {
      io.err(`${error.message}\n`);
      return EXIT_CANNOT_START;
    }
    io.err(`Internal error: ${error instanceof Error ? error.message : String(error)}\nPlease report this, with the command you ran.\n`);
    if (process.env['QUARTERLINE_DEBUG'] && error instanceof Error) io.err(`${error.stack}\n`);
    return EXIT_CANNOT_START;
  }
}
