/**
 * A `mail --send` in a process of its own, for the crash tests (the test
 * kills it with SIGKILL mid-run) and the check that no output holds the
 * password. Reads the credentials from the environment as the command line
 * does. Arguments: RUN ARCHIVE SMTP_URL [RESEND_ID ...]
 */
import { formatMailSummary, mailExitCode, prepareMail, sendMail } from '../../src/mail/index.ts';

const [runDir, archiveDir, smtpUrl, ...resend] = process.argv.slice(2);
if (!runDir || !archiveDir || !smtpUrl) {
  process.stderr.write('usage: send-child.ts RUN ARCHIVE SMTP_URL [RESEND_ID ...]\n');
  process.exit(2);
}
try {
  const prepared = await prepareMail({ runDir, archiveDir, from: null });
  const summary = await sendMail(prepared, {
    smtpUrl,
    user: process.env['QUARTERLINE_SMTP_USER'] ?? null,
    password: process.env['QUARTERLINE_SMTP_PASSWORD'] ?? null,
    ratePerSecond: 1000,
    resend,
    retryDelaysMs: [5, 10],
    tls: { allowSelfSignedOnLoopback: true },
    log: (line) => process.stderr.write(`${line}\n`),
  });
  process.stdout.write(formatMailSummary(summary));
  process.exitCode = mailExitCode(summary);
} catch (error) {
  process.stderr.write(`${error instanceof Error ? error.message : String(error)}\n`);
  process.exitCode = 2;
}
