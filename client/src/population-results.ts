/**
 * A population result on the page: the caution first; percentile bands over time for one
 * compartment (the outer percentiles shaded, the median drawn, and with a residual error the
 * outer percentiles of simulated observations as a dashed outline); each target's attainment as a
 * bar with its Monte Carlo standard error in words; histograms of the headline period's trough
 * and Cmax; and the regimen grid as a table coloured by attainment, the best row marked in text.
 * Styles are set through CSSOM only (the page's Content-Security-Policy allows no inline style).
 */
import { Chart, Filler, Legend, LinearScale, LineController, LineElement, PointElement, Tooltip, type ChartDataset } from 'chart.js';
import type { FigureSummary, PopulationResult } from '../../models/population/summary.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { h, svg } from './dom.ts';

Chart.register(LineController, LineElement, PointElement, LinearScale, Filler, Tooltip, Legend);

type XY = { x: number; y: number };

const bandColour = '#1f6f8b';
/** Simulated observations: a warm colour apart from the teal band, dashed so it reads in grey print too. */
const observationColour = '#b4532a';
export const observationLabel = 'simulated observations (with residual error)';

/** The shaded band's edges and the median line, by percentile key. */
export function bandKeys(percentiles: string[]): { low: string; mid: string; high: string } {
  const sorted = [...percentiles].sort((a, b) => Number(a) - Number(b));
  const mid = sorted.includes('50') ? '50' : sorted[Math.floor(sorted.length / 2)];
  return { low: sorted[0], mid, high: sorted[sorted.length - 1] };
}

/** How a band's middle line is called: the median, or the percentile standing in for it. */
function middleWords(mid: string): string {
  return mid === '50' ? 'median' : `${mid}th percentile`;
}

/** A histogram's caption: the middle chosen percentile (as the band draws it), the mean and the count. */
export function histogramCaption(title: string, period: string, f: FigureSummary, percentiles: string[], unit: string): string {
  const { mid } = bandKeys(percentiles);
  return `${title}, ${period}: ${middleWords(mid)} ${fmt(f.percentiles[mid] ?? NaN)} ${unit}, mean ${fmt(f.mean)} ${unit}, ${f.subjects} subjects.`;
}

function percent(p: number): string {
  return `${fmt(100 * p, 3)}%`;
}

function points(times: number[], values: number[]): XY[] {
  const out: XY[] = [];
  for (let i = 0; i < times.length; i++) if (values[i] !== null && Number.isFinite(values[i])) out.push({ x: times[i], y: values[i] });
  return out;
}

export class PopulationView {
  chart: Chart<'line', XY[]> | null = null;
  private compartment = '';

  constructor(private readonly host: HTMLElement) {}

  clear(): void {
    this.chart?.destroy();
    this.chart = null;
    this.host.replaceChildren();
  }

  show(result: PopulationResult): void {
    this.clear();
    const ids = Object.keys(result.bands);
    if (!ids.includes(this.compartment)) this.compartment = ids[0] ?? '';
    const select = h('select', { id: 'population-compartment', 'data-testid': 'population-compartment' }, ...ids.map((id) => h('option', { value: id }, id)));
    select.value = this.compartment;
    const canvas = h('canvas', { id: 'population-plot', 'data-testid': 'population-plot', role: 'img', 'aria-label': 'Percentile bands of concentration over time; the figures below give the values.' });
    const bandsBox = h('div', { class: 'population-plot-box' }, canvas);
    const figures = h('div', { class: 'population-figures' });
    select.addEventListener('change', () => {
      this.compartment = select.value;
      this.drawBands(result, canvas);
      this.fillFigures(result, figures);
    });
    const keys = bandKeys(result.percentiles);
    this.host.append(
      h('p', { class: 'population-caution', role: 'note', 'data-testid': 'population-caution' }, result.caution),
      h(
        'p',
        { class: 'note' },
        `${result.subjects} virtual subjects, seed ${result.seed}. `,
        `Shaded: ${keys.low}th to ${keys.high}th percentile; line: ${middleWords(keys.mid)}.`,
        result.observationBands ? ` Dashed: the ${keys.low}th and ${keys.high}th percentiles of simulated observations, the concentrations with the residual error added.` : '',
      ),
      h('div', { class: 'field population-compartment-field' }, h('label', { for: 'population-compartment' }, 'Compartment'), select),
      bandsBox,
      figures,
    );
    this.drawBands(result, canvas);
    this.fillFigures(result, figures);
  }

