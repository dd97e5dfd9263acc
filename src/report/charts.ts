/**
 * What each chart of a statement shows: its data (already in display units)
 * and its text alternative. Pure data; src/render/charts.ts turns it into a
 * Vega specification and static SVG. No figure appears in a chart that is
 * not in figures.json or derived from it by a change of units (×100).
 */
import type { Figures } from '../analysis/figures.ts';
import { normalDensity } from '../metrics/normal.ts';
import { shortfallLine } from '../metrics/shortfall.ts';
import type { Formatter } from './format.ts';
import { shortfallEventWords } from './wording.ts';

/** Text alternative of a chart: a title (aria-label) and a short summary shown under it. */
export interface ChartText {
  readonly title: string;
  readonly summary: string;
}

export interface GrowthChart extends ChartText {
  readonly kind: 'growth';
  /** Index values from 100 at the since-inception start. */
  readonly points: ReadonlyArray<{ readonly date: string; readonly series: string; readonly value: number }>;
  readonly seriesNames: readonly string[];
}

export interface AllocationChart extends ChartText {
  readonly kind: 'allocation';
  readonly rows: ReadonlyArray<{ readonly label: string; readonly weight: number; readonly min: number; readonly max: number; readonly inside: boolean; readonly weightText: string }>;
}

export interface RiskReturnChart extends ChartText {
  readonly kind: 'risk-return';
  readonly frontier: ReadonlyArray<{ readonly volatility: number; readonly expectedReturn: number }>;
  readonly points: ReadonlyArray<{ readonly name: string; readonly volatility: number; readonly expectedReturn: number; readonly role: 'account' | 'benchmark' | 'optimal' }>;
  /** Each shortfall rule's boundary μ = intercept + slope·σ, as a segment inside the chart's domain. */
  readonly ruleLines: ReadonlyArray<{ readonly name: string; readonly x1: number; readonly y1: number; readonly x2: number; readonly y2: number }>;
  readonly xDomain: readonly [number, number];
  readonly yDomain: readonly [number, number];
}

export interface DistributionChart extends ChartText {
  readonly kind: 'distribution';
  readonly curve: ReadonlyArray<{ readonly r: number; readonly density: number }>;
  readonly tail: ReadonlyArray<{ readonly r: number; readonly density: number }>;
  readonly threshold: number | null;
  readonly mean: number;
  readonly valueAtRisk: number;
  /** Annotation texts, formatted in the client's locale. */
  readonly labels: { readonly threshold: string | null; readonly mean: string; readonly valueAtRisk: string };
  readonly xDomain: readonly [number, number];
}

export type ChartData = GrowthChart | AllocationChart | RiskReturnChart | DistributionChart;

export const ACCOUNT_SERIES = 'Your account';
export const BENCHMARK_SERIES = 'Benchmark';

/** Growth of 100 since inception for the account and its benchmark; null with fewer than two points. */
export function growthChart(figures: Figures, format: Formatter): GrowthChart | null {
  const usable = figures.growth.filter((point) => Number.isFinite(point.account));
  if (usable.length < 2) return null;
  const points: Array<{ date: string; series: string; value: number }> = [];
  for (const point of usable) {
    points.push({ date: point.month_end, series: ACCOUNT_SERIES, value: point.account * 100 });
    if (point.benchmark !== null && Number.isFinite(point.benchmark)) points.push({ date: point.month_end, series: BENCHMARK_SERIES, value: point.benchmark * 100 });
  }
  const last = usable[usable.length - 1]!;
  const hasBenchmark = points.some((point) => point.series === BENCHMARK_SERIES);
  const benchmarkText = last.benchmark !== null && Number.isFinite(last.benchmark)
    ? `, the benchmark to ${format.decimal(last.benchmark * 100, 1)}`
    : hasBenchmark ? '' : '; the benchmark’s growth is not available';
  return {
    kind: 'growth',
    title: 'Growth of 100 since inception: your account and its benchmark',
    summary: `Starting from 100 when the account opened on ${format.date(figures.inception)}, your account grew to ${format.decimal(last.account * 100, 1)} by ${format.date(last.month_end)}${benchmarkText} (net of fees, month-end values).`,
    points,
    seriesNames: hasBenchmark ? [ACCOUNT_SERIES, BENCHMARK_SERIES] : [ACCOUNT_SERIES],
  };
}

