/**
 * Charts of a statement: Vega-Lite specifications compiled to Vega and
 * rendered to static SVG at build time (no script in the page). Colours come
 * from the palette, numbers on axes use the client's locale separators, and
 * every SVG carries its own text alternative (role="img", aria-label,
 * <title> and <desc>).
 */
import { None, View, logger, parse } from 'vega';
import { compile } from 'vega-lite';
import type { ChartData, DistributionChart, AllocationChart, GrowthChart, RiskReturnChart } from '../report/charts.ts';
import { ACCOUNT_SERIES, BENCHMARK_SERIES } from '../report/charts.ts';
import type { Formatter } from '../report/format.ts';
import { FONT_FAMILY, PALETTE } from './palette.ts';

/** Drawing width of every chart in CSS pixels (the A4 content width is about 672 px). */
export const CHART_WIDTH = 640;

// Vega-Lite's TopLevelSpec type is very wide; the specs here are plain JSON checked by compile().
type Spec = Record<string, unknown>;

/** The chart theme: fonts, colours and axis style from the palette. */
export function chartConfig(): Spec {
  return {
    background: null,
    font: FONT_FAMILY,
    padding: 4,
    aria: false,
    view: { stroke: null },
    axis: {
      labelFont: FONT_FAMILY,
      titleFont: FONT_FAMILY,
      labelFontSize: 11,
      titleFontSize: 11,
      titleFontWeight: 600,
      labelColor: PALETTE.muted,
      titleColor: PALETTE.muted,
      domainColor: PALETTE.rule,
      tickColor: PALETTE.rule,
      gridColor: PALETTE.wash,
      gridWidth: 1,
    },
    legend: {
      labelFont: FONT_FAMILY,
      labelFontSize: 11,
      labelColor: PALETTE.ink,
      titleFont: FONT_FAMILY,
      orient: 'bottom',
      direction: 'horizontal',
      symbolSize: 90,
    },
    text: { font: FONT_FAMILY, fontSize: 11, color: PALETTE.ink },
  };
}

/** d3-format number locale from the Intl separators of the client's locale. */
function numberLocale(format: Formatter): Spec {
  const { decimal, group, percentSuffix } = format.separators;
  const minus = new Intl.NumberFormat(format.locale).formatToParts(-1).find((part) => part.type === 'minusSign')?.value ?? '-';
  return { decimal, thousands: group, grouping: [3], currency: ['', ''], percent: percentSuffix || '%', minus };
}

function growthSpec(chart: GrowthChart): Spec {
  const dates = chart.points.map((point) => point.date);
  const values = chart.points.map((point) => point.value);
  const spread = Math.max(...values) - Math.min(...values);
  const levelFormat = spread < 4 ? ',.1f' : ',.0f';
  const first = Date.parse(dates[0]!);
  const last = Date.parse(dates[dates.length - 1]!);
  const years = (last - first) / (365.25 * 86_400_000);
  const xAxis = years >= 2
    ? { format: '%Y', tickCount: { interval: 'year', step: years > 8 ? 2 : 1 } }
    : { format: '%b %Y', tickCount: { interval: 'month', step: years > 1 ? 3 : 1 } };
  return {
    width: CHART_WIDTH,
    height: 210,
    autosize: { type: 'fit-x', contains: 'padding' },
    data: { values: chart.points },
    layer: [
      { mark: { type: 'rule', color: PALETTE.faint, strokeDash: [2, 3] }, encoding: { y: { datum: 100, type: 'quantitative' } } },
      {
        mark: { type: 'line', strokeWidth: 2 },
        encoding: {
          x: { field: 'date', type: 'temporal', scale: { type: 'utc' }, title: null, axis: { ...xAxis, grid: false, labelOverlap: true } },
          y: { field: 'value', type: 'quantitative', scale: { zero: false, nice: true }, title: 'Value of 100 invested', axis: { format: levelFormat, tickCount: 5 } },
          color: {
            field: 'series',
            type: 'nominal',
            scale: { domain: chart.seriesNames, range: [PALETTE.account, PALETTE.benchmark] },
            legend: { title: null, orient: 'top-left', direction: 'horizontal', symbolType: 'stroke', symbolStrokeWidth: 3 },
          },
          strokeDash: {
            field: 'series',
            type: 'nominal',
            scale: { domain: [ACCOUNT_SERIES, BENCHMARK_SERIES], range: [[1, 0], [5, 3]] },
            legend: null,
          },
        },
      },
    ],
  };
}

