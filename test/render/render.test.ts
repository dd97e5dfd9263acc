/**
 * The HTML of a run, rendered from the demo book: every statement and the
 * overview exist, carry no script, escape everything from the book, show
 * "not available" with reasons, embed their charts with text alternatives,
 * and come out byte-identical from identical input.
 */
import { existsSync } from 'node:fs';
import { readFile, readdir } from 'node:fs/promises';
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { PALETTE, cssVariable, paletteCss, type PaletteName } from '../../src/render/palette.ts';
import { overviewSourceOf, renderRunHtml, writeOverview } from '../../src/render/index.ts';
import { formatterFor } from '../../src/report/format.ts';
import { type AccountOutcome, type RunResult, writeAccountFigures } from '../../src/run/build.ts';
import { HOSTILE_CLIENT, demoResult, hostile, temporaryDir, unavailable, visibleText, withOutcomes } from './helpers.ts';

const SECTIONS = ['At a glance', 'Performance', 'Holdings', 'Activity', 'Risk', 'Mandate review', 'How the figures are calculated', 'Important information'];

let result: RunResult;
let runDir: string;
let files: string[];

async function render(run: RunResult, prefix: string): Promise<{ dir: string; files: string[] }> {
  const dir = path.join(await temporaryDir(prefix), run.period.label);
  await writeAccountFigures(run, dir);
  const rendered = await renderRunHtml(run, dir, run.timings);
  return { dir, files: rendered.files };
}

/** HTML with every quoted attribute value emptied, so escaped text inside values cannot look like markup. */
function withoutAttributeValues(html: string): string {
  return html.replace(/="[^"]*"/g, '=""');
}

async function statement(dir: string, account: string): Promise<string> {
  return readFile(path.join(dir, 'accounts', account, 'index.html'), 'utf8');
}

beforeAll(async () => {
  const demo = await demoResult();
  result = withOutcomes(demo, [hostile(demo.outcomes[0]!), unavailable(demo.outcomes[0]!)]);
  ({ dir: runDir, files } = await render(result, 'render'));
}, 120_000);

describe('the files of a run', () => {
  it('writes a statement for every reported account, the overview and the assets', () => {
    for (const outcome of result.outcomes) expect(existsSync(path.join(runDir, 'accounts', outcome.account, 'index.html'))).toBe(true);
    for (const asset of ['index.html', 'assets/statement.css', 'assets/overview.css', 'assets/palette.css', 'assets/fonts.css', 'assets/fonts/OFL.txt', 'assets/overview-sort.js']) {
      expect(existsSync(path.join(runDir, asset)), asset).toBe(true);
    }
    expect(files.every((file) => existsSync(file))).toBe(true);
  });
  it('leaves no temporary file behind (every file was written atomically)', async () => {
    const entries = await readdir(runDir, { recursive: true });
    expect(entries.filter((entry) => entry.includes('.tmp-'))).toEqual([]);
  });
  it('embeds the open-licensed font: every file fonts.css names is in the run', async () => {
    const css = await readFile(path.join(runDir, 'assets', 'fonts.css'), 'utf8');
    const urls = [...css.matchAll(/url\(([^)]+)\)/g)].map((match) => match[1]!);
    expect(urls.length).toBeGreaterThanOrEqual(4 * 7);
    for (const url of urls) expect(existsSync(path.join(runDir, 'assets', url)), url).toBe(true);
    expect(css).not.toMatch(/https?:/);
    expect(await readFile(path.join(runDir, 'assets', 'fonts', 'OFL.txt'), 'utf8')).toContain('SIL OPEN FONT LICENSE');
  });
  it('writes the palette once as CSS custom properties', async () => {
    const css = await readFile(path.join(runDir, 'assets', 'palette.css'), 'utf8');
    expect(css).toBe(paletteCss());
    for (const name of Object.keys(PALETTE) as PaletteName[]) expect(css).toContain(`${cssVariable(name)}: ${PALETTE[name]};`);
  });
});

