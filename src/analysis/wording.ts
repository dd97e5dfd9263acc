/**
 * Plain, locale-independent wording for check details in figures.json and
 * the terminal (statements format numbers in the client's locale instead).
 */

/** A weight as a percentage with two decimals, e.g. 0.4512 → "45.12 %". */
export function formatWeight(weight: number): string {
  return `${(weight * 100).toFixed(2)} %`;
}