function allocationSpec(chart: AllocationChart): Spec {
  const top = Math.min(1, Math.ceil((Math.max(...chart.rows.map((row) => Math.max(row.max, row.weight))) + 0.08) * 10) / 10);
  const y = { field: 'label', type: 'nominal', sort: null, title: null, axis: { labelFontSize: 12, labelColor: PALETTE.ink, domain: false, ticks: false, labelPadding: 8 } };
  return {
    width: CHART_WIDTH,
    height: { step: 30 },
    autosize: { type: 'fit-x', contains: 'padding' },
    data: { values: chart.rows.map((row) => ({ ...row, status: row.inside ? 'Inside its range' : 'Outside its range' })) },
    encoding: { y },
    layer: [
      {
        mark: { type: 'bar', height: 18, color: PALETTE.range, cornerRadius: 2 },
        encoding: {
          x: { field: 'min', type: 'quantitative', scale: { domain: [0, top] }, title: 'Share of the account (band: the mandate’s range)', axis: { format: '.0%', grid: true, tickCount: 10 } },
          x2: { field: 'max' },
        },
      },
      {
        mark: { type: 'bar', height: 8, cornerRadiusEnd: 2 },
        encoding: {
          x: { field: 'weight', type: 'quantitative' },
          x2: { datum: 0 },
          color: {
            field: 'status',
            type: 'nominal',
            scale: { domain: ['Inside its range', 'Outside its range'], range: [PALETTE.account, PALETTE.breach] },
            legend: { title: null, orient: 'bottom' },
          },
        },
      },
      {
        mark: { type: 'text', align: 'left', dx: 5, fontSize: 11, fontWeight: 600 },
        encoding: { x: { field: 'weight', type: 'quantitative' }, text: { field: 'weightText' }, color: { value: PALETTE.ink } },
      },
    ],
  };
}

