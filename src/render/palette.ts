/**
 * The one palette of statements and the overview, defined here once: it is
 * written out as CSS custom properties (assets/palette.css, used by the
 * stylesheets) and passed to the chart theme, so pages and charts match.
 */

export const PALETTE = Object.freeze({
  ink: '#1c2833',
  muted: '#586774',
  faint: '#8a97a3',
  rule: '#d3dae0',
  wash: '#f2f5f7',
  paper: '#ffffff',
  brand: '#16505a',
  account: '#1b7a84',
  accountSoft: '#cfe6e8',
  benchmark: '#b9772d',
  optimal: '#6b4e9b',
  frontier: '#7fb2b8',
  pass: '#2d7a4b',
  breach: '#b2372b',
  na: '#7a8691',
  breachSoft: '#f6dcd7',
  passSoft: '#dcefe3',
  range: '#d9e4e8',
  tail: '#e7a598',
  up: '#2d7a4b',
  down: '#b2372b',
});

export type PaletteName = keyof typeof PALETTE;

/** The family every page and chart uses (embedded from @fontsource/source-sans-3). */
export const FONT_FAMILY = 'Source Sans 3';

/** CSS custom property name of a palette entry: accountSoft → --ql-account-soft. */
export function cssVariable(name: PaletteName): string {
  return `--ql-${name.replace(/[A-Z]/g, (letter) => `-${letter.toLowerCase()}`)}`;
}

/** The palette as a `:root` block of CSS custom properties. */
export function paletteCss(): string {
  const lines = (Object.keys(PALETTE) as PaletteName[]).map((name) => `  ${cssVariable(name)}: ${PALETTE[name]};`);
  return `/* Generated from src/render/palette.ts: edit the palette there. */\n:root {\n${lines.join('\n')}\n  --ql-font: '${FONT_FAMILY}', 'DejaVu Sans', sans-serif;\n}\n`;
}
