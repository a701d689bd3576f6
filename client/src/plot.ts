/**
 * The concentration plot: chart.js line chart (parsing off, min–max decimation for long
 * series), linear or logarithmic y, target windows shaded, dose times marked, the kept
 * reference drawn dashed underneath the current run.
 */
import {
  Chart,
  Decimation,
  Legend,
  LinearScale,
  LineController,
  LineElement,
  LogarithmicScale,
  PointElement,
  Tooltip,
  type ChartDataset,
  type ChartOptions,
} from 'chart.js';
import type { SimulationResultJson } from '../../models/result-format.ts';
import { fmt } from '../../models/summary-text.ts';
import { concentrationFactor, timeFactor } from './quantity.ts';
import { doseMarksPlugin, windowBandPlugin, type Band } from './plot-plugins.ts';

/** A data point as chart.js takes it with parsing off. */
export interface XY {
  x: number;
  y: number;
}

Chart.register(LineController, LineElement, PointElement, LinearScale, LogarithmicScale, Tooltip, Legend, Decimation);

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

function points(times: number[], values: (number | null)[], log: boolean, tf = 1, cf = 1): XY[] {
  const out: XY[] = [];
  for (let i = 0; i < times.length; i++) {
    const y = values[i];
    if (y === null || !Number.isFinite(y)) continue;
    if (log && !(y > 0)) continue;
    out.push({ x: times[i] * tf, y: y * cf });
  }
  return out;
}

export class PlotView {
  readonly chart: Chart<'line', XY[]>;
  private state: PlotState = { current: null, reference: null, selected: [], log: false, range: null };
  /** Set when the reference was in other units that could not be converted. */
  referenceNote = '';

  constructor(canvas: HTMLCanvasElement) {
    const options: ChartOptions<'line'> = {
      parsing: false,
      animation: false,
      responsive: true,
      maintainAspectRatio: false,
      interaction: { mode: 'nearest', axis: 'x', intersect: false },
      elements: { point: { radius: 0, hitRadius: 4, hoverRadius: 4 }, line: { borderWidth: 2, tension: 0 } },
      scales: {
        x: { type: 'linear', title: { display: true, text: 'time' }, ticks: { maxTicksLimit: 12 } },
        y: { type: 'linear', title: { display: true, text: 'concentration' }, beginAtZero: true },
      },
      plugins: {
        decimation: { enabled: true, algorithm: 'min-max' },
        legend: { position: 'bottom', labels: { boxWidth: 24, boxHeight: 2, usePointStyle: false } },
        tooltip: {
          callbacks: {
            title: (items) => {
              const u = this.state.current?.units;
              return items.length ? `t = ${fmt(items[0].parsed.x)} ${u?.time ?? ''}` : '';
            },
            label: (item) => {
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

  update(next: Partial<PlotState>): void {
    this.state = { ...this.state, ...next };
    const { current, reference, selected, log } = this.state;
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
              data: points(reference.times, s.concentration, log, tf, cf),
              borderColor: withAlpha(colour, 0.75),
              backgroundColor: withAlpha(colour, 0.75),
              borderDash: [6, 4],
              borderWidth: 1.6,
              order: 2,
            });
          }
        }
      }
      for (const id of selected) {
        const s = current.compartments[id];
        if (!s || !s.concentration) continue;
        const colour = colourOf(current, id);
        datasets.push({
          label: s.label && s.label !== id ? `${id} (${s.label})` : id,
          data: points(current.times, s.concentration, log),
          borderColor: colour,
          backgroundColor: colour,
          order: 1,
        });
      }
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
      // chart.js fits y to the points inside the x range; these only widen it to the window edge
      // and keep a log axis to five decades below the peak.
      y.max = undefined;
      y.suggestedMax = hi > 0 ? hi * (log ? 1.2 : 1.02) : undefined;
      y.min = log ? (hi > 0 ? Math.max(lo, hi * 1e-5) : undefined) : 0;
    }
    chart.update('none');
  }

  /** Smallest positive and largest value of the drawn curves within [min, max]. */
  private visibleRange(datasets: ChartDataset<'line', XY[]>[], min: number, max: number): [number, number] {
    let lo = Infinity;
    let hi = 0;
    for (const d of datasets) {
      for (const p of d.data) {
        if (p.x < min || p.x > max) continue;
        if (p.y > hi) hi = p.y;
        if (p.y > 0 && p.y < lo) lo = p.y;
      }
    }
    return [Number.isFinite(lo) ? lo : 0, hi];
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
