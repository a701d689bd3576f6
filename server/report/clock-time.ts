/**
 * Clock times beside elapsed times in the report's tables, when the scenario has a clock
 * (clock.origin, or doses given at date-times). The rule itself — origin, zone, wall-clock
 * arithmetic — is models/levels/clock.ts's (clockLabel); this only converts the scenario's
 * time unit to hours and lays the two side by side, so every table writes them alike:
 * "2026-03-04 08:00 (+01:00)".
 */
import type { Model } from '../../models/building/model.ts';
import { clockLabel } from '../../models/levels/clock.ts';
import { unitsPerHour } from '../../models/scenario/instants.ts';
import { fmt } from './format.ts';

type Clocked = Pick<Model, 'clock' | 'units'>;

/** The clock time of elapsed time `t` (in the scenario's time unit), or null when the scenario has no clock. */
export function clockTimeAt(t: number, model: Clocked): string | null {
  return model.clock && Number.isFinite(t) ? clockLabel(t / unitsPerHour(model.units), model.clock) : null;
}

/** A table cell: the elapsed time (as `shown`, by default the number alone), with its clock time on the line below when there is a clock. */
export function timeAndClock(t: number, model: Clocked, shown = fmt(t)): string {
  const clock = clockTimeAt(t, model);
  return clock ? `${shown}\n${clock}` : shown;
}
