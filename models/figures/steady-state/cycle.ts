/**
 * The maintenance regimen as one dosing cycle: which dose lines repeat, their common
 * period, and their doses folded into [0, τ) — lags and infusions wrapped around the
 * cycle, an infusion longer than the cycle folded in closed form (it runs ⌊L/τ⌋ times over
 * the whole cycle plus once over its remainder), so the cost does not grow with L/τ.
 */
import type { Administration, Model } from '../../building/model.ts';
import { buildSchedule, type Schedule } from '../../building/events.ts';

export type DoseLines = Model['doseLines'];

/** Common period of the repeating lines (their least common multiple), or null if incommensurate. */
export function maintenancePeriod(intervals: number[]): number | null {
  if (intervals.length === 0) return null;
  let period = intervals[0];
  for (const e of intervals.slice(1)) {
    let found = false;
    for (let m = 1; m <= 100 && !found; m++) {
      const candidate = period * m;
      const ratio = candidate / e;
      if (Math.abs(ratio - Math.round(ratio)) < 1e-9 * ratio) {
        period = candidate;
        found = true;
      }
    }
    if (!found) return null;
  }
  return period;
}

/**
 * The repeating lines that make up the maintenance regimen: those still running at the
 * end of the span (so a dose change counts from its new dose), or, when every line has
 * stopped, those still running at the last dose (the regimen as if continued).
 */
export function maintenanceLines(model: Model): DoseLines {
  const repeating = model.doseLines.filter((l) => l.every !== null && l.count > 0);
  const running = repeating.filter((l) => {
    const every = l.every as number;
    const lastGiven = l.firstGiven + (l.count - 1) * every;
    return l.beyondEnd > 0 || lastGiven + every >= model.end - 1e-9 * every;
  });
  if (running.length > 0 || repeating.length === 0) return running;
  // All stopped before the end (a washout is being watched): the regimen that was given last,
  // not a loading series that ended earlier.
  const lastGiven = (l: DoseLines[number]) => l.firstGiven + (l.count - 1) * (l.every as number);
  const latest = Math.max(...repeating.map(lastGiven));
  return repeating.filter((l) => lastGiven(l) + (l.every as number) > latest);
}

/** The doses of one steady-state cycle [0, τ), with lags and infusions wrapped around the cycle. */
export function cycleAdministrations(lines: DoseLines, period: number): Administration[] {
  const origin = Math.min(...lines.map((l) => l.firstGiven));
  const out: Administration[] = [];
  const wrap = (t: number) => ((t % period) + period) % period;
  for (const l of lines) {
    const every = l.every as number;
    const perCycle = Math.round(period / every);
    const amount = l.nominal * l.bioavailability;
    for (let m = 0; m < perCycle; m++) {
      const given = wrap(l.firstGiven - origin + m * every);
      const arrival = wrap(given + l.lag);
      const base = { line: l.line, occurrence: m, into: l.into, given, nominal: l.nominal };
      if (l.duration === 0) {
        out.push({ ...base, arrival, amount, duration: 0 });
        continue;
      }
      const rate = amount / l.duration;
      // At steady state an infusion of length L = qτ + r, started once per cycle, has q copies
      // running throughout the cycle and one more over [arrival, arrival + r), wrapped.
      let q = Math.floor(l.duration / period);
      let r = l.duration - q * period;
      if (r < 0) {
        q -= 1;
        r += period;
      }
      if (q > 0) out.push({ ...base, arrival: 0, amount: rate * q * period, duration: period });
      const head = Math.min(period, arrival + r) - arrival;
      if (head > 0) out.push({ ...base, arrival, amount: rate * head, duration: head });
      const tail = arrival + r - period;
      if (tail > 0) out.push({ ...base, arrival: 0, amount: rate * tail, duration: tail });
    }
  }
  return out.sort((p, q) => p.arrival - q.arrival);
}

/**
 * The maintenance lines as actually given from the first maintenance dose (time 0), not
 * wrapped: the doses given in cycles [from, to), each with its full lag and duration.
 */
