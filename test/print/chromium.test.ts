/**
 * Finding Chromium, the request allowlist, the header and footer templates
 * (escaped by us, since Chromium renders them from our strings) and the
 * outline repair of printed PDFs.
 */
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { PDFDict, PDFDocument, PDFHexString, PDFName, PDFString } from 'pdf-lib';
import { describe, expect, it } from 'vitest';
import { CHROMIUM_MISSING_MESSAGE, CHROMIUM_PATHS, findChromium, isAllowedUrl } from '../../src/print/index.ts';
import { repairOutline } from '../../src/print/metadata.ts';
import { escapeHtml, footerTemplate, headerTemplate } from '../../src/print/templates.ts';
import { HOSTILE_CLIENT } from '../render/helpers.ts';

describe('findChromium', () => {
  const only = (...present: string[]) => (file: string): boolean => present.includes(file);
  it('takes QUARTERLINE_CHROMIUM first when it names a file', () => {
    expect(findChromium({ QUARTERLINE_CHROMIUM: '/opt/chrome/chrome' }, only('/opt/chrome/chrome', '/usr/bin/chromium'))).toBe('/opt/chrome/chrome');
  });
  it('finds nothing when QUARTERLINE_CHROMIUM names a missing file, rather than printing with another browser', () => {
    expect(findChromium({ QUARTERLINE_CHROMIUM: '/opt/missing' }, only('/usr/bin/chromium'))).toBeNull();
  });
  it('searches the usual paths in order', () => {
    expect(CHROMIUM_PATHS).toEqual(['/usr/bin/chromium', '/usr/bin/chromium-browser', '/usr/bin/google-chrome']);
    expect(findChromium({}, only('/usr/bin/google-chrome', '/usr/bin/chromium-browser'))).toBe('/usr/bin/chromium-browser');
    expect(findChromium({ QUARTERLINE_CHROMIUM: '' }, only('/usr/bin/google-chrome'))).toBe('/usr/bin/google-chrome');
    expect(findChromium({}, only())).toBeNull();
  });
  it('says how to install it when it is missing', () => {
    expect(CHROMIUM_MISSING_MESSAGE).toContain('apt-get install chromium');
    expect(CHROMIUM_MISSING_MESSAGE).toContain('QUARTERLINE_CHROMIUM');
  });
});

describe('isAllowedUrl', () => {
  const root = path.resolve('/srv/out/2026-Q3');
  it('allows the run folder\'s files, data: and about:blank', () => {
    expect(isAllowedUrl(pathToFileURL(path.join(root, 'accounts/A-1/index.html')).href, root)).toBe(true);
    expect(isAllowedUrl(pathToFileURL(path.join(root, 'assets/fonts/x.woff2')).href, root)).toBe(true);
    expect(isAllowedUrl('data:font/woff2;base64,AAAA', root)).toBe(true);
    expect(isAllowedUrl('about:blank', root)).toBe(true);
  });
  it('refuses everything else, including ../ escapes and look-alike folders', () => {
    expect(isAllowedUrl('https://statements.example.invalid/x.css', root)).toBe(false);
    expect(isAllowedUrl('http://localhost.invalid:8080/', root)).toBe(false);
    expect(isAllowedUrl('file:///etc/passwd', root)).toBe(false);
    expect(isAllowedUrl(`${pathToFileURL(root).href}/../2026-Q2/index.html`, root)).toBe(false);
    expect(isAllowedUrl(pathToFileURL(`${root}-old/index.html`).href, root)).toBe(false);
    expect(isAllowedUrl('chrome://crash', root)).toBe(false);
  });
});

describe('header and footer templates', () => {
  const header = { firm: 'Firm & Partners <Ltd>', client: HOSTILE_CLIENT, account: 'A-1', period: '2026-Q3' };
  it('escape every text from the book', () => {
    const html = headerTemplate(header);
    expect(html).not.toMatch(/<script|<img/);
    expect(html).toContain(escapeHtml(HOSTILE_CLIENT));
    expect(html).toContain('Firm &amp; Partners &lt;Ltd&gt;');
    expect(escapeHtml(`<a href="x" title='y'>&</a>`)).toBe('&lt;a href=&quot;x&quot; title=&#39;y&#39;&gt;&amp;&lt;/a&gt;');
  });
  it('isolate the client name and cut it with an ellipsis instead of widening the line', () => {
    const html = headerTemplate(header);
    expect(html).toContain(`<bdi>${escapeHtml(HOSTILE_CLIENT)}</bdi>`);
    expect(html).toMatch(/text-overflow:ellipsis/);
  });
  it('number the pages', () => {
    expect(footerTemplate(header)).toContain('Page <span class="pageNumber"></span> of <span class="totalPages"></span>');
  });
});

describe('repairOutline', () => {
  it('halves titles that Chromium doubled and leaves the others', async () => {
    const document = await PDFDocument.create();
    const context = document.context;
    const titles = ['ActivityActivity', 'At a glance', 'Risk', 'Mandate reviewMandate review'];
    const refs = titles.map(() => context.nextRef());
    const outlines = context.nextRef();
    titles.forEach((title, i) => {
      context.assign(refs[i]!, context.obj({
        Title: i % 2 === 0 ? PDFHexString.fromText(title) : PDFString.of(title),
        Parent: outlines,
        ...(i > 0 ? { Prev: refs[i - 1]! } : {}),
        ...(i < titles.length - 1 ? { Next: refs[i + 1]! } : {}),
      }));
    });
    context.assign(outlines, context.obj({ Type: 'Outlines', First: refs[0]!, Last: refs.at(-1)!, Count: titles.length }));
    document.catalog.set(PDFName.of('Outlines'), outlines);
    expect(repairOutline(document)).toBe(2);
    const after = refs.map((ref) => (context.lookup(ref) as PDFDict).lookup(PDFName.of('Title')) as PDFString | PDFHexString);
    expect(after.map((title) => title.decodeText())).toEqual(['Activity', 'At a glance', 'Risk', 'Mandate review']);
  });
});
