/**
 * A fit to the measured levels on the page: the caution first, convergence and identifiability
 * in words, the estimates (value, standard error, RSE, typical), their correlations, the levels
 * observed against predicted, and three chart.js plots — the individual's predicted curve with
 * its 90% band from the estimates' uncertainty, observed against predicted with the identity
 * line, and residuals against time. The estimates are model outputs, not dosing advice.
 */
import { Chart, Filler, Legend, LinearScale, LineController, LineElement, PointElement, Tooltip, type ChartConfiguration, type ChartDataset, type TooltipItem } from 'chart.js';
import { clockLabel, clockOf } from '../../models/levels/clock.ts';
import { STRONG_CORRELATION } from '../../models/fitting/result.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { h } from './dom.ts';
import type { FitAnswer } from './levels-api.ts';
import { timeFactor } from './quantity.ts';
import { cautionNote, figureTable, present } from './levels-tables.ts';

Chart.register(LineController, LineElement, PointElement, LinearScale, Filler, Tooltip, Legend);

type XY = { x: number; y: number };

/** The clock time of an elapsed time in the fit's time unit, or null without a clock (fitClockAt). */
export type ClockAt = (t: number) => string | null;

const isObject = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);

/**
 * Clock times for the fit's plots, read from the scenario the fit was computed on (the origin
 * rule clockOf, as the server reads it) and the fit's own time unit: the last simulation run may
 * be older than the fit, with another first dose, zone or time unit, and would lend its tooltips
 * a wrong clock time. Null without a clock, or for a time unit the page cannot convert.
 */
export function fitClockAt(scenario: unknown, timeUnit: string): ClockAt {
  const s = isObject(scenario) ? scenario : {};
  const settings = isObject(s.clock) ? (s.clock as { origin?: string; zone?: string }) : undefined;
  const doseTimes = Array.isArray(s.doses) ? s.doses.map((d) => (isObject(d) ? d.at : undefined)) : [];
  const clock = clockOf(settings, doseTimes).clock;
  const hours = timeFactor(timeUnit, 'h');
  return (t) => (clock !== null && hours !== null && Number.isFinite(t) ? clockLabel(t * hours, clock) : null);
}

/** "t = 12 h", with the clock time beside it when there is one: the tooltip title of the plots against time. */
export function fitTimeTitle(t: number, unit: string, clockAt: ClockAt): string {
  const clock = clockAt(t);
  return `t = ${fmt(t)} ${unit}${clock ? ` · ${clock}` : ''}`;
}

const objectiveWords = { wls: 'weighted least squares', map: 'maximum a posteriori (the population as the prior)' } as const;
const weightingWords = { none: 'equal weights', '1/y': 'weights 1/y', '1/y2': 'weights 1/y²', residual: 'weights from the residual error model' } as const;

/** Percent with 3 significant figures, or a dash. */
const percent = (v: number | null): string => (v === null ? '—' : `${fmt(v * 100, 3)}%`);

export class FitView {
  charts: Chart<'line', XY[]>[] = [];

  clear(): void {
    for (const c of this.charts) c.destroy();
    this.charts = [];
  }

  /** Fills `host` with the fit; `openFitted` loads the fitted scenario into the form; `clockAt` gives clock times for the tooltips. */
  render(host: HTMLElement, fit: FitAnswer, openFitted: () => void, clockAt: ClockAt = () => null): void {
    this.clear();
    const u = fit.units;
    const canvases = { curve: canvas('levels-fit-curve', `Predicted ${u.concentration} against time with the 90% band and the measured levels`), observed: canvas('levels-fit-observed', 'Observed against predicted levels with the identity line'), residuals: canvas('levels-fit-residuals', 'Residuals against time') };
    const openButton = h('button', { type: 'button', class: 'primary', 'data-testid': 'levels-open-fitted' }, 'Open the fitted scenario');
    openButton.addEventListener('click', openFitted);
    host.replaceChildren(
      ...present(
      cautionNote('levels-fit-caution', fit.caution),
      h('p', { class: fit.converged ? 'levels-verdict' : 'levels-verdict levels-warning', 'data-testid': 'levels-fit-message' }, fit.converged ? '' : 'Did not converge. ', fit.message),
      h(
        'p',
        { class: 'note' },
        `Objective: ${objectiveWords[fit.settings.objective]}${fit.settings.objective === 'wls' ? `, ${weightingWords[fit.settings.weighting]}` : ''}; its value at the optimum ${fmt(fit.objective)} (a sum of squares); ${fit.iterations} iterations, ${fit.evaluations} model evaluations; condition number of the curvature ${fmt(fit.conditionNumber, 3)}.`,
      ),
      fit.identifiability.length ? h('ul', { class: 'warnings', 'data-testid': 'levels-fit-identifiability' }, ...fit.identifiability.map((w) => h('li', {}, w))) : null,
      this.estimates(fit),
      this.correlation(fit),
      h('div', { class: 'levels-charts' }, box(canvases.curve, 'Predicted curve, 90% band'), box(canvases.observed, 'Observed against predicted'), box(canvases.residuals, 'Residuals against time')),
      this.levels(fit, clockAt),
      fit.notes.length ? h('ul', { class: 'note levels-notes' }, ...fit.notes.map((n) => h('li', {}, n))) : null,
      h('div', { class: 'run-row' }, openButton, h('p', { class: 'note' }, 'The fitted scenario has the estimates written in as the typical values, to simulate further or save as a new scenario.')),
      ),
    );
    this.charts = [this.curveChart(canvases.curve, fit, clockAt), this.observedChart(canvases.observed, fit, clockAt), this.residualChart(canvases.residuals, fit, clockAt)];
  }