export function givenAdministrations(lines: DoseLines, period: number, from: number, to: number): Administration[] {
  const origin = Math.min(...lines.map((l) => l.firstGiven));
  const out: Administration[] = [];
  for (const l of lines) {
    const every = l.every as number;
    const perCycle = Math.round(period / every);
    for (let m = from * perCycle; m < to * perCycle; m++) {
      const given = l.firstGiven - origin + m * every;
      out.push({ line: l.line, occurrence: m, into: l.into, given, arrival: given + l.lag, nominal: l.nominal, amount: l.nominal * l.bioavailability, duration: l.duration });
    }
  }
  return out.sort((p, q) => p.arrival - q.arrival);
}

/**
 * The part of the administrations that arrives within [start, end): boluses at or after
 * start, and what is left of an infusion already running at start (from start on).
 */
export function administrationsWithin(admins: readonly Administration[], start: number, end: number): Administration[] {
  const out: Administration[] = [];
  for (const a of admins) {
    if (a.arrival >= end) continue;
    if (a.arrival >= start) out.push(a);
    else if (a.duration > 0 && a.arrival + a.duration > start) {
      const left = a.arrival + a.duration - start;
      out.push({ ...a, arrival: start, amount: (a.amount * left) / a.duration, duration: left });
    }
  }
  return out;
}

/** Compartments that drug from the given compartments can reach (themselves included). */
export function reachableFrom(model: Model, starts: Iterable<number>): Set<number> {
  const next: number[][] = model.compartments.map(() => []);
  for (const t of model.transfers) if (t.to !== null) next[t.from].push(t.to);
  const seen = new Set<number>(starts);
  const stack = [...seen];
  while (stack.length > 0) {
    for (const m of next[stack.pop() as number]) {
      if (!seen.has(m)) {
        seen.add(m);
        stack.push(m);
      }
    }
  }
  return seen;
}

/**
 * Compartments that receive drug from the maintenance doses but have no way out of the body,
 * directly or through others: drug piles up there, so there is no steady state whatever the
 * rates (checked on the graph, since I − e^{Mτ} is then only nearly singular in floating point).
 */
export function trappedCompartments(model: Model, lines: DoseLines): number[] {
  const previous: number[][] = model.compartments.map(() => []);
  const exits = new Set<number>();
  for (const t of model.transfers) {
    if (t.to === null) exits.add(t.from);
    else previous[t.to].push(t.from);
  }
  const canLeave = new Set<number>(exits);
  const stack = [...exits];
  while (stack.length > 0) {
    for (const m of previous[stack.pop() as number]) {
      if (!canLeave.has(m)) {
        canLeave.add(m);
        stack.push(m);
      }
    }
  }
  const reached = reachableFrom(model, lines.map((l) => l.into));
  return [...reached].filter((c) => !canLeave.has(c)).sort((a, b) => a - b);
}

/**
 * What the steady state of a model's maintenance regimen is made of, whatever its rates: the
 * lines, their period, the compartments drug would pile up in, and the cycle's doses, schedule
 * and the compartments they reach. It reads only the dose lines, the span's end and which
 * compartments the transfers join, so the subjects of a population that share their doses
 * share it (SteadyStateOptions.structure). Null when no line repeats.
 */
export interface CycleStructure {
  lines: DoseLines;
  /** The lines' common period, or null when they have none. */
  period: number | null;
  /** trappedCompartments of the lines. */
  trapped: number[];
  /** The doses of one cycle, their schedule and the compartments they reach (sorted); null without a period or with trapped compartments. */
  cycle: { administrations: Administration[]; schedule: Schedule; reached: number[] } | null;
}

export function cycleStructure(model: Model, compartments: number): CycleStructure | null {
  const lines = maintenanceLines(model);
  if (lines.length === 0) return null;
  const period = maintenancePeriod(lines.map((l) => l.every as number));
  if (period === null) return { lines, period, trapped: [], cycle: null };
  const trapped = trappedCompartments(model, lines);
  if (trapped.length > 0) return { lines, period, trapped, cycle: null };
  const administrations = cycleAdministrations(lines, period);
  return {
    lines,
    period,
    trapped,
    cycle: {
      administrations,
      schedule: buildSchedule(administrations, compartments, 0, period),
      reached: [...reachableFrom(model, lines.map((l) => l.into))].sort((a, b) => a - b),
    },
  };
}