function riskReturnSpec(chart: RiskReturnChart): Spec {
  const pointSeries = chart.points.map((point) => point.name);
  const lineSeries = [...(chart.frontier.length > 0 ? ['Efficient frontier'] : []), ...chart.ruleLines.map((line) => `${line.name} boundary`)];
  const roleColour = { account: PALETTE.account, benchmark: PALETTE.benchmark, optimal: PALETTE.optimal };
  const domain = [...pointSeries, ...lineSeries];
  const range = [...chart.points.map((point) => roleColour[point.role]), ...(chart.frontier.length > 0 ? [PALETTE.frontier] : []), ...chart.ruleLines.map(() => PALETTE.breach)];
  const x = { type: 'quantitative', scale: { domain: [...chart.xDomain], nice: false }, title: 'Expected volatility, a year (estimate)', axis: { format: '.0%', tickCount: 8 } };
  const y = { type: 'quantitative', scale: { domain: [...chart.yDomain], nice: false }, title: 'Expected return, a year (estimate)', axis: { format: '.0%', tickCount: 6 } };
  const color = { field: 'series', type: 'nominal', scale: { domain, range }, legend: { title: null, orient: 'bottom', columns: 3, symbolType: 'circle' } };
  const layers: Spec[] = [];
  if (chart.frontier.length > 0) {
    layers.push({
      data: { values: chart.frontier.map((point) => ({ ...point, series: 'Efficient frontier' })) },
      mark: { type: 'line', strokeWidth: 2.5, interpolate: 'monotone' },
      encoding: { x: { field: 'volatility', ...x }, y: { field: 'expectedReturn', ...y }, color, order: { field: 'volatility' } },
    });
  }
  if (chart.ruleLines.length > 0) {
    layers.push({
      data: { values: chart.ruleLines.map((line) => ({ ...line, series: `${line.name} boundary` })) },
      mark: { type: 'rule', strokeDash: [6, 4], strokeWidth: 1.5 },
      encoding: { x: { field: 'x1', ...x }, y: { field: 'y1', ...y }, x2: { field: 'x2' }, y2: { field: 'y2' }, color },
    });
    // Each label sits below and right of its line near the foot of the visible segment, below where the mixes usually lie.
    layers.push({
      data: {
        values: chart.ruleLines.map((line, index) => ({
          series: `${line.name} boundary`,
          label: `${line.name}: keep above`,
          x: line.x1 + (0.1 + 0.15 * index) * (line.x2 - line.x1),
          y: line.y1 + (0.1 + 0.15 * index) * (line.y2 - line.y1),
        })),
      },
      mark: { type: 'text', align: 'left', baseline: 'top', dx: 6, dy: 5, fontSize: 10, fontWeight: 600 },
      encoding: { x: { field: 'x', ...x }, y: { field: 'y', ...y }, text: { field: 'label' }, color: { value: PALETTE.breach } },
    });
  }
  layers.push({
    data: { values: chart.points.map((point) => ({ ...point, series: point.name })) },
    mark: { type: 'point', filled: true, size: 110, stroke: PALETTE.paper, strokeWidth: 1.5, opacity: 1 },
    encoding: {
      x: { field: 'volatility', ...x },
      y: { field: 'expectedReturn', ...y },
      color,
      shape: { field: 'series', type: 'nominal', scale: { domain: pointSeries, range: chart.points.map((point) => (point.role === 'account' ? 'circle' : point.role === 'benchmark' ? 'square' : 'diamond')) }, legend: null },
    },
  });
  return { width: CHART_WIDTH, height: 260, autosize: { type: 'fit-x', contains: 'padding' }, layer: layers };
}

function distributionSpec(chart: DistributionChart): Spec {
  const x = { type: 'quantitative', scale: { domain: [...chart.xDomain], nice: false }, title: 'Return over one year (model estimate)', axis: { format: '.0%', tickCount: 10, grid: false } };
  const peak = Math.max(...chart.curve.map((point) => point.density));
  const y = { type: 'quantitative', scale: { domain: [0, peak * 1.3] }, title: null, axis: null };
  // The value-at-risk label sits on a higher row; the threshold's label goes on the side away from the VaR line.
  const thresholdAlign = chart.threshold !== null && chart.threshold < -chart.valueAtRisk ? 'right' : 'left';
  const markers = [
    { r: -chart.valueAtRisk, label: chart.labels.valueAtRisk, colour: PALETTE.ink, dash: [5, 3], row: 0, align: 'left' },
    { r: chart.mean, label: chart.labels.mean, colour: PALETTE.account, dash: [1, 0], row: 1, align: 'left' },
    ...(chart.threshold !== null && chart.labels.threshold !== null
      ? [{ r: chart.threshold, label: chart.labels.threshold, colour: PALETTE.breach, dash: [1, 0], row: 1, align: thresholdAlign }]
      : []),
  ];
  return {
    width: CHART_WIDTH,
    height: 190,
    autosize: { type: 'fit-x', contains: 'padding' },
    layer: [
      {
        data: { values: chart.curve },
        mark: { type: 'area', color: PALETTE.accountSoft, line: { color: PALETTE.account, strokeWidth: 1.5 }, interpolate: 'monotone' },
        encoding: { x: { field: 'r', ...x }, y: { field: 'density', ...y } },
      },
      ...(chart.tail.length > 1
        ? [{
          data: { values: chart.tail },
          mark: { type: 'area', color: PALETTE.tail, opacity: 0.9, interpolate: 'monotone' },
          encoding: { x: { field: 'r', ...x }, y: { field: 'density', ...y } },
        }]
        : []),
      {
        data: { values: markers.map((marker) => ({ ...marker, bottom: 0, top: peak * (marker.row === 0 ? 1.22 : 1.08) })) },
        layer: [
          {
            mark: { type: 'rule', strokeWidth: 1.3 },
            encoding: {
              x: { field: 'r', ...x },
              y: { field: 'bottom', ...y },
              y2: { field: 'top' },
              color: { field: 'colour', type: 'nominal', scale: null },
              strokeDash: { field: 'dash', type: 'nominal', scale: null },
            },
          },
          ...['left', 'right'].map((align) => ({
            transform: [{ filter: { field: 'align', equal: align } }],
            mark: { type: 'text', align, baseline: 'middle', dx: align === 'left' ? 4 : -4, fontSize: 10.5 },
            encoding: { x: { field: 'r', ...x }, y: { field: 'top', ...y }, text: { field: 'label' }, color: { field: 'colour', type: 'nominal', scale: null } },
          })),
        ],
      },
    ],
  };
}

