/**
 * The built-in cautions every statement carries unless book.yaml replaces
 * them (methods: "Default cautions"). This is the only place they are
 * written; a firm that sets `cautions:` in book.yaml speaks in its own words.
 */

/** The default cautions, one paragraph each, in the order shown. */
export const DEFAULT_CAUTIONS: readonly string[] = Object.freeze([
  'Past performance is not a reliable indicator of future results.',
  'The value of investments and the income from them can fall as well as rise, and you may get back less than you invested.',
  'Expected returns, volatilities, value at risk and shortfall probabilities in this statement are model estimates, not forecasts or promises. '
    + 'They assume normally distributed returns, estimated from past prices and our own long-term assumptions; '
    + 'such a model understates the chance of extreme losses.',
  'Where investments are held in a currency other than your reporting currency, exchange-rate movements can raise or lower their value.',
  'This statement is information about your account, not personal advice. Decisions about your investments belong with a licensed adviser, '
    + 'and the rules and tax treatment of your own jurisdiction apply.',
]);

/** The cautions a statement shows: the firm's own when book.yaml sets them, else the defaults. */
export function cautionsFor(configured: readonly string[] | null): readonly string[] {
  return configured && configured.length > 0 ? configured : DEFAULT_CAUTIONS;
}