  private drawBands(result: PopulationResult, canvas: HTMLCanvasElement): void {
    const bands = result.bands[this.compartment];
    if (!bands) return;
    const { low, mid, high } = bandKeys(result.percentiles);
    const u = result.units;
    const datasets: ChartDataset<'line', XY[]>[] = [
      { label: `${low}th percentile`, data: points(result.times, bands[low]), borderColor: 'rgba(31, 111, 139, 0.35)', backgroundColor: 'rgba(31, 111, 139, 0.18)', borderWidth: 1, pointRadius: 0, fill: false },
      // Filled down to the dataset before it: the area between the outer percentiles.
      { label: `${low}th to ${high}th percentile`, data: points(result.times, bands[high]), borderColor: 'rgba(31, 111, 139, 0.35)', backgroundColor: 'rgba(31, 111, 139, 0.18)', borderWidth: 1, pointRadius: 0, fill: '-1' },
      { label: middleWords(mid), data: points(result.times, bands[mid]), borderColor: bandColour, backgroundColor: bandColour, borderWidth: 2, pointRadius: 0, fill: false },
      ...observationDatasets(result, this.compartment),
    ];
    if (this.chart) {
      this.chart.data.datasets = datasets;
      this.chart.update();
      return;
    }
    this.chart = new Chart<'line', XY[]>(canvas, {
      type: 'line',
      data: { datasets },
      options: {
        parsing: false,
        animation: false,
        responsive: true,
        maintainAspectRatio: false,
        interaction: { mode: 'index', intersect: false },
        scales: {
          x: { type: 'linear', min: result.times[0], max: result.times[result.times.length - 1], ticks: { includeBounds: false }, title: { display: true, text: `Time (${u.time})` } },
          y: { type: 'linear', beginAtZero: true, title: { display: true, text: `Concentration (${u.concentration})` } },
        },
        // The band's lower edge has no legend entry of its own: the shaded entry names both ends;
        // likewise the observations' outline is one entry for its two dashed edges.
        plugins: { legend: { position: 'bottom', labels: { filter: (item, data) => item.datasetIndex !== 0 && !isObservationLow(data.datasets[item.datasetIndex ?? 0]?.label) } }, tooltip: { callbacks: { label: (c) => `${c.dataset.label ?? ''}: ${fmt(c.parsed.y)} ${u.concentration}` } } },
      },
    });
  }

  private fillFigures(result: PopulationResult, host: HTMLElement): void {
    host.replaceChildren(...[this.attainment(result), this.histograms(result), this.regimens(result), this.warnings(result)].filter((x): x is HTMLElement => x !== null));
  }

  /** Each target's probability as a bar; the standard error in words beside it. */
  private attainment(result: PopulationResult): HTMLElement | null {
    if (result.attainment.length === 0) return null;
    const list = h('ul', { class: 'attainment-list', 'data-testid': 'population-attainment' });
    for (const a of result.attainment) {
      const fill = h('span', { class: 'attainment-fill' });
      fill.style.width = `${Math.max(0, Math.min(1, a.probability)) * 100}%`;
      list.append(
        h(
          'li',
          {},
          h('span', { class: 'attainment-label' }, a.target),
          h('span', { class: 'attainment-bar', role: 'img', 'aria-label': `${percent(a.probability)} of subjects` }, fill),
          h('span', { class: 'attainment-text' }, `${percent(a.probability)} ± ${percent(a.standardError)} (standard error); ${a.attained} of ${a.subjects}${a.undetermined ? `, ${a.undetermined} undetermined` : ''}`),
        ),
      );
    }
    return h('section', { class: 'population-block' }, h('h3', {}, 'Targets attained'), list);
  }

  private histograms(result: PopulationResult): HTMLElement | null {
    const figures = result.exposure[this.compartment];
    if (!figures) return null;
    const unit = result.units.concentration;
    const parts = (['trough', 'cmax'] as const).map((name) => {
      const f = figures[name] as FigureSummary | undefined;
      const title = name === 'trough' ? 'Trough' : 'Cmax';
      if (!f || !f.histogram) return h('div', { class: 'histogram' }, h('h4', {}, title), h('p', { class: 'note' }, 'Not determined for these subjects.'));
      return h(
        'figure',
        { class: 'histogram', 'data-testid': `population-histogram-${name}` },
        histogramSvg(f, `${title} (${unit})`),
        h('figcaption', {}, histogramCaption(title, result.headlinePeriod, f, result.percentiles, unit)),
      );
    });
    return h('section', { class: 'population-block' }, h('h3', {}, `Distribution at ${result.headlinePeriod} (${this.compartment})`), h('div', { class: 'histograms' }, ...parts));
  }

