/**
 * The result as users receive it: plain JSON (arrays, compartments keyed by id) and CSV.
 * Typed arrays become plain arrays only here, at the boundary.
 */
import type { CompartmentFigures } from '../figures/exposure.ts';
import type { Diagnostics, SimulationEvent, SimulationResult, ResultUnits } from '../simulate.ts';
import type { SteadyStateFigures } from '../figures/steady-state.ts';
import { isoDateTime } from '../levels/clock.ts';

export interface CompartmentSeriesJson {
  label: string;
  volume: number | null;
  amount: number[];
  concentration: number[] | null;
}

export interface SimulationResultJson {
  title: string;
  subject: SimulationResult['subject'];
  units: ResultUnits;
  times: number[];
  compartments: Record<string, CompartmentSeriesJson>;
  events: SimulationEvent[];
  metrics: {
    compartments: Record<string, Omit<CompartmentFigures, 'compartment'>>;
    steadyState: SteadyStateFigures | null;
  };
  diagnostics: Diagnostics;
  /** Present when the scenario writes date-times (older results have no such field). */
  clock?: SimulationResult['clock'];
  /** Present when the scenario has measured levels. */
  observations?: SimulationResult['observations'];
}

export function resultToJson(result: SimulationResult): SimulationResultJson {
  const compartments: Record<string, CompartmentSeriesJson> = {};
  for (const s of result.compartments) {
    compartments[s.id] = {
      label: s.label,
      volume: s.volume,
      amount: Array.from(s.amount),
      concentration: s.concentration ? Array.from(s.concentration) : null,
    };
  }
  const figures: SimulationResultJson['metrics']['compartments'] = {};
  for (const { compartment, ...rest } of result.metrics.compartments) figures[compartment] = rest;
  return {
    title: result.title,
    subject: result.subject,
    units: result.units,
    times: Array.from(result.times),
    compartments,
    events: result.events,
    metrics: { compartments: figures, steadyState: result.metrics.steadyState },
    diagnostics: result.diagnostics,
    ...(result.clock ? { clock: result.clock } : {}),
    ...(result.observations.length > 0 ? { observations: result.observations } : {}),
  };
}

/** JSON text; non-finite numbers (an undefined residual, say) become null, as JSON requires. */
export function resultToJsonText(result: SimulationResult, indent = 0): string {
  return JSON.stringify(resultToJson(result), null, indent || undefined);
}

function csvField(text: string): string {
  return /[",\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** The ISO 8601 date-time (with its offset) of elapsed time `t` in the result's time unit, by the clock's own rule. */
export function clockTimeIso(t: number, clock: NonNullable<SimulationResult['clock']>): string {
  return isoDateTime(clock.originMs + t * clock.hoursPerTimeUnit * 3_600_000, clock.zoneMinutes);
}

/**
 * One row per reported time: time, its clock time when the scenario has a clock (ISO 8601
 * with the offset, e.g. 2026-03-04T09:00+01:00), then amount and concentration of each compartment.
 */
export function resultToCsv(result: SimulationResult): string {
  const u = result.units;
  const clock = result.clock;
  const header = [`time (${u.time})`];
  if (clock) header.push('clock time');
  for (const s of result.compartments) {
    header.push(`${s.id} amount (${u.amount})`);
    if (s.concentration) header.push(`${s.id} concentration (${u.concentration})`);
  }
  const lines = [header.map(csvField).join(',')];
  const row: string[] = [];
  for (let r = 0; r < result.times.length; r++) {
    row.length = 0;
    row.push(String(result.times[r]));
    if (clock) row.push(clockTimeIso(result.times[r], clock));
    for (const s of result.compartments) {
      row.push(String(s.amount[r]));
      if (s.concentration) row.push(String(s.concentration[r]));
    }
    lines.push(row.join(','));
  }
  return lines.join('\n') + '\n';
}