  private estimates(fit: FitAnswer): HTMLElement {
    const rows = Object.entries(fit.estimates).map(([name, e]) => [
      h('th', { scope: 'row' }, name, h('span', { class: 'unit' }, ` ${e.path}`)),
      num(e.value, `levels-value-${name}`),
      h('td', { class: 'unit' }, e.unit),
      num(e.standardError, `levels-se-${name}`),
      h('td', {}, percent(e.relativeStandardError)),
      num(e.typical, null),
    ]);
    return figureTable('Estimates (standard errors from the curvature at the optimum)', ['Quantity', 'Value', 'Unit', 'SE', 'RSE', 'Typical'], rows, 'levels-estimates');
  }

  private correlation(fit: FitAnswer): HTMLElement {
    const c = fit.correlation;
    if (!c) return h('p', { class: 'note levels-warning' }, 'No correlations: the curvature at the optimum is singular.');
    const rows = c.names.map((name, i) => [h('th', { scope: 'row' }, name), ...c.matrix[i].map((v, j) => h('td', { class: j !== i && Math.abs(v) > STRONG_CORRELATION ? 'levels-strong' : '' }, j > i ? '' : fmt(v, 3)))]);
    return figureTable(`Correlations of the estimates (beyond ±${STRONG_CORRELATION} marked)`, ['', ...c.names], rows, 'levels-correlation');
  }

  /** The levels observed and predicted; with a clock, each level's clock time beside its elapsed time. */
  private levels(fit: FitAnswer, clockAt: ClockAt): HTMLElement {
    const clocked = fit.predictions.some((p) => clockAt(p.time) !== null);
    const rows = fit.predictions.map((p) => [
      h('th', { scope: 'row' }, p.label ?? p.path),
      h('td', {}, fmt(p.time)),
      ...(clocked ? [h('td', {}, clockAt(p.time) ?? '—')] : []),
      h('td', {}, p.observed === null ? (p.limit !== null ? `< ${fmt(p.limit)}` : '—') : fmt(p.observed)),
      h('td', {}, fmt(p.predicted)),
      h('td', {}, fmt(p.residual)),
      h('td', {}, p.used ? (p.censored ? 'censored' : 'yes') : 'left out'),
    ]);
    const head = ['Level', `Time (${fit.units.time})`, ...(clocked ? ['Clock time'] : []), 'Observed', 'Predicted', 'Residual', 'In the fit'];
    return figureTable(`Levels (${fit.units.concentration})`, head, rows, 'levels-fit-levels');
  }

  private curveChart(el: HTMLCanvasElement, fit: FitAnswer, clockAt: ClockAt): Chart<'line', XY[]> {
    const u = fit.units;
    const datasets: ChartDataset<'line', XY[]>[] = [];
    for (const c of fit.curves) {
      const pts = (ys: number[]) => c.times.map((x, i) => ({ x, y: ys[i] }));
      if (c.lower && c.upper) {
        datasets.push({ label: `${c.compartment}: 5th percentile`, data: pts(c.lower), borderColor: 'rgba(31,111,139,0.35)', borderWidth: 1, pointRadius: 0, fill: false });
        datasets.push({ label: `${c.compartment}: 90% band`, data: pts(c.upper), borderColor: 'rgba(31,111,139,0.35)', backgroundColor: 'rgba(31,111,139,0.15)', borderWidth: 1, pointRadius: 0, fill: '-1' });
      }
      datasets.push({ label: `${c.compartment}: predicted`, data: pts(c.predicted), borderColor: '#1f6f8b', borderWidth: 2, pointRadius: 0, fill: false });
    }
    datasets.push(observedPoints(fit));
    return lineChart(el, datasets, `Time (${u.time})`, `Concentration (${u.concentration})`, u.concentration, undefined, (items) => fitTimeTitle(items[0].parsed.x ?? NaN, u.time, clockAt));
  }

