/**
 * The concentration plot: chart.js line chart (parsing off; the points come from curve.ts,
 * smoothed and thinned to the canvas), linear or logarithmic y (the logarithmic axis by the
 * report's rule, server/report/ticks.ts), target windows shaded, dose times marked, the kept
 * reference drawn dashed underneath the current run.
 */
import {
  Chart,
  Interaction,
  Legend,
  LinearScale,
  LineController,
  LineElement,
  LogarithmicScale,
  PointElement,
  Tooltip,
  type ChartDataset,
  type ChartOptions,
  type InteractionItem,
  type InteractionModeFunction,
} from 'chart.js';
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { logAxis, lowAfterRise, type Axis } from '../../models/result/axis-ticks.ts';
import { curvePoints, type CurvePoint, type CurveView } from './curve.ts';
import { concentrationFactor, timeFactor } from './quantity.ts';
import { doseMarksPlugin, windowBandPlugin, type Band } from './plot-plugins.ts';
import { isObservationDataset, observationDatasets, overlayLabel, timeTitle } from './observations-overlay.ts';

/** A data point as chart.js takes it with parsing off. */
export type XY = CurvePoint;

Chart.register(LineController, LineElement, PointElement, LinearScale, LogarithmicScale, Tooltip, Legend);

/**
 * chart.js draws a solid line without tension through its "fast path", which puts every
 * point of one pixel column on a vertical bar at their mean x: on a rising limb that is a
 * staircase, on a falling one a row of notches. Any tension takes the ordinary path; this one
 * moves the Bézier control points by a millionth of the point spacing, so the line is still
 * the polyline through the points (curve.ts makes those dense enough to look smooth).
 */
const noFastPathTension = 1e-6;

declare module 'chart.js' {
  interface InteractionModeMap {
    reported: InteractionModeFunction;
  }
}

/**
 * Hover and tooltips at reported times only: for each curve, its reported point nearest the
 * pointer in x. The points curve.ts adds between reported times are for the line alone, so a
 * tooltip never shows an interpolated value as if it had been computed.
 */
Interaction.modes.reported = (chart, e) => {
  const items: InteractionItem[] = [];
  if (e.x === null) return items;
  chart.data.datasets.forEach((dataset, datasetIndex) => {
    if (!chart.isDatasetVisible(datasetIndex)) return;
    const elements = chart.getDatasetMeta(datasetIndex).data;
    const data = dataset.data as unknown as XY[];
    let best = -1;
    let distance = Infinity;
    for (let i = 0; i < elements.length; i++) {
      if (data[i]?.between) continue;
      const d = Math.abs(elements[i].x - (e.x as number));
      if (d < distance) {
        distance = d;
        best = i;
      }
    }
    if (best >= 0 && distance <= 40) items.push({ element: elements[best], datasetIndex, index: best });
  });
  return items;
};

export const seriesPalette = ['#1f6f8b', '#b5562b', '#5a7d2c', '#7b4f9d', '#a0346a', '#3d5a80', '#8c6d1f', '#2a7f62'];
const bandFills = ['rgba(76, 150, 120, 0.13)', 'rgba(190, 120, 60, 0.12)', 'rgba(110, 90, 170, 0.12)', 'rgba(60, 110, 170, 0.12)'];
const bandEdges = ['rgba(48, 110, 86, 0.75)', 'rgba(150, 90, 40, 0.75)', 'rgba(90, 70, 150, 0.75)', 'rgba(40, 90, 150, 0.75)'];

export interface PlotState {
  current: SimulationResultJson | null;
  reference: SimulationResultJson | null;
  /** Compartment ids to draw (those with a concentration). */
  selected: string[];
  log: boolean;
  /** Visible x range; null for the whole span. */
  range: { min: number; max: number } | null;
  /** Draw the steady-state cycle itself (dashed) from this time on: the start of the last dosing interval. */
  steadyFrom: number | null;
}

/** Colour of a compartment: by its place in the current result, so it stays put when others are hidden. */
export function colourOf(result: SimulationResultJson, id: string): string {
  const i = Object.entries(result.compartments)
    .filter(([, s]) => s.concentration !== null)
    .map(([k]) => k)
    .indexOf(id);
  return seriesPalette[(i < 0 ? 0 : i) % seriesPalette.length];
}

function withAlpha(hex: string, alpha: number): string {
  const n = parseInt(hex.slice(1), 16);
  return `rgba(${(n >> 16) & 255}, ${(n >> 8) & 255}, ${n & 255}, ${alpha})`;
}

/** The log axis's tick labels by value, set when the axis is drawn. */
function logTicks(axis: Axis): { ticks: { value: number; major: boolean }[]; labels: Map<number, string> } {
  const ticks = [...axis.ticks.map((t) => ({ value: t.value, major: true })), ...axis.minor.map((value) => ({ value, major: false }))].sort((a, b) => a.value - b.value);
  return { ticks, labels: new Map(axis.ticks.map((t) => [t.value, t.label])) };
}

