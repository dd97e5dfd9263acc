/**
 * The schemas of the book: book.yaml, mandates.yaml and one row of each CSV
 * file. Structure first (static schemas), then references between files
 * (schema factories given what was already loaded: asset classes, the
 * instrument master, the mandates).
 *
 * Every message reads "expected …; <fix>" (see issues.ts for the rest of the
 * sentence).
 */
import { z } from 'zod';
import { BOOK_DEFAULTS, BOOK_TOLERANCES } from './defaults.ts';
import {
  accountIdCell, currencyCell, dayCell, emailCell, EMAIL_ADDRESS, idCell, isLanguageTag, localeCell,
  anyNumberCell, nonNegativeCell, optionalCell, optionalTextCell, positiveCell, textCell,
} from './fields.ts';
import type { Instrument, TransactionType } from './types.ts';

// ---------------------------------------------------------------------------
// YAML building blocks

/**
 * For checks across several values (a sum, a comparison): run only when every
 * value passed its own checks, so that one bad value is reported once rather
 * than again as a confusing consequence.
 */
const WHEN_VALUES_VALID = { when: (payload: { readonly issues: readonly unknown[] }) => payload.issues.length === 0 } as const;

/** A map with a fixed set of keys; a misspelt key would silently drop a setting or a constraint, so it is an error. */
function strictMap<Shape extends z.core.$ZodLooseShape>(shape: Shape, what: string) {
  const keys = Object.keys(shape).join(', ');
  return z.strictObject(shape, {
    error: (issue) => issue.code === 'unrecognized_keys'
      ? `expected only the keys ${keys} in ${what}; check the spelling or remove the key`
      : `expected ${what} as a map of keys and values; write it as "key: value" lines indented under its name`,
  });
}

/** Wording for a value of the wrong type, or for a required key that is missing. */
function typeError(expected: string, wrongTypeHint: string) {
  return (issue: { readonly input?: unknown }) => issue.input === undefined
    ? `expected ${expected}; add the key`
    : `expected ${expected}; ${wrongTypeHint}`;
}

function yamlText(expected: string) {
  return z.string({ error: typeError(expected, 'write it as text, in quotes if it looks like a number') })
    .refine((text) => text.trim() !== '', { error: `expected ${expected}, not blank text` });
}

const optionalYamlText = (expected: string) => yamlText(expected).nullish();

function yamlNumber(expected: string) {
  return z.number({ error: typeError(expected, 'write a plain decimal number without quotes or "%"') });
}

/** An annual rate or return as a decimal fraction; 5 (meaning 5 %) would be read as 500 %, so |x| < 1 is required. */
function annualDecimal(what: string) {
  const expected = `${what} as a decimal (0.05 = 5 %) between -1 and 1`;
  return yamlNumber(expected).gt(-1, { error: `expected ${expected}; write 5 % as 0.05` }).lt(1, { error: `expected ${expected}; write 5 % as 0.05` });
}

function wholeNumber(expected: string, minimum: number) {
  return z.int({ error: typeError(`${expected}: a whole number of at least ${minimum}`, 'write a whole number') })
    .min(minimum, { error: `expected ${expected}: a whole number of at least ${minimum}; correct it` });
}

/** A key of a YAML map read into a record (asset class, mandate id, index id); `__proto__` is refused earlier, by parseYamlFile. */
function mapKey(what: string) {
  return z.string().refine((key) => key.trim() !== '', { error: `expected ${what}, not an empty key; name it`, abort: true });
}