  private observedChart(el: HTMLCanvasElement, fit: FitAnswer, clockAt: ClockAt): Chart<'line', XY[]> {
    const used = fit.predictions.filter((p) => p.used && p.observed !== null);
    const pts = used.map((p) => ({ x: p.predicted, y: p.observed as number }));
    const hi = Math.max(0, ...pts.flatMap((p) => [p.x, p.y])) * 1.05 || 1;
    return lineChart(
      el,
      [
        { label: 'identity (observed = predicted)', data: [{ x: 0, y: 0 }, { x: hi, y: hi }], borderColor: '#8a8f98', borderDash: [5, 4], borderWidth: 1, pointRadius: 0 },
        { label: 'levels', data: pts, showLine: false, pointRadius: 4, borderColor: '#b4442e', backgroundColor: '#b4442e' },
      ],
      `Predicted (${fit.units.concentration})`,
      `Observed (${fit.units.concentration})`,
      fit.units.concentration,
      { min: 0, max: hi },
      // x is the prediction here: a level's title is its time (the identity line has none).
      (items) => {
        const level = items.find((i) => i.datasetIndex === 1);
        return level ? fitTimeTitle(used[level.dataIndex].time, fit.units.time, clockAt) : '';
      },
    );
  }

  private residualChart(el: HTMLCanvasElement, fit: FitAnswer, clockAt: ClockAt): Chart<'line', XY[]> {
    const used = fit.predictions.filter((p) => p.weightedResidual !== null);
    const pts = used.map((p) => ({ x: p.time, y: p.weightedResidual as number }));
    const xs = fit.predictions.map((p) => p.time);
    const lo = Math.min(0, ...xs);
    const hi = Math.max(1, ...xs);
    const what = fit.settings.objective === 'map' ? 'residual / SD' : 'weighted residual';
    return lineChart(
      el,
      [
        { label: 'zero', data: [{ x: lo, y: 0 }, { x: hi, y: 0 }], borderColor: '#8a8f98', borderDash: [5, 4], borderWidth: 1, pointRadius: 0 },
        { label: what, data: pts, showLine: false, pointRadius: 4, borderColor: '#b4442e', backgroundColor: '#b4442e' },
      ],
      `Time (${fit.units.time})`,
      what,
      '',
      undefined,
      (items) => fitTimeTitle(items[0].parsed.x ?? NaN, fit.units.time, clockAt),
    );
  }
}

function observedPoints(fit: FitAnswer): ChartDataset<'line', XY[]> {
  const pts = fit.predictions.filter((p) => p.observed !== null).map((p) => ({ x: p.time, y: p.observed as number }));
  return { label: 'measured', data: pts, showLine: false, pointRadius: 4, borderColor: '#b4442e', backgroundColor: '#b4442e' };
}

function lineChart(el: HTMLCanvasElement, datasets: ChartDataset<'line', XY[]>[], xTitle: string, yTitle: string, unit: string, square?: { min: number; max: number }, title?: (items: TooltipItem<'line'>[]) => string): Chart<'line', XY[]> {
  const config: ChartConfiguration<'line', XY[]> = {
    type: 'line',
    data: { datasets },
    options: {
      parsing: false,
      animation: false,
      responsive: true,
      maintainAspectRatio: false,
      interaction: { mode: 'nearest', intersect: false },
      scales: {
        x: { type: 'linear', title: { display: true, text: xTitle }, ...(square ?? {}) },
        y: { type: 'linear', title: { display: true, text: yTitle }, ...(square ?? {}) },
      },
      plugins: {
        legend: { position: 'bottom', labels: { boxWidth: 14, filter: (item) => !/5th percentile/.test(item.text) } },
        tooltip: { callbacks: { ...(title ? { title: (items: TooltipItem<'line'>[]) => (items.length ? title(items) : '') } : {}), label: (c) => `${c.dataset.label ?? ''}: ${fmt(c.parsed.y)}${unit ? ` ${unit}` : ''}` } },
      },
    },
  };
  return new Chart<'line', XY[]>(el, config);
}

function canvas(testId: string, label: string): HTMLCanvasElement {
  return h('canvas', { 'data-testid': testId, role: 'img', 'aria-label': label }, label);
}

function box(c: HTMLCanvasElement, title: string): HTMLElement {
  return h('figure', { class: 'levels-chart' }, h('figcaption', {}, title), h('div', { class: 'levels-chart-box' }, c));
}

/** A number cell; `data-value` holds the full number for whoever reads the page by script. */
function num(v: number | null, testId: string | null): HTMLElement {
  return h('td', { ...(testId ? { 'data-testid': testId } : {}), 'data-value': v === null ? '' : String(v) }, fmt(v));
}
