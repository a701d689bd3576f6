/**
 * The scenario's `observations` → normalised `Observation`s (models/levels/observation.ts), every
 * problem at its path: the compartment exists and has a volume, the level is not negative, a
 * level below the limit names its limit and lies under it, the time lies in the simulated span.
 */
import type { Clock } from '../levels/clock.ts';
import type { Observation } from '../levels/observation.ts';
import type { ModelCompartment } from '../building/model.ts';
import { formatNumber } from '../result/format-number.ts';
import { readInstant, type InstantReader } from './instants.ts';
import type { Quantity, Scenario } from './schema.ts';
import type { Dimension } from './units.ts';

interface ObservationReader extends InstantReader {
  readonly problems: { path: string; message: string }[];
  read(q: Quantity | undefined, dimension: Dimension, path: string, range?: 'positive' | 'non-negative' | 'any'): number | null;
}

export function readObservations(
  s: Scenario,
  r: ObservationReader,
  compartments: ModelCompartment[],
  span: { start: number; end: number },
  clock: Clock | null,
): Observation[] {
  const given = s.observations;
  if (given === undefined) return [];
  if (!Array.isArray(given)) {
    r.fail('observations.file', 'the observations file is read by the command line (relative to the scenario file); over the API give the observations themselves as a list');
    return [];
  }
  const out: Observation[] = [];
  given.forEach((o, i) => {
    const path = `observations[${i}]`;
    // A row read from a file is named by its line too, so the user finds it in the file.
    const where = (field: string) => `${path}.${field}`;
    const tell = (at: string, message: string) => r.fail(at, o.source ? `${message} (${o.source})` : message);
    const fail = (field: string, message: string) => tell(where(field), message);
    // Problems found while reading a value are told with the source too.
    const read: ObservationReader = {
      units: r.units,
      fail: tell,
      read: (q, dimension, at, range) => {
        const before = r.problems.length;
        const value = r.read(q, dimension, at, range);
        for (let k = before; k < r.problems.length; k++) if (o.source) r.problems[k] = { ...r.problems[k], message: `${r.problems[k].message} (${o.source})` };
        return value;
      },
      problems: r.problems,
    };
    // Without a compartment: the first with a volume, as for targets.
    const c = o.compartment === undefined ? s.compartments.findIndex((x) => x.volume !== undefined) : compartments.findIndex((x) => x.id === o.compartment);
    let ok = true;
    if (c < 0) {
      fail('compartment', o.compartment === undefined ? 'is required: no compartment has a volume' : `no compartment named '${o.compartment}' (compartments are ${compartments.map((x) => `'${x.id}'`).join(', ')})`);
      ok = false;
    } else if (compartments[c].volume === null && s.compartments[c].volume === undefined) {
      fail('compartment', `'${o.compartment}' has no volume, so it has no concentration to compare a measured level with`);
      ok = false;
    }
    const time = readInstant(o.time, where('time'), clock, read);
    if (time !== null && (time < span.start || time > span.end)) {
      fail('time', `is at ${formatNumber(time)} ${r.units.time}, outside the simulated span ${formatNumber(span.start)} to ${formatNumber(span.end)} ${r.units.time}; widen output.start or output.end to compare it with the model`);
      ok = false;
    }
    const belowLimit = o.belowLimit === true;
    const concentration = o.concentration === undefined ? null : read.read(o.concentration, 'concentration', where('concentration'), 'non-negative');
    const limit = o.limit === undefined ? null : read.read(o.limit, 'concentration', where('limit'), 'positive');
    if (o.concentration === undefined && !belowLimit) {
      fail('concentration', 'is required (it may be left out only for a level marked belowLimit: true)');
      ok = false;
    }
    if (belowLimit && o.limit === undefined) {
      fail('limit', 'is required with belowLimit: true: the limit of quantification the level is below');
      ok = false;
    }
    if (belowLimit && concentration !== null && limit !== null && concentration >= limit) {
      fail('concentration', `is ${formatNumber(concentration)}, at or above its limit ${formatNumber(limit)}, yet the level is marked belowLimit`);
      ok = false;
    }
    if (!ok || time === null || (o.concentration !== undefined && concentration === null) || (o.limit !== undefined && limit === null)) return;
    out.push({
      time,
      compartment: compartments[c].id,
      concentration,
      subject: o.subject ?? null,
      belowLimit,
      limit,
      label: o.label ?? null,
      path: o.source ?? path,
    });
  });
  return out;
}
