/**
 * Dose events → a schedule of breakpoints. Between two breakpoints the system is
 * smooth (fixed infusion rates); at a breakpoint boluses jump the state and the
 * infusion rates change. Integrators run from breakpoint to breakpoint and never
 * step across one.
 */
import type { Administration, Model } from './model.ts';

export interface Jump {
  compartment: number;
  amount: number;
}

export interface Breakpoint {
  time: number;
  /** Boluses that arrive at this time. */
  jumps: Jump[];
  /** Zero-order input into each compartment from this time on (sum of running infusions). */
  rates: Float64Array;
  /** Index of `rates` among the distinct rate vectors of the schedule (for caching propagators). */
  rateKey: number;
}

export interface Schedule {
  start: number;
  end: number;
  /** Breakpoints in ascending time; the first is always at `start`. */
  breakpoints: Breakpoint[];
}

export type DoseEventKind = 'bolus' | 'infusion-start' | 'infusion-end';

/** A dose event for display: markers on the plot, rows in a report. */
export interface DoseEvent {
  time: number;
  kind: DoseEventKind;
  compartment: number;
  /** Bolus: amount arriving. Infusion: rate (amount/time). */
  value: number;
  /** Dose line in the scenario (doses[line]). */
  line: number;
  /** When the dose was given (differs from time by the lag, or by the duration for an infusion end). */
  given: number;
}

interface RawEvent {
  time: number;
  compartment: number;
  bolus: number;
  rateChange: number;
}

/** Times closer than this fraction of the span are one breakpoint (float noise in at + j·every + lag). */
const mergeFraction = 1e-12;

/** Times closer than this are one breakpoint of a schedule over [start, end]. */
export function timeResolution(start: number, end: number): number {
  return mergeFraction * Math.max(1, Math.abs(end), Math.abs(start));
}

/** Builds the breakpoint schedule for administrations within [start, end). */
export function buildSchedule(
  administrations: readonly Administration[],
  compartments: number,
  start: number,
  end: number,
): Schedule {
  const raw: RawEvent[] = [];
  const tolerance = timeResolution(start, end);
  for (const a of administrations) {
    if (a.arrival >= end || a.arrival < start) continue;
    // An infusion shorter than the resolution would start and stop at one breakpoint and
    // vanish; within that resolution it is a bolus, so it is given as one.
    if (a.duration <= tolerance) {
      if (a.amount !== 0) raw.push({ time: a.arrival, compartment: a.into, bolus: a.amount, rateChange: 0 });
    } else {
      const rate = a.amount / a.duration;
      raw.push({ time: a.arrival, compartment: a.into, bolus: 0, rateChange: rate });
      const stop = a.arrival + a.duration;
      if (stop < end) raw.push({ time: stop, compartment: a.into, bolus: 0, rateChange: -rate });
    }
  }
  raw.sort((p, q) => p.time - q.time);

  const breakpoints: Breakpoint[] = [];
  const distinct: Float64Array[] = [];
  const running = new Float64Array(compartments);
  const active = new Int32Array(compartments);
  let current: { time: number; jumps: Jump[] } = { time: start, jumps: [] };
  const close = () => {
    // Breakpoints with the same rates share one vector: a schedule of boluses has one in all.
    let key = distinct.findIndex((d) => sameVector(d, running));
    if (key < 0) key = distinct.push(Float64Array.from(running)) - 1;
    breakpoints.push({ time: current.time, jumps: current.jumps, rates: distinct[key], rateKey: key });
  };
  for (const e of raw) {
    if (e.time - current.time > tolerance) {
      close();
      current = { time: e.time, jumps: [] };
    }
    if (e.bolus !== 0) {
      const same = current.jumps.find((j) => j.compartment === e.compartment);
      if (same) same.amount += e.bolus;
      else current.jumps.push({ compartment: e.compartment, amount: e.bolus });
    }
    if (e.rateChange !== 0) {
      active[e.compartment] += e.rateChange > 0 ? 1 : -1;
      // With no infusion left running, the sum of +r and −r must be exactly zero, not round-off.
      running[e.compartment] = active[e.compartment] === 0 ? 0 : running[e.compartment] + e.rateChange;
    }
  }
  close();
  return { start, end, breakpoints };
}

export function scheduleOf(model: Model): Schedule {
  return buildSchedule(model.administrations, model.compartments.length, model.start, model.end);
}

/** The dose events of a model within its span, for markers and tables. */
export function doseEvents(model: Model): DoseEvent[] {
  const events: DoseEvent[] = [];
  for (const a of model.administrations) {
    const base = { compartment: a.into, line: a.line, given: a.given };
    if (a.duration === 0) {
      events.push({ ...base, time: a.arrival, kind: 'bolus', value: a.amount });
    } else {
      const rate = a.amount / a.duration;
      events.push({ ...base, time: a.arrival, kind: 'infusion-start', value: rate });
      if (a.arrival + a.duration < model.end) {
        events.push({ ...base, time: a.arrival + a.duration, kind: 'infusion-end', value: rate });
      }
    }
  }
  return events.sort((p, q) => p.time - q.time);
}

function sameVector(a: Float64Array, b: Float64Array): boolean {
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}
