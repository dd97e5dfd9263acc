/**
 * Eleventy configuration of quarterline's client statements and adviser
 * overview. The run passes this file explicitly as configPath and drives
 * Eleventy through its programmatic API (toJSON), adding each run's data
 * and the formatting filters in src/render/eleventy.ts; quarterline then
 * writes every page itself, atomically.
 *
 * Templates: templates/report (pages), templates/report/_includes (partials).
 * Autoescape is on: nothing from the book is trusted as HTML. Outputting an
 * undefined or null value is an error, so a missing figure can never show
 * up as a blank.
 */
export default function configure(eleventyConfig) {
  eleventyConfig.setNunjucksEnvironmentOptions({
    autoescape: true,
    throwOnUndefined: true,
    trimBlocks: true,
    lstripBlocks: true,
  });
  eleventyConfig.setTemplateFormats(['njk']);
  eleventyConfig.setUseGitIgnore(false);
  eleventyConfig.setQuietMode(true);
}

export const config = {
  dir: {
    includes: '_includes',
    data: '_data',
  },
  templateFormats: ['njk'],
  htmlTemplateEngine: 'njk',
};
