/**
 * book.yaml → Settings: the firm, formatting, estimation and return settings,
 * the asset classes and the cautions, with every absent key taken from
 * BOOK_DEFAULTS.
 */
import type { Diagnostic } from '../errors.ts';
import { BOOK_DEFAULTS } from './defaults.ts';
import { fallbackMessage, yamlIssueDiagnostics } from './issues.ts';
import { bookReferencesSchema, bookYamlSchema, type BookYaml } from './schemas.ts';
import type { AssetClass, Instrument, RiskFree, Settings } from './types.ts';
import type { YamlFile } from './yaml.ts';

export interface SettingsResult {
  /** null when book.yaml has errors (all in `errors`, scope book). */
  readonly settings: Settings | null;
  readonly errors: readonly Diagnostic[];
}

/** Validates the structure of book.yaml and builds the settings; references into instruments.csv are checked by `checkSettingsReferences`. */
export function readSettings(yaml: YamlFile): SettingsResult {
  const result = bookYamlSchema.safeParse(yaml.value, { error: fallbackMessage });
  if (!result.success) return { settings: null, errors: yamlIssueDiagnostics(yaml, result.error.issues) };
  return { settings: settingsFrom(result.data, yaml.keysInOrder(['asset_classes'], result.data.asset_classes)), errors: [] };
}

/** Checks that asset-class proxies and an index `risk_free` name indices of the instrument master. */
export function checkSettingsReferences(yaml: YamlFile, instruments: ReadonlyMap<string, Instrument>): Diagnostic[] {
  const result = bookReferencesSchema(instruments).safeParse(yaml.value, { error: fallbackMessage });
  return result.success ? [] : yamlIssueDiagnostics(yaml, result.error.issues);
}

function settingsFrom(data: BookYaml, assetClassOrder: readonly string[]): Settings {
  const assetClasses = new Map<string, AssetClass>();
  for (const id of assetClassOrder) {
    const entry = data.asset_classes[id]!;
    assetClasses.set(id, Object.freeze({
      id,
      label: entry.label ?? id,
      proxy: entry.proxy.trim(),
      expectedReturn: entry.expected_return ?? null,
    }));
  }
  const estimation = data.estimation;
  return Object.freeze({
    firm: Object.freeze({
      name: data.firm.name,
      address: data.firm.address ?? null,
      email: data.firm.email?.trim() ?? null,
      phone: data.firm.phone ?? null,
      regulatoryNote: data.firm.regulatory_note ?? null,
    }),
    locale: data.locale?.trim() ?? BOOK_DEFAULTS.locale,
    riskFree: riskFreeFrom(data.risk_free),
    staleAfterDays: data.stale_after_days ?? BOOK_DEFAULTS.staleAfterDays,
    estimation: Object.freeze({
      windowMonths: estimation?.window_months ?? BOOK_DEFAULTS.estimation.windowMonths,
      minMonths: estimation?.min_months ?? BOOK_DEFAULTS.estimation.minMonths,
      shrinkage: estimation?.shrinkage ?? BOOK_DEFAULTS.estimation.shrinkage,
    }),
    returnMethod: data.returns?.method ?? BOOK_DEFAULTS.returnMethod,
    assetClasses,
    cautions: data.cautions ? Object.freeze([...data.cautions]) : BOOK_DEFAULTS.cautions,
  });
}

function riskFreeFrom(value: number | string | null | undefined): RiskFree {
  if (typeof value === 'number') return Object.freeze({ kind: 'rate', annualRate: value });
  if (typeof value === 'string') return Object.freeze({ kind: 'index', instrument: value.trim() });
  return BOOK_DEFAULTS.riskFree;
}
