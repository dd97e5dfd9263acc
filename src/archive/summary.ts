/**
 * What `sign` and `verify` print: one line per fact, paths relative to the
 * archive, never a passphrase or key.
 */
import type { SignResult } from './sign.ts';
import type { VerifyReport } from './verify.ts';

/** Lines for `sign`: recovered work, skipped accounts, then the summary with the manifest's SHA-256. */
export function signSummary(result: SignResult, archiveDir: string): string {
  const lines = [
    ...result.recovered.map((note) => `recovered: ${note}`),
    ...result.skipped.map((entry) => `not signed ${entry.account}: ${entry.reason}`),
    `signed ${result.signed.length} statement${result.signed.length === 1 ? '' : 's'} of ${result.period}, ${result.skipped.length} not signed; filed in ${archiveDir}/${result.period}`,
    `manifest sha256 ${result.manifestSha256} (keep it outside the archive)`,
  ];
  return `${lines.join('\n')}\n`;
}

/** Lines for `verify`: each problem as `path: problem`, then the summary. */
export function verifySummary(report: VerifyReport): string {
  const { files, signatures, periods } = report.checked;
  const counts = `${periods} period${periods === 1 ? '' : 's'}, ${files} files, ${signatures} signatures checked`;
  const lines = [
    ...report.problems.map((entry) => `${entry.path}: ${entry.problem}`),
    report.ok ? `archive intact: ${counts}` : `${report.problems.length} problem${report.problems.length === 1 ? '' : 's'}: ${counts}`,
  ];
  return `${lines.join('\n')}\n`;
}