/** Each asset class's weight against its mandate range; null when the account has no weights. */
export function allocationChart(figures: Figures, format: Formatter): AllocationChart | null {
  const rows = figures.allocation
    .filter((row) => row.weight !== null && Number.isFinite(row.weight))
    .map((row) => ({
      label: row.label,
      weight: row.weight!,
      min: row.min,
      max: row.max,
      inside: row.weight! >= row.min && row.weight! <= row.max,
      weightText: format.percent(row.weight!, { digits: 1 }),
    }));
  if (rows.length === 0) return null;
  const outside = rows.filter((row) => !row.inside);
  return {
    kind: 'allocation',
    title: 'Weight of each asset class against its mandate range',
    summary: `${rows.map((row) => `${row.label} ${format.percent(row.weight, { digits: 1 })} (range ${format.percent(row.min, { digits: 0 })} to ${format.percent(row.max, { digits: 0 })})`).join('; ')}. `
      + (outside.length === 0 ? 'Every class is inside its range.' : `Outside its range: ${outside.map((row) => row.label).join(', ')}.`),
    rows,
  };
}

function niceCeiling(value: number, step: number): number {
  return Math.ceil(value / step - 1e-9) * step;
}

function niceFloor(value: number, step: number): number {
  return Math.floor(value / step + 1e-9) * step;
}

/** Clips the line y = a + b·x to the rectangle [x0, x1] × [y0, y1]; null when it does not cross it. */
function clipLine(a: number, b: number, [x0, x1]: readonly [number, number], [y0, y1]: readonly [number, number]):
  { x1: number; y1: number; x2: number; y2: number } | null {
  let from = x0;
  let to = x1;
  if (b !== 0) {
    const xAtY0 = (y0 - a) / b;
    const xAtY1 = (y1 - a) / b;
    from = Math.max(from, Math.min(xAtY0, xAtY1));
    to = Math.min(to, Math.max(xAtY0, xAtY1));
  } else if (a < y0 || a > y1) {
    return null;
  }
  if (!(to > from)) return null;
  return { x1: from, y1: a + b * from, x2: to, y2: a + b * to };
}

/** The μ–σ plane: frontier, current mix, benchmark, model mix and each shortfall rule's line; null without expected risk. */
export function riskReturnChart(figures: Figures, format: Formatter): RiskReturnChart | null {
  const risk = figures.expected_risk;
  if (!risk) return null;
  const points: Array<RiskReturnChart['points'][number]> = [
    { name: ACCOUNT_SERIES, volatility: risk.volatility, expectedReturn: risk.expected_return, role: 'account' },
  ];
  const { expected_return: benchmarkReturn, volatility: benchmarkVolatility } = figures.benchmark;
  if (benchmarkReturn !== null && benchmarkVolatility !== null) {
    points.push({ name: BENCHMARK_SERIES, volatility: benchmarkVolatility, expectedReturn: benchmarkReturn, role: 'benchmark' });
  }
  const mix = figures.optimal_mix;
  if (mix) points.push({ name: 'Model mix', volatility: mix.volatility, expectedReturn: mix.expected_return, role: 'optimal' });
  const frontier = (figures.frontier ?? []).map((point) => ({ volatility: point.volatility, expectedReturn: point.expected_return }));

  const all = [...points, ...frontier];
  const xDomain: [number, number] = [0, niceCeiling(Math.max(...all.map((p) => p.volatility)) * 1.15, 0.02)];
  const yLow = Math.min(0, ...all.map((p) => p.expectedReturn));
  const yDomain: [number, number] = [niceFloor(yLow, 0.01), niceCeiling(Math.max(...all.map((p) => p.expectedReturn)) * 1.2, 0.01)];

  const ruleLines: Array<RiskReturnChart['ruleLines'][number]> = [];
  (figures.shortfall ?? []).forEach((rule, index) => {
    const line = shortfallLine({ threshold: rule.threshold, horizonYears: rule.horizon_years, confidence: rule.confidence, basis: rule.basis });
    const segment = clipLine(line.intercept, line.slope, xDomain, yDomain);
    if (segment) ruleLines.push({ name: `Rule ${index + 1}`, ...segment });
  });

  const described = points.map((point) => `${point.name}: expected return ${format.percent(point.expectedReturn)}, volatility ${format.percent(point.volatility)}`);
  const rulesText = (figures.shortfall ?? []).length > 0
    ? ` Mixes above the dashed line of a shortfall rule keep within it (${(figures.shortfall ?? []).map((rule, i) => `rule ${i + 1}: ${shortfallEventWords(format, rule)}`).join('; ')}).`
    : '';
  return {
    kind: 'risk-return',
    title: 'Expected return against expected volatility (model estimates)',
    summary: `${described.join('. ')}.${frontier.length > 0 ? ' The curve shows the highest expected return the mandate allows at each level of volatility.' : ''}${rulesText}`,
    frontier,
    points,
    ruleLines,
    xDomain,
    yDomain,
  };
}

