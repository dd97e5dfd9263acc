/**
 * A plain adviser overview of a run (one table, no script). Every value from
 * the book is escaped; it is never trusted as HTML.
 */
import type { OverviewData } from './build.ts';

const ESCAPES: Record<string, string> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };

/** Escapes text for HTML element content and quoted attribute values. */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (character) => ESCAPES[character]!);
}

function percent(value: number | null | undefined): string {
  return value === null || value === undefined ? '–' : `${(value * 100).toFixed(2)} %`;
}

export function renderOverview(overview: OverviewData): string {
  const timings = overview.timings;
  const rows = [...overview.outcomes]
    .sort((a, b) => (a.status === b.status ? b.breaches - a.breaches : a.status === 'failed' ? -1 : 1) || (a.account < b.account ? -1 : 1))
    .map((outcome) => {
      const figures = outcome.figures;
      const period = figures?.returns.period ?? figures?.returns.since_inception ?? null;
      const link = `accounts/${encodeURIComponent(outcome.account)}/figures.json`;
      const errors = outcome.errors.map((error) => `<li>${escapeHtml(`${error.file}${error.line === null ? '' : `:${error.line}`}: ${error.message}`)}</li>`).join('');
      return `<tr class="${outcome.status}"><td>${escapeHtml(outcome.account)}</td><td>${escapeHtml(outcome.client ?? '')}</td>`
        + `<td>${outcome.status}</td><td class="num">${figures ? figures.value.end.toFixed(2) : '–'} ${figures ? escapeHtml(figures.base_currency) : ''}</td>`
        + `<td class="num">${percent(period?.twr_net)}</td><td class="num">${percent(period?.benchmark)}</td><td class="num">${percent(period?.excess_arithmetic)}</td>`
        + `<td class="num">${outcome.breaches}</td><td>${figures ? `<a href="${link}">figures.json</a>` : `<ul>${errors}</ul>`}</td></tr>`;
    })
    .join('\n');
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>Run ${escapeHtml(overview.period)}: overview</title>
<style>body{font-family:sans-serif;margin:2rem}table{border-collapse:collapse}td,th{padding:.25rem .5rem;border-bottom:1px solid #ccc;text-align:left}.num{text-align:right}.failed{background:#fdecea}</style></head>
<body><h1>${escapeHtml(overview.firm)}: run ${escapeHtml(overview.period)}</h1>
<table><thead><tr><th>Account</th><th>Client</th><th>Status</th><th>Value</th><th>Period return</th><th>Benchmark</th><th>Difference</th><th>Breaches</th><th>Details</th></tr></thead>
<tbody>
${rows}
</tbody></table>
<p>Timings (s): load ${timings.load}, compute ${timings.compute}, html ${timings.html}, pdf ${timings.pdf}</p>
</body></html>
`;
}
