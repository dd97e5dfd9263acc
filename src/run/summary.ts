/**
 * The `check` verb's table: one block per account with its status, errors
 * and breaches.
 */
import type { RunResult } from './build.ts';

export function checkTable(result: RunResult): string {
  const lines: string[] = [];
  const idWidth = Math.max(7, ...result.outcomes.map((o) => o.account.length));
  for (const outcome of result.outcomes) {
    const client = outcome.client ?? '';
    const status = outcome.status === 'failed' ? 'FAILED' : outcome.breaches > 0 ? `${outcome.breaches} breach${outcome.breaches === 1 ? '' : 'es'}` : 'ok';
    lines.push(`${outcome.account.padEnd(idWidth)}  ${status.padEnd(10)}  ${client}`);
    for (const error of outcome.errors) {
      lines.push(`${' '.repeat(idWidth)}  error       ${error.file}${error.line === null ? '' : `:${error.line}`}: ${error.message}`);
    }
    for (const check of outcome.figures?.checks ?? []) {
      if (check.status === 'pass') continue;
      lines.push(`${' '.repeat(idWidth)}  ${check.status.padEnd(10)}  ${check.id}: ${check.detail}`);
    }
  }
  return `${lines.join('\n')}\n`;
}
