/**
 * The report's measured levels: the points drawn over the concentration plots, and the table
 * "Measured levels" (time, clock time, compartment, observed, model, residual, label) with
 * the caution that the model's values are a simulation's, for review.
 */
import { clockLabel } from '../../models/levels/clock.ts';
import type { SimulationResult } from '../../models/simulate.ts';
import { heading, paragraph } from './document.ts';
import { fmt, unitText } from './format.ts';
import type { MeasuredPoint } from './plot.ts';
import { drawTable } from './table.ts';

/** The levels of the compartments drawn, each at its value or, below the limit, hollow at the limit. */
export function measuredPoints(result: SimulationResult, colourOf: (id: string) => string): MeasuredPoint[] {
  return result.observations
    .map((o) => ({ time: o.time, value: (o.belowLimit ? o.limit : o.concentration) ?? NaN, hollow: o.belowLimit, color: colourOf(o.compartment) }))
    .filter((p) => Number.isFinite(p.value));
}

function clockTime(result: SimulationResult, t: number): string {
  const c = result.clock;
  return c ? clockLabel(t * c.hoursPerTimeUnit, c) : '—';
}

/** The clock origin in a sentence, or null without a clock. */
export function clockSentence(result: SimulationResult): string | null {
  const c = result.clock;
  if (!c) return null;
  const from = c.originFrom === 'first dose' ? 'the earliest dose given at a date-time' : 'clock.origin';
  return `Time 0 is ${clockLabel(0, c)} (from ${from}); clock times are shown at ${c.zoneGiven ? `UTC offset ${c.zone === 'Z' ? '+00:00' : c.zone}` : 'UTC, as no clock.zone is given'}.`;
}

export function drawMeasuredLevels(doc: PDFKit.PDFDocument, result: SimulationResult): void {
  if (result.observations.length === 0) return;
  const u = result.units;
  const c = unitText(u.concentration);
  heading(doc, 'Measured levels', 2, 90);
  const sentence = clockSentence(result);
  if (sentence) paragraph(doc, sentence);
  drawTable(doc, {
    caption: `Measured levels beside the model (${c}); residual = measured − model`,
    columns: [
      { header: `Time (${u.time})`, width: 0.8, align: 'right' },
      { header: 'Clock time', width: 2.05 },
      { header: 'Compartment', width: 1.2 },
      { header: 'Measured', width: 0.9, align: 'right' },
      { header: 'Model', width: 0.8, align: 'right' },
      { header: 'Residual', width: 0.8, align: 'right' },
      { header: 'Label', width: 2.2 },
    ],
    rows: result.observations.map((o) => [
      fmt(o.time),
      clockTime(result, o.time),
      o.compartment,
      o.belowLimit ? `< ${fmt(o.limit)}` : fmt(o.concentration),
      fmt(o.predicted),
      o.residual === null ? '—' : `${o.residual >= 0 ? '+' : ''}${fmt(o.residual)}`,
      [o.subject, o.label].filter((x) => x !== null).join(' — '),
    ]),
    zebra: result.observations.length > 8,
    footnote: 'The model column is this simulation\'s concentration at each sample time (just before a dose given at that time), read off the continuous solution. It is shown for review beside the measurements; it is not a fit to them and not dosing advice. A level below the limit has no residual.',
  });
}