export class PlotView {
  readonly chart: Chart<'line', XY[]>;
  private state: PlotState = { current: null, reference: null, selected: [], log: false, range: null, steadyFrom: null };
  /** Set when the reference was in other units that could not be converted. */
  referenceNote = '';

  constructor(canvas: HTMLCanvasElement) {
    const options: ChartOptions<'line'> = {
      parsing: false,
      animation: false,
      responsive: true,
      maintainAspectRatio: false,
      interaction: { mode: 'reported', axis: 'x', intersect: false },
      elements: { point: { radius: 0, hitRadius: 4, hoverRadius: 4 }, line: { borderWidth: 2, tension: noFastPathTension } },
      scales: {
        x: { type: 'linear', title: { display: true, text: 'time' }, ticks: { maxTicksLimit: 12 } },
        y: { type: 'linear', title: { display: true, text: 'concentration' }, beginAtZero: true },
      },
      plugins: {
        legend: { position: 'bottom', labels: { boxWidth: 24, boxHeight: 2, usePointStyle: false } },
        tooltip: {
          callbacks: {
            // Elapsed time, and the clock time beside it when the scenario has a clock.
            title: (items) => (items.length ? timeTitle(this.state.current, items[0].parsed.x ?? NaN) : ''),
            label: (item) => {
              const measured = overlayLabel(this.state.current, item);
              if (measured) return measured;
              const u = this.state.current?.units;
              return `${item.dataset.label ?? ''}: ${fmt(item.parsed.y)} ${u?.concentration ?? ''}`;
            },
          },
        },
      },
    };
    this.chart = new Chart<'line', XY[]>(canvas, {
      type: 'line',
      data: { datasets: [] },
      options,
      plugins: [windowBandPlugin(() => this.bands()), doseMarksPlugin(() => this.doseTimes(), 'rgba(70, 80, 100, 0.28)')],
    });
  }

  get current(): SimulationResultJson | null {
    return this.state.current;
  }

  /** The log axis in use (null on a linear axis), for the tick callbacks. */
  private logScale: ReturnType<typeof logTicks> | null = null;

  update(next: Partial<PlotState>): void {
    this.state = { ...this.state, ...next };
    const { current, reference, selected, log } = this.state;
    const whole = current ? { min: current.times[0] ?? 0, max: current.times[current.times.length - 1] ?? 1 } : { min: 0, max: 1 };
    const shown = this.state.range ?? whole;
    const view: CurveView = { min: shown.min, max: shown.max, pixels: this.chart.chartArea?.width || this.chart.width || 600 };
    const datasets: ChartDataset<'line', XY[]>[] = [];
    this.referenceNote = '';
    if (current) {
      const u = current.units;
      if (reference) {
        const tf = timeFactor(reference.units.time, u.time);
        const cf = reference.units.concentration === u.concentration ? 1 : concentrationFactor(reference.units.concentration, u.concentration);
        if (tf === null || cf === null) {
          this.referenceNote = `The reference is in ${reference.units.time} and ${reference.units.concentration}, which cannot be put on this plot's axes.`;
        } else {
          for (const id of selected) {
            const s = reference.compartments[id];
            if (!s || !s.concentration) continue;
            const colour = colourOf(current, id);
            datasets.push({
              label: `${id} — reference`,
              data: curvePoints(reference.times, s.concentration, log, view, tf, cf),
              borderColor: withAlpha(colour, 0.75),
              backgroundColor: withAlpha(colour, 0.75),
              borderDash: [6, 4],
              borderWidth: 1.6,
              order: 2,
            });
          }
        }
      }
      // The steady state is the regimen continued, which the simulated course may be far from:
      // its own cycle (computed from the periodic state) is drawn over the last interval.
      const profile = current.metrics.steadyState?.profile;
      if (profile && this.state.steadyFrom !== null) {
        const from = this.state.steadyFrom;
        const times = profile.times.map((t) => t + from);
        for (const id of selected) {
          const p = profile.compartments.find((c) => c.compartment === id);
          if (!p) continue;
          const colour = colourOf(current, id);
          datasets.push({
            label: `${id} — steady-state cycle (the regimen continued)`,
            data: curvePoints(times, p.concentration, log, view),
            borderColor: colour,
            backgroundColor: colour,
            borderDash: [3, 3],
            borderWidth: 2,
            order: 0,
          });
        }
      }
      for (const id of selected) {
        const s = current.compartments[id];
        if (!s || !s.concentration) continue;
        const colour = colourOf(current, id);
        datasets.push({
          label: s.label && s.label !== id ? `${id} (${s.label})` : id,
          data: curvePoints(current.times, s.concentration, log, view),
          borderColor: colour,
          backgroundColor: colour,
          order: 1,
        });
      }
      // Measured levels over the curves (observations-overlay.ts).
      datasets.push(...(observationDatasets(current, selected, (id) => colourOf(current, id), log) as unknown as ChartDataset<'line', XY[]>[]));
    }
    const chart = this.chart;
    chart.data.datasets = datasets;
    const empty = chart.canvas.parentElement?.querySelector<HTMLElement>('.plot-empty');
    if (empty) empty.hidden = current !== null;
    const legend = chart.options.plugins?.legend;
    if (legend) legend.display = datasets.length > 1;
    const opts = chart.options;
    const x = opts.scales?.x;
    const y = opts.scales?.y;
    if (x && y && !current) {
      x.min = 0;
      x.max = 1;
      y.min = 0;
      y.max = 1;
      y.suggestedMax = undefined;
      x.title = { display: false, text: '' };
      y.title = { display: false, text: '' };
    }
    if (x && y && current) {
      const times = current.times;
      const span = { min: times[0] ?? 0, max: times[times.length - 1] ?? 1 };
      const range = this.state.range ?? span;
      x.min = range.min;
      x.max = range.max;
      x.title = { display: true, text: `time (${current.units.time})` };
      const [lo, dataHi] = this.visibleRange(datasets, range.min, range.max);
      // Show the upper edge of a target window when it is near the curves.
      const edges = this.bands().map((b) => b.upper ?? b.lower ?? 0);
      const hi = Math.max(dataHi, ...edges.filter((e) => e <= 1.6 * dataHi));
      y.type = log ? 'logarithmic' : 'linear';
      y.title = { display: true, text: `concentration (${current.units.concentration})${log ? ', log scale' : ''}` };
      if (log) {
        // The report's rule: whole decades from the lowest value after the first rise (the
        // zero before the first dose and the climb from it do not count) to the peak, at most
        // four, labelled 0.1, 1, 10 with unlabelled 2…9 between.
        const axis = logAxis(Number.isFinite(lo) && lo > 0 ? lo : hi / 1e4, hi > 0 ? hi : 1, 4);
        this.logScale = logTicks(axis);
        y.min = axis.min;
        y.max = axis.max;
        y.suggestedMax = undefined;
      } else {
        // chart.js fits y to the points inside the x range; this only widens it to the window edge.
        this.logScale = null;
        y.max = undefined;
        y.suggestedMax = hi > 0 ? hi * 1.02 : undefined;
        y.min = 0;
      }
    }
    this.configureYTicks();
    chart.update('none');
  }

