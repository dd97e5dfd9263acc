/**
 * The shared assets of a run (RUN/assets/): stylesheets from
 * templates/report/assets, the palette as CSS custom properties, and the
 * open-licensed Source Sans 3 font (SIL OFL 1.1, from
 * @fontsource/source-sans-3) with its licence, so pages look the same on
 * every machine and no request ever leaves it.
 */
import { readFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { paletteCss } from './palette.ts';

const require = createRequire(import.meta.url);

/** The templates folder of quarterline's statements and overview. */
export const TEMPLATES_DIR = fileURLToPath(new URL('../../templates/report/', import.meta.url));

/** Weights and styles embedded: regular, semibold, bold and regular italic. */
const FONT_FACES = ['400', '600', '700', '400-italic'] as const;

export interface Asset {
  /** Path relative to RUN/assets. */
  readonly name: string;
  readonly content: string | Uint8Array;
}

/**
 * The @font-face rules of the embedded weights, pointing at fonts/*.woff2
 * (WOFF2 only: every browser that prints our statements reads it), and the
 * font files they name.
 */
async function fontAssets(): Promise<Asset[]> {
  const rules: string[] = [];
  const files = new Set<string>();
  for (const face of FONT_FACES) {
    const css = await readFile(require.resolve(`@fontsource/source-sans-3/${face}.css`), 'utf8');
    const rewritten = css.replace(/src:\s*url\(\.\/files\/([^)]+\.woff2)\)\s*format\('woff2'\)(?:,\s*url\([^)]+\)\s*format\('woff'\))?;/g, (_match, file: string) => {
      files.add(file);
      return `src: url(fonts/${file}) format('woff2');`;
    });
    if (/url\(\.\/files\//.test(rewritten)) throw new Error(`unexpected @font-face source in @fontsource/source-sans-3/${face}.css`);
    rules.push(rewritten.replace(/font-display:\s*swap;/g, 'font-display: block;'));
  }
  const assets: Asset[] = [{
    name: 'fonts.css',
    content: `/* Source Sans 3, SIL Open Font License 1.1 (fonts/OFL.txt), from @fontsource/source-sans-3. */\n${rules.join('\n')}`,
  }];
  for (const file of [...files].sort()) {
    assets.push({ name: `fonts/${file}`, content: await readFile(require.resolve(`@fontsource/source-sans-3/files/${file}`)) });
  }
  assets.push({ name: 'fonts/OFL.txt', content: await readFile(require.resolve('@fontsource/source-sans-3/LICENSE')) });
  return assets;
}

let cached: Promise<Asset[]> | null = null;

/** Every shared asset of a run, in a stable order (read once per process). */
export function runAssets(): Promise<Asset[]> {
  cached ??= (async () => [
    { name: 'palette.css', content: paletteCss() },
    { name: 'statement.css', content: await readFile(path.join(TEMPLATES_DIR, 'assets', 'statement.css'), 'utf8') },
    { name: 'overview.css', content: await readFile(path.join(TEMPLATES_DIR, 'assets', 'overview.css'), 'utf8') },
    { name: 'overview-sort.js', content: await readFile(path.join(TEMPLATES_DIR, 'assets', 'overview-sort.js'), 'utf8') },
    ...(await fontAssets()),
  ])();
  return cached;
}
