// Eleventy configuration for statements (templates/ → the run's folder).
// The build step drives Eleventy through its programmatic API and passes
// this file explicitly; see src/render/.
export default function configure(eleventyConfig) {
  eleventyConfig.setTemplateFormats(['njk']);
  return {
    dir: { input: 'templates', includes: '_includes', data: '_data' },
    markdownTemplateEngine: 'njk',
    htmlTemplateEngine: 'njk',
  };
}