  /** Decade ticks with the report's labels on a log axis; chart.js's own on a linear one. */
  private configureYTicks(): void {
    const y = this.chart.options.scales?.y;
    if (!y) return;
    const logScale = this.logScale;
    if (logScale) {
      y.afterBuildTicks = (scale) => {
        scale.ticks = logScale.ticks.filter((t) => t.value >= (scale.min as number) * (1 - 1e-9) && t.value <= (scale.max as number) * (1 + 1e-9)).map((t) => ({ ...t }));
      };
      y.ticks = { ...y.ticks, autoSkip: false, callback: (value) => logScale.labels.get(Number(value)) ?? '' };
      y.grid = { ...y.grid, color: (ctx) => (ctx.tick?.major ? 'rgba(0, 0, 0, 0.16)' : 'rgba(0, 0, 0, 0.06)') };
    } else {
      y.afterBuildTicks = undefined;
      y.ticks = { ...y.ticks, autoSkip: true, callback: undefined };
      y.grid = { ...y.grid, color: undefined };
    }
  }

  /**
   * Largest value of the drawn curves within [min, max], and the smallest positive one once
   * each curve has risen to a tenth of its peak there (the log axis's low end, as in the report).
   */
  private visibleRange(datasets: ChartDataset<'line', XY[]>[], min: number, max: number): [number, number] {
    let lo = Infinity;
    let hi = 0;
    for (const d of datasets) {
      const inside = d.data.filter((p) => p.x >= min && p.x <= max);
      const ys = inside.map((p) => p.y);
      const peak = ys.reduce((a, b) => Math.max(a, b), 0);
      hi = Math.max(hi, peak);
      // Measured levels widen the axis to show them, but do not set the log axis's low end.
      if (!isObservationDataset(d)) lo = Math.min(lo, lowAfterRise(ys, peak));
    }
    return [lo, hi];
  }

  private bands(): Band[] {
    const { current, selected } = this.state;
    if (!current) return [];
    const out: Band[] = [];
    const unit = current.units.concentration;
    selected.forEach((id) => {
      const figures = current.metrics.compartments[id];
      if (!figures) return;
      for (const w of figures.overall.windows) {
        const k = out.length % bandFills.length;
        const edges = w.above !== null && w.below !== null ? `${fmt(w.above)}–${fmt(w.below)}` : w.above !== null ? `above ${fmt(w.above)}` : `below ${fmt(w.below)}`;
        out.push({ lower: w.above, upper: w.below, fill: bandFills[k], edge: bandEdges[k], text: `${id} window ${edges} ${unit}` });
      }
    });
    return out;
  }

  private doseTimes(): number[] {
    const current = this.state.current;
    if (!current) return [];
    return current.events.filter((e) => e.kind === 'bolus' || e.kind === 'infusion-start').map((e) => e.time);
  }
}