function isPlainMap(value: unknown): boolean {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

const localeTag = z.string({ error: 'expected a BCP 47 language tag such as en-GB as text; write e.g. en-GB' })
  .refine(isLanguageTag, { error: 'expected a BCP 47 language tag such as en-GB or de-CH (a hyphen, not an underscore); correct the tag' });

// ---------------------------------------------------------------------------
// book.yaml

const assetClassSchema = strictMap({
  proxy: yamlText('the instrument id of the index that stands for the class'),
  expected_return: annualDecimal('the expected annual return').nullish(),
  label: optionalYamlText('the display name of the class'),
}, 'an asset class');

const estimationSchema = strictMap({
  window_months: wholeNumber('the estimation window in months', 2).nullish(),
  min_months: wholeNumber('the minimum months of own history', 2).nullish(),
  shrinkage: z.enum(['none', 'ledoit-wolf'], { error: 'expected none or ledoit-wolf; write one of them' }).nullish(),
}, 'the estimation settings').nullish().superRefine((estimation, context) => {
  const windowMonths = estimation?.window_months ?? BOOK_DEFAULTS.estimation.windowMonths;
  const minMonths = estimation?.min_months ?? BOOK_DEFAULTS.estimation.minMonths;
  if (minMonths > windowMonths) {
    context.addIssue({
      code: 'custom',
      path: ['min_months'],
      message: `expected min_months no larger than window_months (${windowMonths}); lower min_months or raise window_months`,
    });
  }
}, WHEN_VALUES_VALID);

export const bookYamlSchema = strictMap({
  firm: strictMap({
    name: yamlText('the firm name printed on every statement'),
    address: optionalYamlText('the firm address'),
    email: yamlText('the firm e-mail address')
      .regex(EMAIL_ADDRESS, { error: 'expected one e-mail address such as office@example.org; correct it' }).nullish(),
    phone: optionalYamlText('the firm phone number'),
    regulatory_note: optionalYamlText('the regulatory note'),
  }, 'the firm block'),
  locale: localeTag.nullish(),
  risk_free: z.union([annualDecimal('the annual risk-free rate'), yamlText('an index id')], {
    error: 'expected an annual rate as a decimal (0.02 = 2 %) or the id of a cash total-return index in instruments.csv; write one of the two',
  }).nullish(),
  stale_after_days: wholeNumber('the number of calendar days after which a price is stale', 0).nullish(),
  estimation: estimationSchema,
  returns: strictMap({
    method: z.enum(['daily', 'modified-dietz'], { error: 'expected daily or modified-dietz; write one of them' }).nullish(),
  }, 'the returns settings').nullish(),
  asset_classes: z.record(mapKey('an asset class name'), assetClassSchema, {
    error: 'expected asset_classes as a map from class name to its proxy, expected_return and label; write each class as "name:" with "proxy: INDEX" indented under it',
  }).superRefine((classes, context) => {
    if (!Object.hasOwn(classes, 'cash')) {
      context.addIssue({
        code: 'custom',
        message: 'expected an asset class named cash (cash balances belong to it); add "cash:" with its proxy under asset_classes',
      });
    }
  }, { when: (payload) => isPlainMap(payload.value) }),
  cautions: z.array(yamlText('a paragraph'), { error: 'expected a list of paragraphs; write each as a line starting with "- "' })
    .min(1, { error: 'expected at least one paragraph; remove the key to use the built-in cautions' })
    .nullish(),
}, 'book.yaml');

export type BookYaml = z.output<typeof bookYamlSchema>;

/** Checks that an id names an index in the instrument master; `role` says what the index is used for. */
export function indexReference(instruments: ReadonlyMap<string, Instrument>, role: string) {
  return z.string().superRefine((id, context) => {
    const instrument = instruments.get(id.trim());
    if (instrument === undefined) {
      context.addIssue({ code: 'custom', message: `expected the id of an index in instruments.csv (${role}); add the index to instruments.csv or correct the id` });
    } else if (instrument.kind !== 'index') {
      context.addIssue({ code: 'custom', message: `expected an index (${role}), but instruments.csv:${instrument.line} has kind ${instrument.kind}; use an index or change its kind` });
    }
  });
}

/** References from book.yaml into instruments.csv, checked once the master is loaded. */
export function bookReferencesSchema(instruments: ReadonlyMap<string, Instrument>) {
  return z.looseObject({
    risk_free: z.union([z.number(), indexReference(instruments, 'the risk-free series')]).nullish(),
    asset_classes: z.record(z.string(), z.looseObject({ proxy: indexReference(instruments, 'the proxy of an asset class') })),
  });
}

// ---------------------------------------------------------------------------
// mandates.yaml

export interface MandateContext {
  readonly assetClassIds: ReadonlySet<string>;
  readonly instruments: ReadonlyMap<string, Instrument>;
}

const fraction = (expected: string) => yamlNumber(expected)
  .min(0, { error: `expected ${expected} between 0 and 1; write 0 or more` })
  .max(1, { error: `expected ${expected} between 0 and 1; write 60 % as 0.6` });

const weightRange = z.tuple([fraction('a minimum weight'), fraction('a maximum weight')], {
  error: 'expected a weight range [min, max] of two decimals between 0 and 1; write it e.g. as [0.2, 0.6]',
}).refine(([minimum, maximum]) => minimum <= maximum, { error: 'expected min no larger than max; swap the two numbers' });

const shortfallRuleSchema = strictMap({
  threshold: yamlNumber('the return threshold').gt(-1, { error: 'expected a return threshold above -1 (a loss of 100 %); write a 10 % loss as -0.10' }),
  horizon_years: yamlNumber('the horizon in years').positive({ error: 'expected a horizon in years greater than 0; write e.g. 5' }),
  confidence: yamlNumber('the confidence').gt(0, { error: 'expected a confidence strictly between 0 and 1; write e.g. 0.95' })
    .lt(1, { error: 'expected a confidence strictly between 0 and 1, e.g. 0.95; write 95 % as 0.95' }),
  basis: z.enum(['average', 'cumulative', 'every_year'], { error: 'expected average, cumulative or every_year; write one of them, or leave the key out for average' }).nullish(),
}, 'a shortfall rule').superRefine((rule, context) => {
  if (rule.basis === 'every_year' && !Number.isInteger(rule.horizon_years)) {
    context.addIssue({ code: 'custom', path: ['horizon_years'], message: 'expected a whole number of years for the every_year basis (it counts single years); round the horizon' });
  }
}, WHEN_VALUES_VALID);

/** mandates.yaml: a map from mandate id to its definition, with references to book.yaml and instruments.csv. */
export function mandatesYamlSchema(context: MandateContext) {
  const assetClassList = [...context.assetClassIds].join(', ');
  const benchmarkIndex = mapKey('an index id').superRefine((id, issueContext) => {
    const instrument = context.instruments.get(id);
    if (instrument === undefined) {
      issueContext.addIssue({ code: 'custom', message: 'expected the id of an index in instruments.csv as a benchmark component; add the index to instruments.csv or correct the id' });
    } else if (instrument.kind !== 'index') {
      issueContext.addIssue({ code: 'custom', message: `expected an index as a benchmark component, but instruments.csv:${instrument.line} has kind ${instrument.kind}; use its index instead` });
    }
  });
  const allocationClass = mapKey('an asset class name').refine((id) => context.assetClassIds.has(id), {
    error: `expected an asset class of book.yaml (${assetClassList}); correct the name or add the class to book.yaml`,
  });
  const mandateSchema = strictMap({
    label: optionalYamlText('the mandate display name'),
    benchmark: z.record(benchmarkIndex, fraction('a benchmark weight'), {
      error: 'expected the benchmark as a map from index id to weight; write each as "INDEX: 0.6" indented under benchmark',
    }).superRefine((weights, issueContext) => {
      const total = Object.values(weights).reduce((sum, weight) => sum + weight, 0);
      if (Math.abs(total - 1) > BOOK_TOLERANCES.benchmarkWeightSum) {
        issueContext.addIssue({
          code: 'custom',
          message: `expected benchmark weights summing to 1 (within ${BOOK_TOLERANCES.benchmarkWeightSum}), but they sum to ${roundForMessage(total)}; correct the weights`,
        });
      }
    }, WHEN_VALUES_VALID),
    risk_aversion: yamlNumber('the risk aversion a').positive({ error: 'expected a risk aversion a greater than 0; write a positive number (typically 1 to 10)' }),
    allocation: z.record(allocationClass, weightRange, {
      error: 'expected the allocation as a map from asset class to [min, max]; write each as "equity: [0.4, 0.7]" indented under allocation',
    }).superRefine((ranges, issueContext) => {
      const values = Object.values(ranges);
      const sumOfMinimums = values.reduce((sum, [minimum]) => sum + minimum, 0);
      const sumOfMaximums = values.reduce((sum, [, maximum]) => sum + maximum, 0);
      if (sumOfMinimums > 1 + BOOK_TOLERANCES.benchmarkWeightSum || sumOfMaximums < 1 - BOOK_TOLERANCES.benchmarkWeightSum) {
        issueContext.addIssue({
          code: 'custom',
          message: `expected ranges that admit a fully invested mix (sum of minimums ${roundForMessage(sumOfMinimums)} ≤ 1 ≤ sum of maximums ${roundForMessage(sumOfMaximums)}); widen the ranges`,
        });
      }
    }, WHEN_VALUES_VALID),
    max_position: yamlNumber('the largest position weight').gt(0, { error: 'expected a largest position weight above 0 and at most 1; write 10 % as 0.10' })
      .max(1, { error: 'expected a largest position weight at most 1; write 10 % as 0.10' }).nullish(),
    max_volatility: yamlNumber('the volatility ceiling').positive({ error: 'expected a volatility ceiling above 0; write it as an annual decimal (0.12 = 12 %)' }).nullish(),
    max_tracking_error: yamlNumber('the tracking-error ceiling').positive({ error: 'expected a tracking-error ceiling above 0; write it as an annual decimal (0.03 = 3 %)' }).nullish(),
    shortfall: z.array(shortfallRuleSchema, { error: 'expected a list of shortfall rules; start each rule with "- "' }).nullish(),
  }, 'a mandate');
  return z.record(mapKey('a mandate id'), mandateSchema, { error: 'expected mandates.yaml as a map from mandate id to its definition; add at least one mandate' })
    .refine((mandates) => Object.keys(mandates).length > 0, { error: 'expected at least one mandate; add one' });
}

export type MandatesYaml = z.output<ReturnType<typeof mandatesYamlSchema>>;

// ---------------------------------------------------------------------------
// CSV rows

/** Every cell of a row as text, keyed by column name (see csv.ts). */
export type RowFields = Readonly<Record<string, string>>;

export const INSTRUMENT_COLUMNS = { required: ['instrument', 'name', 'asset_class', 'currency', 'kind'], optional: ['multiplier', 'proxy'] } as const;
export const ACCOUNT_COLUMNS = { required: ['account', 'client', 'mandate', 'base_currency'], optional: ['adviser', 'email', 'inception', 'locale'] } as const;
export const PRICE_COLUMNS = { required: ['date', 'instrument', 'price'], optional: [] } as const;
export const FX_COLUMNS = { required: ['date', 'from', 'to', 'rate'], optional: [] } as const;
export const TRANSACTION_COLUMNS = {
  required: ['account', 'date', 'type', 'instrument', 'quantity', 'price', 'amount'],
  optional: ['fees', 'currency', 'note'],
} as const;
export const HOLDING_COLUMNS = { required: ['account', 'date', 'instrument', 'quantity'], optional: [] } as const;

const INSTRUMENT_KINDS = ['security', 'fund', 'index'] as const;

export function instrumentRowSchema(assetClassIds: ReadonlySet<string>) {
  return z.object({
    instrument: idCell('an instrument id'),
    name: textCell('the display name of the instrument'),
    asset_class: z.string().trim().refine((id) => assetClassIds.has(id), {
      error: `expected an asset class of book.yaml (${[...assetClassIds].join(', ')}); correct it or add the class to book.yaml`,
    }),
    currency: currencyCell,
    kind: z.string().trim().pipe(z.enum(INSTRUMENT_KINDS, {
      error: (issue) => {
        const lowerCase = String(issue.input).toLowerCase();
        return (INSTRUMENT_KINDS as readonly string[]).includes(lowerCase)
          ? `expected security, fund or index in lower case; write ${lowerCase}`
          : 'expected security, fund or index; an index is a benchmark or proxy series, anything held is a security or a fund';
      },
    })),
    multiplier: optionalCell(positiveCell('multiplier', 'leave it empty for 1, write 0.01 for bonds quoted in percent of nominal')),
    proxy: optionalCell(idCell('an index id')),
  });
}

export function accountRowSchema(mandateIds: ReadonlySet<string>) {
  return z.object({
    account: accountIdCell,
    client: textCell('the client name as printed'),
    mandate: z.string().trim().refine((id) => mandateIds.has(id), {
      error: `expected a mandate id of mandates.yaml (${[...mandateIds].join(', ')}); correct it or add the mandate`,
    }),
    base_currency: currencyCell,
    adviser: optionalTextCell,
    email: optionalCell(emailCell),
    inception: optionalCell(dayCell),
    locale: optionalCell(localeCell),
  });
}

export function priceRowSchema(instruments: ReadonlyMap<string, Instrument>) {
  return z.object({
    date: dayCell,
    instrument: z.string().trim().refine((id) => instruments.has(id), {
      error: 'expected an instrument id of instruments.csv; add the instrument or correct the id',
    }),
    price: positiveCell('price', 'a price of zero or below cannot value a position, so correct it or remove the row'),
  });
}

export const fxRowSchema = z.object({
  date: dayCell,
  from: currencyCell,
  to: currencyCell,
  rate: positiveCell('rate', 'write how many units of "to" one unit of "from" is worth, or remove the row'),
}).refine((row) => row.from !== row.to, { path: ['to'], error: 'expected two different currencies; remove the row', ...WHEN_VALUES_VALID });

/** Checks that an id names an instrument of the master that can be held (not an index). */
function holdableInstrument(instruments: ReadonlyMap<string, Instrument>) {
  return z.string().trim().superRefine((id, context) => {
    const instrument = instruments.get(id);
    if (id === '') {
      context.addIssue({ code: 'custom', message: 'expected an instrument id; fill it in' });
    } else if (instrument === undefined) {
      context.addIssue({ code: 'custom', message: 'expected an instrument id of instruments.csv; add the instrument or correct the id' });
    } else if (instrument.kind === 'index') {
      context.addIssue({ code: 'custom', message: `expected a security or fund, but instruments.csv:${instrument.line} is an index, which can be a benchmark or proxy but never a holding; use the fund or security that tracks it` });
    }
  });
}

export function holdingRowSchema(instruments: ReadonlyMap<string, Instrument>) {
  return z.object({
    date: dayCell,
    instrument: holdableInstrument(instruments),
    quantity: anyNumberCell('a quantity'),
  });
}

/** The transaction columns whose use depends on the type. */
export type TransactionField = 'instrument' | 'quantity' | 'price' | 'fees' | 'amount';

/** Which of those columns each type requires, and which it may use; any other is ignored with a warning. */
export const TRANSACTION_FIELDS: Readonly<Record<TransactionType, { readonly required: readonly TransactionField[]; readonly optional: readonly TransactionField[] }>> = {
  deposit: { required: ['amount'], optional: [] },
  withdrawal: { required: ['amount'], optional: [] },
  transfer_in: { required: ['instrument', 'quantity'], optional: [] },
  transfer_out: { required: ['instrument', 'quantity'], optional: [] },
  buy: { required: ['instrument', 'quantity', 'price'], optional: ['fees', 'amount'] },
  sell: { required: ['instrument', 'quantity', 'price'], optional: ['fees', 'amount'] },
  dividend: { required: ['amount'], optional: ['instrument'] },
  interest: { required: ['amount'], optional: ['instrument'] },
  fee: { required: ['amount'], optional: ['instrument'] },
  tax: { required: ['amount'], optional: ['instrument'] },
};

export const TRANSACTION_TYPES = Object.keys(TRANSACTION_FIELDS) as readonly TransactionType[];

/** The cell schema of one type-dependent column: required (not blank) or optional (blank → null) as the type says. */
function transactionFieldSchema(field: TransactionField, type: TransactionType, instruments: ReadonlyMap<string, Instrument>): z.ZodType<unknown, string> {
  const schema: z.ZodType<unknown, string> = field === 'instrument'
    ? holdableInstrument(instruments)
    : nonNegativeCell(field === 'fees' ? 'fee' : field, type);
  if (TRANSACTION_FIELDS[type].required.includes(field)) {
    const required = TRANSACTION_FIELDS[type].required.join(', ');
    return z.string()
      .refine((text) => text.trim() !== '', { error: `expected a value: a ${type} needs ${required}; fill it in`, abort: true })
      .pipe(schema);
  }
  return optionalCell(schema);
}

type Amounts = { readonly quantity: number; readonly price: number; readonly fees: number | null; readonly amount: number | null; readonly instrument: string };

/** Cash effect of a buy (paid) or a sell (received), both as non-negative-by-convention amounts: q × p × m ± fees. */
function tradeCashAmount(type: 'buy' | 'sell', row: Amounts, multiplier: number): number {
  const grossValue = row.quantity * row.price * multiplier;
  const fees = row.fees ?? BOOK_DEFAULTS.tradeFees;
  return type === 'buy' ? grossValue + fees : grossValue - fees;
}

/**
 * One transactions.csv row: a union on `type`, each variant requiring the
 * columns of its type (TRANSACTION_FIELDS). Columns a type does not use pass
 * through as text; the loader warns that they are ignored.
 */
export function transactionRowSchema(instruments: ReadonlyMap<string, Instrument>) {
  const variant = (type: TransactionType) => {
    const used = [...TRANSACTION_FIELDS[type].required, ...TRANSACTION_FIELDS[type].optional];
    const shape = {
      type: z.literal(type),
      date: dayCell,
      currency: optionalCell(currencyCell),
      note: z.string(),
      instrument: used.includes('instrument') ? transactionFieldSchema('instrument', type, instruments) : z.string(),
      quantity: used.includes('quantity') ? transactionFieldSchema('quantity', type, instruments) : z.string(),
      price: used.includes('price') ? transactionFieldSchema('price', type, instruments) : z.string(),
      fees: used.includes('fees') ? transactionFieldSchema('fees', type, instruments) : z.string(),
      amount: used.includes('amount') ? transactionFieldSchema('amount', type, instruments) : z.string(),
    };
    return z.object(shape);
  };
  const trade = (type: 'buy' | 'sell') => variant(type).superRefine((row, context) => {
    const amounts = row as unknown as Amounts;
    if (amounts.amount === null) return;
    const multiplier = instruments.get(amounts.instrument)?.multiplier ?? BOOK_DEFAULTS.instrumentMultiplier;
    const computed = tradeCashAmount(type, amounts, multiplier);
    if (Math.abs(amounts.amount - computed) > BOOK_TOLERANCES.tradeAmount + BOOK_TOLERANCES.floatingPointSlack) {
      const formula = type === 'buy' ? 'quantity × price × multiplier + fees' : 'quantity × price × multiplier − fees';
      context.addIssue({
        code: 'custom',
        path: ['amount'],
        message: `expected ${formula} = ${roundForMessage(computed)} (within ${BOOK_TOLERANCES.tradeAmount}); correct the amount, quantity, price or fees, or leave the amount empty`,
      });
    }
  }, WHEN_VALUES_VALID);
  return z.discriminatedUnion('type', [
    variant('deposit'), variant('withdrawal'), variant('transfer_in'), variant('transfer_out'),
    trade('buy'), trade('sell'),
    variant('dividend'), variant('interest'), variant('fee'), variant('tax'),
  ], {
    error: `expected one of ${TRANSACTION_TYPES.join(', ')} (lower-case); correct the type`,
  });
}

/** A number for a message: 12 significant digits, so 0.8999999999999999 reads 0.9. */
function roundForMessage(value: number): string {
  return String(Number(value.toPrecision(12)));
}

export type TransactionRow = z.output<ReturnType<typeof transactionRowSchema>>;