/**
 * The one-year return distribution N(μ, σ²) with the tail below the first
 * rule's threshold; null without expected risk. The curve is the normal
 * density φ((r − μ)/σ)/σ over μ ± 3.5σ, 141 points (the model of methods.md,
 * "Expected risk"); nothing on it is a new figure, only the shape of that model.
 */
export function distributionChart(figures: Figures, format: Formatter): DistributionChart | null {
  const risk = figures.expected_risk;
  if (!risk || !(risk.volatility > 0)) return null;
  const mean = risk.expected_return;
  const sigma = risk.volatility;
  const low = mean - 3.5 * sigma;
  const high = mean + 3.5 * sigma;
  const steps = 140;
  const curve = Array.from({ length: steps + 1 }, (_, i) => {
    const r = low + ((high - low) * i) / steps;
    return { r, density: normalDensity((r - mean) / sigma) / sigma };
  });
  const rule = figures.shortfall?.[0] ?? null;
  const threshold = rule && rule.threshold > low && rule.threshold < high ? rule.threshold : null;
  const tail = threshold === null ? [] : [...curve.filter((point) => point.r < threshold), { r: threshold, density: normalDensity((threshold - mean) / sigma) / sigma }];
  const thresholdText = rule === null
    ? ''
    : threshold === null
      ? ` The threshold of your shortfall rule (${format.percent(rule.threshold, { digits: 0 })}) lies outside the range shown.`
      : ` Shaded: years with a return below ${format.percent(rule.threshold, { digits: 0 })}, the threshold of your first shortfall rule${rule.horizon_years === 1 ? '' : ` (the rule itself looks at ${format.integer(rule.horizon_years)} years together)`}.`;
  return {
    kind: 'distribution',
    title: 'How one-year returns could spread under the model (an estimate, not a forecast)',
    summary: `Under the model, the return over the coming year centres on ${format.percent(mean)} with a volatility of ${format.percent(sigma)}.${thresholdText} `
      + `The dashed line marks the ${format.percent(0.95, { digits: 0 })} value at risk: the model puts the chance of a loss of ${format.percent(risk.var95_1y)} or worse at about one year in twenty.`,
    curve,
    tail,
    threshold,
    mean,
    valueAtRisk: risk.var95_1y,
    labels: {
      threshold: threshold === null ? null : `threshold ${format.percent(threshold, { digits: 0 })}`,
      mean: `centre ${format.percent(mean, { digits: 1 })}`,
      valueAtRisk: `${format.percent(0.95, { digits: 0 })} value at risk: ${format.percent(-risk.var95_1y, { digits: 1 })}`,
    },
    xDomain: [low, high],
  };
}
