/**
 * mandates.yaml → Mandate records, in file order, with their references to
 * book.yaml (asset classes) and instruments.csv (benchmark indices) checked.
 */
import type { Diagnostic } from '../errors.ts';
import { BOOK_DEFAULTS } from './defaults.ts';
import { fallbackMessage, yamlIssueDiagnostics } from './issues.ts';
import { mandatesYamlSchema, type MandateContext, type MandatesYaml } from './schemas.ts';
import type { Mandate } from './types.ts';
import type { YamlFile } from './yaml.ts';

export interface MandatesResult {
  /** null when mandates.yaml has errors (all in `errors`, scope book). */
  readonly mandates: ReadonlyMap<string, Mandate> | null;
  readonly errors: readonly Diagnostic[];
}

export function readMandates(yaml: YamlFile, context: MandateContext): MandatesResult {
  const result = mandatesYamlSchema(context).safeParse(yaml.value, { error: fallbackMessage });
  if (!result.success) return { mandates: null, errors: yamlIssueDiagnostics(yaml, result.error.issues) };
  const mandates = new Map<string, Mandate>();
  for (const id of yaml.keysInOrder([], result.data)) mandates.set(id, mandateFrom(id, result.data[id]!, yaml));
  return { mandates, errors: [] };
}

function mandateFrom(id: string, entry: MandatesYaml[string], yaml: YamlFile): Mandate {
  const benchmark = yaml.keysInOrder([id, 'benchmark'], entry.benchmark)
    .map((index) => Object.freeze({ index, weight: entry.benchmark[index]! }));
  const allocation = new Map<string, readonly [number, number]>();
  for (const assetClass of yaml.keysInOrder([id, 'allocation'], entry.allocation)) {
    const range = entry.allocation[assetClass]!;
    allocation.set(assetClass, Object.freeze([range[0], range[1]] as const));
  }
  return Object.freeze({
    id,
    label: entry.label ?? id,
    benchmark: Object.freeze(benchmark),
    riskAversion: entry.risk_aversion,
    allocation,
    maxPosition: entry.max_position ?? null,
    maxVolatility: entry.max_volatility ?? null,
    maxTrackingError: entry.max_tracking_error ?? null,
    shortfall: Object.freeze((entry.shortfall ?? []).map((rule) => Object.freeze({
      threshold: rule.threshold,
      horizonYears: rule.horizon_years,
      confidence: rule.confidence,
      basis: rule.basis ?? BOOK_DEFAULTS.shortfallBasis,
    }))),
  });
}