  /** The regimen grid: a cell's colour follows its attainment; the best row is marked in words too. */
  private regimens(result: PopulationResult): HTMLElement | null {
    const grid = result.regimens;
    if (!grid || grid.rows.length === 0) return null;
    const targets = grid.rows[0].attainment.map((a) => a.target);
    const head = h('tr', {}, h('th', { scope: 'col' }, 'Regimen'), ...targets.map((t) => h('th', { scope: 'col' }, t)), h('th', { scope: 'col' }, 'All floor targets'), h('th', { scope: 'col' }, 'Ceilings kept'));
    const body = h('tbody');
    grid.rows.forEach((row, k) => {
      const best = grid.best === k;
      // No joint share when every target is a ceiling: a dash, uncoloured.
      const cells = [...row.attainment.map((a) => a.probability), row.joint?.probability ?? null, row.ceiling.probability].map((p, j, all) => {
        const td = h('td', { class: j === all.length - 2 ? 'joint' : '' }, p === null ? '—' : percent(p));
        if (p !== null) colourCell(td, p);
        return td;
      });
      body.append(h('tr', { class: best ? 'best' : '', 'data-testid': best ? 'population-best-regimen' : null }, h('th', { scope: 'row' }, best ? `★ best: ${row.regimen}` : row.regimen), ...cells));
    });
    return h(
      'section',
      { class: 'population-block' },
      h('h3', {}, 'Regimens compared'),
      h('p', { class: 'note' }, `Best (marked ★): ${grid.rule}.`),
      heatMap(grid),
      h('div', { class: 'table-scroll' }, h('table', { class: 'regimen-grid', 'data-testid': 'population-regimens' }, h('thead', {}, head), body)),
    );
  }

  private warnings(result: PopulationResult): HTMLElement | null {
    const w = result.diagnostics.warnings;
    if (w.length === 0) return null;
    return h('section', { class: 'population-block' }, h('h3', {}, 'Warnings'), h('ul', {}, ...w.map((x) => h('li', {}, x))));
  }
}

const observationLowSuffix = 'th percentile of simulated observations';

function isObservationLow(label: string | undefined): boolean {
  return label !== undefined && label.endsWith(observationLowSuffix);
}

/**
 * The outer percentiles of simulated observations (present when the scenario has a residual
 * error) as two dashed lines, unfilled, so the concentration band stays readable beneath.
 */
function observationDatasets(result: PopulationResult, compartment: string): ChartDataset<'line', XY[]>[] {
  const bands = result.observationBands?.[compartment];
  if (!bands) return [];
  const { low, high } = bandKeys(result.percentiles);
  const style = { borderColor: observationColour, backgroundColor: 'rgba(0, 0, 0, 0)', borderWidth: 1.5, pointRadius: 0, fill: false } as const;
  return [
    { ...style, borderDash: [6, 4], label: `${low}${observationLowSuffix}`, data: points(result.times, bands[low]) },
    { ...style, borderDash: [6, 4], label: observationLabel, data: points(result.times, bands[high]) },
  ];
}

/** Light to deep teal by share; white text on the deep end for contrast. */
/**
 * The regimen grid as a heat map: a row per amount, a column per interval (and infusion time),
 * each cell coloured and labelled by the share the ranking reads (every floor target met; with
 * ceilings only, every ceiling kept), the share keeping the ceilings under it when both kinds of
 * target are set, the best cell marked ★. Null when the grid varies fewer than two amounts or
 * two intervals (the table below says it all then).
 */