describe('every statement', () => {
  it('has the sections in order, no script, and no NaN, undefined or null shown', async () => {
    for (const outcome of result.outcomes) {
      const html = await statement(runDir, outcome.account);
      const headings = [...html.matchAll(/<h2 id="[^"]+">([^<]+)<\/h2>/g)].map((match) => match[1]);
      expect(headings, outcome.account).toEqual(SECTIONS);
      expect(html).not.toMatch(/<script|<a href="javascript:/i);
      expect(withoutAttributeValues(html)).not.toMatch(/<[a-z][^>]*\son[a-z]+=/i);
      expect(visibleText(html)).not.toMatch(/\bNaN\b|\bundefined\b|\bnull\b|\[object Object\]/);
      expect(html).toContain('href="../../assets/statement.css"');
    }
  });
  it('inlines each chart as SVG with role="img", a label, a title, a description and a text summary', async () => {
    const html = await statement(runDir, 'TF-1001');
    const svgs = [...html.matchAll(/<svg [^>]*>/g)].map((match) => match[0]);
    expect(svgs).toHaveLength(4);
    for (const svg of svgs) {
      expect(svg).toMatch(/role="img"/);
      expect(svg).toMatch(/aria-label="[^"]+"/);
    }
    expect(html.match(/<title>/g)).toHaveLength(5); // the page's own and one per chart
    expect(html.match(/<desc id="chart-/g)).toHaveLength(4);
    expect(html.match(/<figcaption>/g)).toHaveLength(4);
    // Ids stay unique across the charts of a page.
    const ids = [...html.matchAll(/\sid="([^"]+)"/g)].map((match) => match[1]);
    expect(new Set(ids).size).toBe(ids.length);
  });
  it('draws the charts in the palette\'s colours', async () => {
    const html = await statement(runDir, 'TF-1003');
    for (const colour of [PALETTE.account, PALETTE.benchmark, PALETTE.optimal, PALETTE.breach, PALETTE.tail]) expect(html).toContain(colour);
  });
  it('shows the key figures of figures.json formatted in the client\'s locale', async () => {
    for (const outcome of result.outcomes.filter((o) => /^TF-/.test(o.account))) {
      const figures = outcome.figures!;
      const format = formatterFor(figures.locale);
      const text = visibleText(await statement(runDir, outcome.account));
      const headline = figures.returns.period ?? figures.returns.since_inception!;
      for (const expected of [
        format.money(figures.value.end, figures.base_currency),
        format.money(figures.value.start, figures.base_currency),
        format.percent(headline.twr_net, { signed: true }),
        format.percent(headline.benchmark, { signed: true }),
        format.amount(figures.holdings[0]!.value),
      ]) {
        expect(text, `${outcome.account}: ${expected}`).toContain(expected.replace(/\s+/g, ' '));
      }
    }
  });
  it('formats a de-DE or nl-NL client\'s numbers their way (TF-1006, nl-NL)', async () => {
    const figures = result.outcomes.find((o) => o.account === 'TF-1006')!.figures!;
    expect(figures.locale).toBe('nl-NL');
    const text = visibleText(await statement(runDir, 'TF-1006'));
    expect(text).toContain(formatterFor('nl-NL').money(figures.value.end, 'EUR').replace(/\s+/g, ' '));
    expect(text).toMatch(/€ \d{3}\.\d{3},\d{2}/);
  });
});

describe('a hostile client name', () => {
  it('is escaped everywhere and never becomes markup', async () => {
    const html = await statement(runDir, 'HOSTILE-1');
    expect(html).not.toMatch(/<script|<img/i);
    expect(withoutAttributeValues(html)).not.toMatch(/<[a-z][^>]*\son[a-z]+=/i);
    expect(html).toContain('&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt;');
    expect(visibleText(html)).toContain(HOSTILE_CLIENT);
    // The page title and the masthead carry it as text; right-to-left runs are isolated.
    expect(html).toMatch(/<title>Statement 2026-Q3: &lt;script&gt;/);
    expect(html).toMatch(/<dd><bdi>&lt;script&gt;/);
    // Markup in a class label stays text in the tables and inside the chart's SVG; so do names and notes.
    expect(html).toContain('&lt;script&gt;alert(2)&lt;/script&gt;Equities &amp; &quot;Co&quot;');
    const allocationSvg = html.slice(html.indexOf('<svg', html.indexOf('id="holdings"')));
    expect(allocationSvg.slice(0, allocationSvg.indexOf('</svg>'))).toContain('&lt;script&gt;alert(2)&lt;/script&gt;Equities &amp;');
    expect(html).toContain('&lt;b onmouseover=&quot;x()&quot;&gt;');
    expect(html).toContain('&lt;a href=&quot;javascript:alert(3)&quot;&gt;click&lt;/a&gt;');
    expect(html).not.toMatch(/<b |<a href="javascript/);
  });
  it('is escaped in the overview', async () => {
    const html = await readFile(path.join(runDir, 'index.html'), 'utf8');
    expect(html.match(/<script/g)).toHaveLength(1); // the optional sort script, by src only
    expect(html).toContain('<script src="assets/overview-sort.js" defer></script>');
    expect(html).not.toMatch(/<img/i);
    expect(withoutAttributeValues(html)).not.toMatch(/<[a-z][^>]*\son[a-z]+=/i);
    expect(html).toContain('data-value="&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt; &quot;Quoted&quot; &amp; Sons');
    expect(html).toContain('&lt;img src=x onerror=alert(1)&gt;');
  });
});

describe('figures that are not available', () => {
  it('show "not available" with the reason instead of a blank', async () => {
    const text = visibleText(await statement(runDir, 'NULLS-1'));
    for (const expected of [
      'Realised risk: not available. Realised risk needs at least 12 complete months since inception; this account has 3.',
      'Expected risk: not available. Expected risk is unavailable: no covariance estimate for EQ-TEST.',
      'Growth chart: not available. The daily net return index is unavailable: a test reason for the growth chart.',
      'The model mix: not available.',
      'This period: the money-weighted return is unavailable',
      'This period: the benchmark return is unavailable: index IX-TEST has no level on or before 2026-06-30.',
      'Since inception: the gross TWR is unavailable: a test reason.',
      'No check of your mandate is outside its limits; one could not be assessed.',
    ]) expect(text).toContain(expected);
    expect(text.match(/not available/g)!.length).toBeGreaterThanOrEqual(8);
  });
  it('leave no chart but the allocation', async () => {
    const html = await statement(runDir, 'NULLS-1');
    expect(html.match(/<svg /g)).toHaveLength(1);
  });
});

describe('the overview', () => {
  it('lists failed accounts with their errors and reported ones by breaches, most first', async () => {
    const failed: AccountOutcome = {
      account: 'ZZ-FAILED', client: 'Failing & Co', status: 'failed', breaches: 0, pdf: false, figures: null,
      errors: [{ file: 'transactions.csv', line: 12, message: 'a sell of 10 EQ-X exceeds the 5 held' }],
    };
    const run = withOutcomes(result, [failed]);
    const dir = path.join(await temporaryDir('overview'), run.period.label);
    await writeOverview(overviewSourceOf(run, { load: 1.25, compute: 2.5, compute_expected_risk: 0.5, html: 3, pdf: 4.125 }), dir, { pdf: new Map([['TF-1001', { ok: true }], ['TF-1002', { ok: false, error: 'printing TF-1002 did not finish within 30.0 s' }]]) });
    const html = await readFile(path.join(dir, 'index.html'), 'utf8');
    const accountOrder = [...html.matchAll(/<th scope="row" data-value="([^"]+)">/g)].map((match) => match[1]);
    const breachesOf = (id: string): number => run.outcomes.find((o) => o.account === id)!.breaches;
    const counts = accountOrder.map((id) => breachesOf(id!));
    expect(counts).toEqual([...counts].sort((a, b) => b - a));
    expect(accountOrder[0]).toBe('TF-1003');
    expect(html).toContain('transactions.csv:12: a sell of 10 EQ-X exceeds the 5 held');
    expect(html).toContain('Failing &amp; Co');
    expect(html).toContain('<a href="accounts/TF-1001/statement.pdf">PDF</a>');
    expect(html).toContain('printing TF-1002 did not finish within 30.0 s');
    expect(html).not.toContain('accounts/TF-1002/statement.pdf');
    expect(html).toContain('<a href="accounts/TF-1002/index.html">HTML</a>');
    expect(html).toContain('<a href="accounts/TF-1002/figures.json">figures.json</a>');
    expect(visibleText(html)).toContain('Printing PDF 4.13 s');
  });
});

describe('identical input', () => {
  it('gives byte-identical statements, overview and assets', async () => {
    const again = await render(result, 'render-again');
    const relative = (file: string, dir: string): string => path.relative(dir, file);
    expect(again.files.map((file) => relative(file, again.dir))).toEqual(files.map((file) => relative(file, runDir)));
    for (const file of files) {
      const twin = path.join(again.dir, relative(file, runDir));
      expect((await readFile(twin)).equals(await readFile(file)), relative(file, runDir)).toBe(true);
    }
  }, 120_000);
});
