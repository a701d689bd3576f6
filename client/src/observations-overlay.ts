/**
 * Measured levels on the page: points over the curves (one set per compartment shown, in its
 * colour; a level below the limit drawn hollow at its limit), their tooltip lines (time and
 * clock time, observed, predicted, residual), clock times beside elapsed time, and a short
 * table under the figures. The predictions are the model's, for review, not dosing advice.
 */
import type { ChartDataset, TooltipItem } from 'chart.js';
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import type { ObservationFit } from '../../models/levels/observation.ts';
import { clockLabel } from '../../models/levels/clock.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { h } from './dom.ts';

type Result = SimulationResultJson;

/** A point of the overlay: chart.js's x/y, and the observation it stands for. */
export interface ObservationPoint {
  x: number;
  y: number;
  observation: ObservationFit;
}

/** An overlay dataset is told apart from the curves by this mark. */
const overlayMark = 'tmObservations';

export function isObservationDataset(d: object): boolean {
  return (d as Record<string, unknown>)[overlayMark] === true;
}

/** The clock time of an elapsed time in the result's unit, or null without a clock. */
export function clockTimeOf(result: Result, t: number): string | null {
  const c = result.clock;
  return c ? clockLabel(t * c.hoursPerTimeUnit, c) : null;
}

/** The tooltip title: elapsed time, and the clock time beside it when the result has a clock. */
export function timeTitle(result: Result | null, t: number): string {
  if (!result) return '';
  const clock = clockTimeOf(result, t);
  return `t = ${fmt(t)} ${result.units.time}${clock ? ` · ${clock}` : ''}`;
}

/**
 * One scatter dataset per compartment shown that has observations. On a logarithmic axis a level
 * of 0 cannot be drawn and is left out of the picture (it stays in the table).
 */
export function observationDatasets(result: Result, selected: string[], colourOf: (id: string) => string, log: boolean): ChartDataset<'line', ObservationPoint[]>[] {
  const all = result.observations ?? [];
  const out: ChartDataset<'line', ObservationPoint[]>[] = [];
  for (const id of selected) {
    const mine = all.filter((o) => o.compartment === id);
    if (mine.length === 0) continue;
    const points = mine
      .map((o) => ({ x: o.time, y: (o.belowLimit ? o.limit : o.concentration) ?? NaN, observation: o }))
      .filter((p) => Number.isFinite(p.y) && (!log || p.y > 0));
    const colour = colourOf(id);
    const dataset: ChartDataset<'line', ObservationPoint[]> = {
      label: `${id} — measured`,
      data: points,
      showLine: false,
      borderColor: colour,
      // Hollow (white inside) for a level below the limit, filled for a measured value.
      backgroundColor: points.map((p) => (p.observation.belowLimit ? '#ffffff' : colour)),
      pointBackgroundColor: points.map((p) => (p.observation.belowLimit ? '#ffffff' : colour)),
      pointBorderColor: colour,
      pointBorderWidth: 2,
      pointRadius: 4.5,
      pointHoverRadius: 6,
      pointStyle: 'circle',
      order: -1,
    };
    (dataset as unknown as Record<string, unknown>)[overlayMark] = true;
    out.push(dataset);
  }
  return out;
}

/** The tooltip lines of an observation: observed (or below the limit), predicted, residual, label. */
export function observationLines(result: Result, o: ObservationFit): string[] {
  const u = result.units.concentration;
  const lines = [
    o.belowLimit ? `measured: below the limit ${fmt(o.limit ?? NaN)} ${u}` : `measured: ${fmt(o.concentration ?? NaN)} ${u}`,
    `model: ${fmt(o.predicted)} ${u}`,
  ];
  if (o.residual !== null) lines.push(`residual (measured − model): ${o.residual >= 0 ? '+' : ''}${fmt(o.residual)} ${u}`);
  if (o.subject !== null || o.label !== null) lines.push([o.subject, o.label].filter((x) => x !== null).join(' — '));
  const clock = clockTimeOf(result, o.time);
  // The hovered curve's time may differ from the sample's: the sample's own is given.
  lines.unshift(`${o.compartment} measured at t = ${fmt(o.time)} ${result.units.time}${clock ? ` (${clock})` : ''}`);
  return lines;
}

/** The tooltip label of an item: observation lines for an overlay point, else null (the curve's own label). */
export function overlayLabel(result: Result | null, item: TooltipItem<'line'>): string[] | null {
  if (!result || !isObservationDataset(item.dataset)) return null;
  const point = item.raw as ObservationPoint;
  return observationLines(result, point.observation);
}

/** The clock origin in words, for the figures. */
export function clockNote(result: Result): HTMLElement | null {
  const c = result.clock;
  if (!c) return null;
  const from = c.originFrom === 'first dose' ? 'the first dose given at a date-time' : 'clock.origin';
  const zone = c.zoneGiven ? `times shown at UTC offset ${c.zone === 'Z' ? '+00:00' : c.zone}` : 'times shown in UTC (no clock.zone given)';
  return h('p', { class: 'note', 'data-testid': 'clock-origin' }, `Clock: time 0 is ${clockLabel(0, c)} (from ${from}); ${zone}.`);
}

/** The measured levels beside the model's predictions, with the caution that goes with them. */
export function observationsTable(result: Result, selected: string[]): HTMLElement | null {
  const all = (result.observations ?? []).filter((o) => selected.includes(o.compartment));
  if (all.length === 0) return null;
  const u = result.units;
  // The compartment column only when levels of more than one are shown; the clock time under the elapsed time, to keep the table narrow.
  const several = new Set(all.map((o) => o.compartment)).size > 1;
  const titles = ['Time', ...(several ? ['Compartment'] : []), 'Measured', 'Model', 'Residual'];
  const head = h('tr', {}, ...titles.map((t) => h('th', { scope: 'col' }, t)));
  const body = h('tbody', {});
  for (const o of all) {
    const clock = clockTimeOf(result, o.time);
    body.append(
      h(
        'tr',
        {},
        h('td', {}, `${fmt(o.time)} ${u.time}`, clock ? h('br', {}) : null, clock ? h('small', {}, clock) : null),
        several ? h('td', {}, o.compartment) : null,
        h('td', {}, o.belowLimit ? `< ${fmt(o.limit ?? NaN)}` : fmt(o.concentration ?? NaN)),
        h('td', {}, fmt(o.predicted)),
        h('td', {}, o.residual === null ? '—' : `${o.residual >= 0 ? '+' : ''}${fmt(o.residual)}`),
      ),
    );
    // Whose level and its note on a line of their own, the full width of the table.
    const note = [o.subject, o.label].filter((x) => x !== null).join(' — ');
    if (note) body.append(h('tr', { class: 'level-note' }, h('td', { colspan: String(titles.length) }, h('small', {}, note))));
  }
  return h(
    'section',
    { class: 'cmt-figures', 'aria-labelledby': 'fig-levels', 'data-testid': 'measured-levels' },
    h('h3', { id: 'fig-levels' }, 'Measured levels'),
    h('table', { class: 'fig levels' }, h('caption', {}, `Levels in ${u.concentration}; residual = measured − model`), h('thead', {}, head), body),
    h('p', { class: 'note' }, 'The model values are this simulation\'s predictions at each sample time, for review beside the measurements; they are not dosing advice.'),
  );
}