export function heatMap(grid: NonNullable<PopulationResult['regimens']>): HTMLElement | null {
  const rows = grid.rows;
  if (rows.some((r) => r.amount === null || r.interval === null)) return null;
  const column = (r: (typeof rows)[number]) => (r.duration === null ? `every ${r.interval}` : `every ${r.interval} over ${r.duration}`);
  const amounts = [...new Set(rows.map((r) => r.amount as string))];
  const columns = [...new Set(rows.map(column))];
  if (amounts.length < 2 || columns.length < 2) return null;
  // The ceiling share under each cell when it ranks beside the floor share and is not everywhere 100%.
  const both = rows.some((r) => r.joint !== null) && rows.some((r) => r.ceiling.probability < 1);
  const head = h('tr', {}, h('th', { scope: 'col' }, 'Amount'), ...columns.map((c) => h('th', { scope: 'col' }, c)));
  const body = h('tbody');
  for (const amount of amounts) {
    const cells = columns.map((c) => {
      const k = rows.findIndex((r) => r.amount === amount && column(r) === c);
      if (k < 0) return h('td', { class: 'empty' }, '');
      const r = rows[k];
      const score = (r.joint ?? r.ceiling).probability;
      const best = grid.best === k;
      const td = h(
        'td',
        { class: best ? 'best' : '', title: `${r.regimen}: ${r.attainment.map((a) => `${a.target} ${percent(a.probability)}`).join('; ')}`, 'data-testid': best ? 'population-heat-best' : null },
        `${best ? '★ ' : ''}${percent(score)}`,
        both ? h('div', { class: 'sub' }, `ceilings ${percent(r.ceiling.probability)}`) : null,
      );
      colourCell(td, score);
      return td;
    });
    body.append(h('tr', {}, h('th', { scope: 'row' }, amount), ...cells));
  }
  const what = rows.some((r) => r.joint !== null) ? 'the share of subjects meeting every floor target' : 'the share of subjects keeping every ceiling';
  return h(
    'figure',
    { class: 'regimen-heat' },
    h('div', { class: 'table-scroll' }, h('table', { class: 'regimen-heat-map', 'data-testid': 'population-heat-map' }, h('thead', {}, head), body)),
    h('figcaption', { class: 'note' }, `Heat map: ${what} (darker is higher)${both ? ', the share keeping every ceiling under it' : ''}; ★ the best under the rule. Every regimen is given to the same virtual subjects.`),
  );
}

function colourCell(td: HTMLElement, p: number): void {
  const t = Math.max(0, Math.min(1, p));
  td.style.backgroundColor = `hsl(195 ${35 + 25 * t}% ${96 - 58 * t}%)`;
  td.style.color = t > 0.55 ? '#ffffff' : '#1e2a32';
}

/** A histogram as SVG bars, with the ends of the axis and the tallest count written out. */
function histogramSvg(f: FigureSummary, label: string): SVGSVGElement {
  const hist = f.histogram as NonNullable<FigureSummary['histogram']>;
  const W = 300;
  const H = 140;
  const pad = { l: 30, r: 8, t: 8, b: 34 };
  const max = Math.max(1, ...hist.counts);
  const lo = hist.edges[0];
  const hi = hist.edges[hist.edges.length - 1];
  const span = hi - lo || 1;
  const x = (v: number) => pad.l + ((v - lo) / span) * (W - pad.l - pad.r);
  const y = (c: number) => H - pad.b - (c / max) * (H - pad.t - pad.b);
  const bars = hist.counts.map((c, i) =>
    svg('rect', { x: x(hist.edges[i]).toFixed(1), y: y(c).toFixed(1), width: Math.max(0.5, x(hist.edges[i + 1]) - x(hist.edges[i]) - 1).toFixed(1), height: (H - pad.b - y(c)).toFixed(1), class: 'histogram-bar' }, svg('title', {}, `${fmt(hist.edges[i])} to ${fmt(hist.edges[i + 1])}: ${c} subjects`)),
  );
  return svg(
    'svg',
    { viewBox: `0 0 ${W} ${H}`, class: 'histogram-svg', role: 'img', 'aria-label': `${label}: histogram of ${f.subjects} subjects` },
    ...bars,
    svg('line', { x1: pad.l, y1: H - pad.b, x2: W - pad.r, y2: H - pad.b, class: 'histogram-axis' }),
    svg('text', { x: pad.l, y: H - pad.b + 13, class: 'histogram-tick', 'text-anchor': 'start' }, fmt(lo, 3)),
    svg('text', { x: W - pad.r, y: H - pad.b + 13, class: 'histogram-tick', 'text-anchor': 'end' }, fmt(hi, 3)),
    svg('text', { x: (pad.l + W - pad.r) / 2, y: H - 4, class: 'histogram-label', 'text-anchor': 'middle' }, label),
    svg('text', { x: pad.l - 4, y: pad.t + 8, class: 'histogram-tick', 'text-anchor': 'end' }, String(max)),
  );
}