function specOf(chart: ChartData): Spec {
  switch (chart.kind) {
    case 'growth': return growthSpec(chart);
    case 'allocation': return allocationSpec(chart);
    case 'risk-return': return riskReturnSpec(chart);
    case 'distribution': return distributionSpec(chart);
  }
}

const ESCAPES: Readonly<Record<string, string>> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };

/** Escapes text for XML/HTML element content and quoted attributes. */
export function escapeXml(text: string): string {
  return text.replace(/[&<>"']/g, (character) => ESCAPES[character]!);
}

/**
 * Makes Vega's SVG a self-described static image: role="img" with the
 * chart's title as aria-label, <title> and <desc> first, Vega's own ARIA
 * roles on inner marks removed (an image's children are presentational),
 * and any id made unique to the chart so several SVGs can share a page.
 */
export function finishSvg(svg: string, chart: ChartData, id: string): string {
  if (!svg.startsWith('<svg ')) throw new Error(`Vega returned no SVG for chart ${id}`);
  const body = svg
    .replace(/ (?:role|aria-roledescription|aria-label|aria-hidden)="[^"]*"/g, '')
    .replace(/ id="([^"]+)"/g, ` id="${id}-$1"`)
    .replace(/url\(#([^)]+)\)/g, `url(#${id}-$1)`)
    .replace(/^<svg ([^>]*)class="marks"([^>]*)>/, (_match, before: string, after: string) =>
      `<svg ${before}class="chart-svg"${after} role="img" aria-label="${escapeXml(chart.title)}" aria-describedby="${id}-desc"><title>${escapeXml(chart.title)}</title><desc id="${id}-desc">${escapeXml(chart.summary)}</desc>`);
  if (!body.includes('role="img"')) throw new Error(`could not mark the SVG of chart ${id} as an image`);
  return body;
}

/** Renders one chart to static SVG (about 15–40 ms). */
export async function renderChartSvg(chart: ChartData, format: Formatter, id: string): Promise<string> {
  const spec = { $schema: 'https://vega.github.io/schema/vega-lite/v6.json', config: chartConfig(), ...specOf(chart) };
  // Vega-Lite and Vega log advice about specs to the console; a statement run stays quiet.
  const vegaSpec = compile(spec as never, { logger: logger(None) } as never).spec;
  const view = new View(parse(vegaSpec), { renderer: 'none', logLevel: None, locale: { number: numberLocale(format) } } as never);
  try {
    const svg = await view.toSVG();
    return finishSvg(svg, chart, id);
  } finally {
    view.finalize();
  }
}
