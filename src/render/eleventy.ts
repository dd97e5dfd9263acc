/**
 * Renders the Nunjucks templates of templates/report with Eleventy's
 * programmatic API: `toJSON()` returns every page's HTML and quarterline
 * writes the files itself (atomically), so Eleventy never touches the
 * output folder. The configuration file .eleventy.js is passed explicitly
 * as configPath; each run's data and the formatting filters are added here.
 */
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import Eleventy from '@11ty/eleventy';
import type { OverviewView } from '../report/overview.ts';
import type { StatementView } from '../report/statement.ts';
import { TEMPLATES_DIR } from './assets.ts';
import { RenderError } from './errors.ts';
import { FILTERS } from './filters.ts';

/** The Eleventy configuration file of the project. */
export const ELEVENTY_CONFIG = fileURLToPath(new URL('../../.eleventy.js', import.meta.url));

/** A statement view with its charts rendered to SVG, as the templates read it. */
export type StatementPage = StatementView & {
  readonly svg: Readonly<Record<'growth' | 'allocation' | 'riskReturn' | 'distribution', string>>;
};

export interface RenderedPage {
  /** Output path relative to the run folder, with forward slashes. */
  readonly path: string;
  readonly content: string;
}

interface EleventyJsonEntry {
  readonly url: string | false;
  readonly inputPath: string;
  readonly outputPath: string | false;
  readonly content: string;
}

/** Renders one statement page per view (pagination over `statements`). */
export function renderStatementPages(statements: readonly StatementPage[]): Promise<RenderedPage[]> {
  return statements.length === 0 ? Promise.resolve([]) : renderTemplate('statement.njk', { statements }, statements.length);
}

/** Renders the adviser overview page. */
export function renderOverviewPage(overview: OverviewView): Promise<RenderedPage[]> {
  return renderTemplate('overview.njk', { overview }, 1);
}

/**
 * Renders one page template of templates/report (Eleventy's input is that
 * single file, so the other page templates stay out of the pass) with the
 * given global data. Returns each page's path (relative to the run folder)
 * and HTML, in a stable order.
 */
async function renderTemplate(template: string, data: Readonly<Record<string, unknown>>, expected: number): Promise<RenderedPage[]> {
  // Eleventy resolves its output folder but writes nothing in toJSON mode.
  const outputDir = path.join(TEMPLATES_DIR, '_site-unused');
  const eleventy = new Eleventy(path.join(TEMPLATES_DIR, template), outputDir, {
    configPath: ELEVENTY_CONFIG,
    quietMode: true,
    config: (eleventyConfig: EleventyUserConfig) => {
      for (const [name, value] of Object.entries(data)) eleventyConfig.addGlobalData(name, value);
      for (const [name, filter] of Object.entries(FILTERS)) eleventyConfig.addFilter(name, filter);
    },
  });
  eleventy.disableLogger();
  let entries: EleventyJsonEntry[];
  try {
    entries = (await eleventy.toJSON()) as EleventyJsonEntry[];
  } catch (error) {
    throw new RenderError(`the templates in ${TEMPLATES_DIR} could not be rendered: ${describe(error)}`, { cause: error });
  }
  const pages: RenderedPage[] = [];
  for (const entry of entries) {
    if (entry.url === false || entry.outputPath === false) continue;
    const relative = path.relative(outputDir, entry.outputPath).split(path.sep).join('/');
    if (relative.startsWith('..') || path.isAbsolute(relative)) {
      throw new RenderError(`a template wrote outside the run folder: ${entry.inputPath} → ${entry.outputPath}`);
    }
    pages.push({ path: relative, content: entry.content });
  }
  pages.sort((a, b) => (a.path < b.path ? -1 : a.path > b.path ? 1 : 0));
  if (pages.length !== expected) {
    throw new RenderError(`Internal error: Eleventy rendered ${pages.length} pages where ${expected} were expected; please report this`);
  }
  return pages;
}

/** The part of Eleventy's configuration API used here. */
interface EleventyUserConfig {
  addGlobalData(name: string, value: unknown): void;
  addFilter(name: string, filter: (...args: never[]) => unknown): void;
}

/** Eleventy wraps template errors; the innermost message names the template and line. */
function describe(error: unknown): string {
  const messages: string[] = [];
  let current: unknown = error;
  while (current instanceof Error && messages.length < 5) {
    messages.push(current.message);
    current = current.cause;
  }
  return messages.length > 0 ? messages.join(' ← ') : String(error);
}
