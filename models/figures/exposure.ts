/**
 * Exposure figures per compartment: per dosing interval and over the whole span.
 * One pass over the trajectory's knots (the solver's steps, or a fine subdivision of
 * each exact piece); between two knots, turning points are located as roots of the
 * slope and threshold crossings as roots of C − level, on the continuous solution.
 */
import type { Administration, Model } from '../building/model.ts';
import type { Schedule } from '../building/events.ts';
import type { StateLayout } from '../building/system.ts';
import { CurveProbe } from './curve-probe.ts';
import { refineRoot } from './root-finding.ts';

export interface WindowFigures {
  /** Index of the threshold in output.thresholds. */
  threshold: number;
  /** Its edges (concentrations), as given. */
  above: number | null;
  below: number | null;
  /** Time with C > `above` (null when the threshold has no lower edge). */
  timeAbove: number | null;
  /** Time with C < `below` (null when it has no upper edge). */
  timeBelow: number | null;
  /** Time with above ≤ C ≤ below (both edges given). */
  timeInWindow: number | null;
  /** Time under the lower edge / over the upper edge. */
  timeUnderWindow: number | null;
  timeOverWindow: number | null;
  /** Share of the span spent in the window (or above the lower / below the upper edge when only one is given), 0..1. */
  fractionInWindow: number;
}

export interface IntervalFigures {
  index: number;
  start: number;
  end: number;
  cmax: number;
  tmax: number;
  cmin: number;
  tmin: number;
  /** Concentration just before the next dose; null when no dose follows within the span. */
  trough: number | null;
  auc: number;
  cavg: number;
  /** Peak–trough fluctuation (Cmax − Cmin)/Cavg; null when Cavg is zero. */
  fluctuation: number | null;
  windows: WindowFigures[];
}

export interface Crossing {
  time: number;
  threshold: number;
  edge: 'above' | 'below';
  direction: 'up' | 'down';
}

export interface OverallFigures {
  cmax: number;
  tmax: number;
  /** Lowest concentration over the span (before the first dose it is the starting zero). */
  cmin: number;
  tmin: number;
  /** AUC from the start to the end of the span. */
  auc: number;
  /** Concentration at the end of the span. */
  cEnd: number;
  windows: WindowFigures[];
  crossings: Crossing[];
  /** True when more crossings happened than are listed. */
  crossingsTruncated: boolean;
}

export interface CompartmentFigures {
  compartment: string;
  overall: OverallFigures;
  intervals: IntervalFigures[];
}

const maxCrossingsListed = 10_000;

interface Level {
  value: number;
  threshold: number;
  edge: 'above' | 'below';
}

class Accumulator {
  cmax = -Infinity;
  tmax = NaN;
  cmin = Infinity;
  tmin = NaN;
  /** Time spent over each level, in the order of `levels`. */
  readonly over: Float64Array;
  constructor(
    readonly start: number,
    levels: number,
    readonly aucStart: number,
  ) {
    this.over = new Float64Array(levels);
  }
  see(t: number, c: number): void {
    if (c > this.cmax) {
      this.cmax = c;
      this.tmax = t;
    }
    if (c < this.cmin) {
      this.cmin = c;
      this.tmin = t;
    }
  }
}

/** One compartment's scan over the rows: its accumulators and the row before (one shape for every compartment). */
class CompartmentScan {
  current: Accumulator | null = null;
  readonly intervals: IntervalFigures[] = [];
  readonly crossings: Crossing[] = [];
  crossingCount = 0;
  prevS = 0;
  lastC = 0;
  constructor(
    readonly index: number,
    readonly volume: number,
    readonly levels: Level[],
    readonly thresholds: Model['thresholds'],
    readonly overall: Accumulator,
    public prevC: number,
    public prevT: number,
  ) {}
}

function windowFigures(
  thresholds: Model['thresholds'],
  levels: Level[],
  over: Float64Array,
  span: number,
): WindowFigures[] {
  return thresholds.map((th) => {
    const lower = levels.findIndex((l) => l.threshold === th.index && l.edge === 'above');
    const upper = levels.findIndex((l) => l.threshold === th.index && l.edge === 'below');
    const timeAbove = lower >= 0 ? over[lower] : null;
    const timeOverWindow = upper >= 0 ? over[upper] : null;
    const timeBelow = timeOverWindow === null ? null : span - timeOverWindow;
    const timeInWindow = timeAbove !== null && timeOverWindow !== null ? Math.max(0, timeAbove - timeOverWindow) : null;
    const inside = timeInWindow ?? timeAbove ?? timeBelow ?? 0;
    return {
      threshold: th.index,
      above: th.above,
      below: th.below,
      timeAbove,
      timeBelow,
      timeInWindow,
      timeUnderWindow: timeAbove === null ? null : span - timeAbove,
      timeOverWindow,
      fractionInWindow: span > 0 ? inside / span : 0,
    };
  });
}

/** Times that open dosing intervals: distinct administration times within [start, end). */
export function intervalStarts(model: Model, breakpoints: Float64Array): Float64Array {
  const tolerance = 1e-12 * Math.max(1, Math.abs(model.end), Math.abs(model.start));
  // Only the times in the span are read (a window of a long regimen holds one or two of them),
  // found by bisection in the administrations' times, sorted once per list of administrations.
  const given = sortedGivenTimes(model.administrations);
  const sorted = given.subarray(firstAtLeast(given, model.start), firstAtLeast(given, model.end));
  // Times that differ by unit-conversion rounding ("8 h" × 3 against "1 day") are one start,
  // snapped to the breakpoint there so that the boundary rows and the start coincide exactly.
  const out: number[] = [];
  for (const t of sorted) {
    if (out.length > 0 && t - out[out.length - 1] <= tolerance) continue;
    const near = nearest(breakpoints, t);
    out.push(near !== null && Math.abs(near - t) <= tolerance ? near : t);
  }
  return Float64Array.from(out);
}

/** Administration times in ascending order, per list of administrations (a population's subjects share one list). */
const givenTimes = new WeakMap<readonly Administration[], Float64Array>();

function sortedGivenTimes(administrations: readonly Administration[]): Float64Array {
  let times = givenTimes.get(administrations);
  if (!times) {
    times = Float64Array.from(administrations, (a) => a.given).sort();
    givenTimes.set(administrations, times);
  }
  return times;
}

function nearest(sorted: Float64Array, t: number): number | null {
  let lo = 0;
  let hi = sorted.length - 1;
  if (hi < 0) return null;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (sorted[mid] < t) lo = mid + 1;
    else hi = mid;
  }
  const a = sorted[lo];
  const b = lo > 0 ? sorted[lo - 1] : a;
  return Math.abs(a - t) <= Math.abs(b - t) ? a : b;
}

/** Sorted unique union of two ascending arrays, in one pass. */
function mergeTwo(a: Float64Array, b: Float64Array): Float64Array {
  const out = new Float64Array(a.length + b.length);
  let i = 0;
  let j = 0;
  let u = 0;
  while (i < a.length || j < b.length) {
    const t = j >= b.length || (i < a.length && a[i] <= b[j]) ? a[i++] : b[j++];
    if (u === 0 || t !== out[u - 1]) out[u++] = t;
  }
  return out.slice(0, u);
}

/** Sorted unique union of the given ascending arrays, within [from, to]. */
function mergeTimes(lists: Float64Array[], from: number, to: number): Float64Array {
  let merged = lists[0].subarray(firstAtLeast(lists[0], from), firstAtLeast(lists[0], to, true));
  for (let k = 1; k < lists.length; k++) merged = mergeTwo(merged, lists[k].subarray(firstAtLeast(lists[k], from), firstAtLeast(lists[k], to, true)));
  return merged;
}

/** For each of the ascending times, whether it is one of the ascending `members` (a walk, not a lookup). */
function membership(times: Float64Array, members: Float64Array): Uint8Array {
  const out = new Uint8Array(times.length);
  let j = 0;
  for (let i = 0; i < times.length; i++) {
    while (j < members.length && members[j] < times[i]) j++;
    out[i] = j < members.length && members[j] === times[i] ? 1 : 0;
  }
  return out;
}

/** Breakpoint times per schedule: a population's subjects share one schedule and read many windows of it. */
const breakpointTimes = new WeakMap<Schedule, Float64Array>();

/** The schedule's breakpoint times in [from, to], a view of its (cached) times found by bisection, not a filtered copy. */
function breakpointTimesWithin(schedule: Schedule, from: number, to: number): Float64Array {
  let times = breakpointTimes.get(schedule);
  if (!times) {
    times = new Float64Array(schedule.breakpoints.length);
    for (let k = 0; k < times.length; k++) times[k] = schedule.breakpoints[k].time;
    breakpointTimes.set(schedule, times);
  }
  return times.subarray(firstAtLeast(times, from), firstAtLeast(times, to, true));
}

/** The first index whose time is ≥ t (> t when `after`), in ascending times. */
function firstAtLeast(times: Float64Array, t: number, after = false): number {
  let lo = 0;
  let hi = times.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (after ? times[mid] <= t : times[mid] < t) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** A part of the span to read figures over (one dosing interval of a virtual subject, say). */
export interface FigureWindow {
  start: number;
  end: number;
  /** Whether a dose falls due at `end`, so that the concentration there is a trough. */
  troughAtEnd: boolean;
}

/** The final dose's interval (starts non-empty): to the dose due at the span's end, one interval long when the span allows, or cut at the end. */
export function finalInterval(model: Model, starts: Float64Array): FigureWindow {
  const n = starts.length;
  const last = starts[n - 1];
  const tolerance = 1e-9 * Math.max(1, Math.abs(model.end));
  const dueAtEnd = model.doseLines.some((l) => l.nextGiven !== null && Math.abs(l.nextGiven - model.end) <= tolerance);
  if (dueAtEnd || n < 2) return { start: last, end: model.end, troughAtEnd: dueAtEnd };
  const tau = last - starts[n - 2];
  if (model.end - last >= tau - tolerance) return { start: last, end: Math.min(model.end, last + tau), troughAtEnd: true };
  return { start: last, end: model.end, troughAtEnd: false };
}

/**
 * The figures over the whole span, or over `window` only: then `overall` holds the window's
 * figures (its AUC from the window's start) and the knots outside it are never visited.
 */
export function exposureFigures(whole: Model, layout: StateLayout, probe: CurveProbe, window?: FigureWindow): CompartmentFigures[] {
  const model: Model = window ? { ...whole, start: window.start, end: window.end } : whole;
  const schedule = probe.schedule;
  const bpTimes = breakpointTimesWithin(schedule, model.start, model.end);
  const starts = intervalStarts(model, bpTimes);
  const scan = mergeTimes([probe.trajectory.knots(model.start, model.end), bpTimes, starts, Float64Array.of(model.start, model.end)], model.start, model.end);
  // Rows: a breakpoint gets a left and a right row (state or slope may jump there).
  const scanBreakpoint = membership(scan, bpTimes);
  const scanBoundary = membership(scan, starts);
  // A window ends just before a dose that falls on its end: a breakpoint there gives its left row only.
  const leftOnly = (i: number) => scanBreakpoint[i] === 1 && scan[i] === model.end && scan[i] > model.start;
  let rowCount = 0;
  for (let i = 0; i < scan.length; i++) rowCount += scanBreakpoint[i] === 1 && scan[i] > model.start && !leftOnly(i) ? 2 : 1;
  const rowTimes = new Float64Array(rowCount);
  const rowSides = new Uint8Array(rowCount);
  const rowBreakpoint = new Uint8Array(rowCount);
  const rowBoundary = new Uint8Array(rowCount);
  let r = 0;
  for (let i = 0; i < scan.length; i++) {
    const t = scan[i];
    if (scanBreakpoint[i] === 1 && t > model.start) {
      rowTimes[r] = t;
      rowBreakpoint[r] = 1;
      rowBoundary[r] = scanBoundary[i];
      rowSides[r++] = 0;
      if (leftOnly(i)) continue;
    }
    rowTimes[r] = t;
    rowBreakpoint[r] = scanBreakpoint[i];
    rowBoundary[r] = scanBoundary[i];
    rowSides[r++] = 1;
  }

  const tracked = model.compartments
    .map((c, i) => ({ index: i, volume: c.volume }))
    .filter((c): c is { index: number; volume: number } => c.volume !== null);
  // Before a window that starts within the run, the state is the run's own, not empty.
  const before = new Float64Array(layout.size);
  if (window && window.start > whole.start) probe.trajectory.stateAt(window.start, 'left', before);
  const perCompartment = tracked.map((c) => {
    const levels: Level[] = [];
    for (const th of model.thresholds) {
      if (th.compartment !== c.index) continue;
      if (th.above !== null) levels.push({ value: th.above, threshold: th.index, edge: 'above' });
      if (th.below !== null) levels.push({ value: th.below, threshold: th.index, edge: 'below' });
    }
    const thresholds = model.thresholds.filter((th) => th.compartment === c.index);
    return new CompartmentScan(c.index, c.volume, levels, thresholds, new Accumulator(model.start, levels.length, before[layout.auc[c.index]]), before[c.index] / c.volume, model.start);
  });

  const n = layout.size;
  const slope = new Float64Array(n);
  const pair = new Float64Array(2);
  const timeTolerance = 1e-10 * Math.max(1, Math.abs(model.end), Math.abs(model.start));
  let aucNow: Float64Array = new Float64Array(n);

  const closeInterval = (pc: CompartmentScan, t: number, c: number, trough: boolean) => {
    const acc = pc.current;
    if (!acc) return;
    const span = t - acc.start;
    const auc = aucNow[layout.auc[pc.index]] - acc.aucStart;
    const cavg = span > 0 ? auc / span : 0;
    pc.intervals.push({
      index: pc.intervals.length,
      start: acc.start,
      end: t,
      cmax: acc.cmax,
      tmax: acc.tmax,
      cmin: acc.cmin,
      tmin: acc.tmin,
      trough: trough ? c : null,
      auc,
      cavg,
      fluctuation: cavg > 0 ? (acc.cmax - acc.cmin) / cavg : null,
      windows: windowFigures(pc.thresholds, pc.levels, acc.over, span),
    });
  };

  // Context of the pair being refined, read by the two functions below (made once, not per pair).
  const ctx = { index: 0, volume: 1, level: 0, inside: 0 };
  const triple = new Float64Array(3);
  const concentrationAt = (t: number, out: Float64Array, curvature: boolean) => {
    probe.trajectory.stateAt(t, 'right', probe.state);
    probe.slopeOf(probe.state, ctx.inside, probe.slope);
    out[0] = probe.state[ctx.index] / ctx.volume;
    out[1] = probe.slope[ctx.index] / ctx.volume;
    if (curvature) {
      probe.updateCurvature();
      out[2] = probe.curvature[ctx.index] / ctx.volume;
    }
  };
  const slopeFunction = (t: number, out: Float64Array) => {
    concentrationAt(t, triple, true);
    out[0] = triple[1];
    out[1] = triple[2];
  };
  const levelFunction = (t: number, out: Float64Array) => {
    concentrationAt(t, pair, false);
    out[0] = pair[0] - ctx.level;
    out[1] = pair[1];
  };

  const bps = schedule.breakpoints;
  let bp = 0;
  let ratesOf = -1;
  probe.trajectory.sample(rowTimes, rowSides, (row, state) => {
    const t = rowTimes[row];
    const left = rowSides[row] === 0;
    // Rows ascend, so the breakpoint in force only moves forward.
    while (bp + 1 < bps.length && (left ? bps[bp + 1].time < t : bps[bp + 1].time <= t)) bp++;
    if (ratesOf !== bp) {
      probe.useRatesOf(bp);
      ratesOf = bp;
    }
    probe.system.derivative(t, state, slope);
    aucNow = state;
    const atBreakpoint = rowBreakpoint[row] === 1;
    const boundary = rowBoundary[row] === 1;
    const soleRow = !atBreakpoint || t === model.start;
    for (const pc of perCompartment) {
      const i = pc.index;
      const c = state[i] / pc.volume;
      const s = slope[i] / pc.volume;
      if (t > pc.prevT) {
        // Inside (prevT, t) the rates are those in force just before t.
        const inside = left || !atBreakpoint ? bp : bp - 1;
        scanPair(pc, pc.prevT, pc.prevC, pc.prevS, t, c, s, inside);
        if (ratesOf !== bp) {
          probe.useRatesOf(bp);
          ratesOf = bp;
        }
      } else if (!left && t === pc.prevT && c !== pc.prevC) {
        // A bolus jumps the concentration across a level: a crossing with no time spent between.
        for (const level of pc.levels) {
          const up = pc.prevC < level.value && c >= level.value;
          const down = pc.prevC > level.value && c <= level.value;
          if (!up && !down) continue;
          pc.crossingCount++;
          if (pc.crossings.length < maxCrossingsListed) {
            pc.crossings.push({ time: t, threshold: level.threshold, edge: level.edge, direction: up ? 'up' : 'down' });
          }
        }
      }
      if (boundary && (left || soleRow)) {
        pc.current?.see(t, c);
        closeInterval(pc, t, c, true);
        pc.current = new Accumulator(t, pc.levels.length, state[layout.auc[i]]);
        if (soleRow) pc.current.see(t, c);
      } else {
        pc.current?.see(t, c);
      }
      pc.overall.see(t, c);
      pc.prevT = t;
      pc.prevC = c;
      pc.prevS = s;
      pc.lastC = c;
    }
  });

  function scanPair(pc: CompartmentScan, a: number, ca: number, sa: number, b: number, cb: number, sb: number, inside: number): void {
    if (!((sa > 0 && sb < 0) || (sa < 0 && sb > 0))) {
      if (pc.levels.length > 0) scanMonotone(pc, a, ca, sa, b, cb, sb, inside);
      return;
    }
    ratesOf = -1;
    ctx.index = pc.index;
    ctx.volume = pc.volume;
    ctx.inside = inside;
    const tStar = refineRoot(slopeFunction, a, b, sa, sb, NaN, NaN, timeTolerance);
    concentrationAt(tStar, triple, false);
    const cStar = triple[0];
    pc.current?.see(tStar, cStar);
    pc.overall.see(tStar, cStar);
    if (pc.levels.length > 0) {
      scanMonotone(pc, a, ca, sa, tStar, cStar, 0, inside);
      scanMonotone(pc, tStar, cStar, 0, b, cb, sb, inside);
    }
  }

  /** Time over each level on a piece where C is monotone: at most one crossing per level. */
  function scanMonotone(pc: CompartmentScan, p: number, cp: number, sp: number, q: number, cq: number, sq: number, inside: number): void {
    for (let li = 0; li < pc.levels.length; li++) {
      const level = pc.levels[li];
      const dp = cp - level.value;
      const dq = cq - level.value;
      let over = 0;
      if (dp >= 0 && dq >= 0) over = q - p;
      else if ((dp < 0 && dq > 0) || (dp > 0 && dq < 0)) {
        ratesOf = -1;
        ctx.index = pc.index;
        ctx.volume = pc.volume;
        ctx.inside = inside;
        ctx.level = level.value;
        const tc = refineRoot(levelFunction, p, q, dp, dq, sp, sq, timeTolerance);
        over = dp > 0 ? tc - p : q - tc;
        pc.crossingCount++;
        if (pc.crossings.length < maxCrossingsListed) {
          pc.crossings.push({ time: tc, threshold: level.threshold, edge: level.edge, direction: dp < 0 ? 'up' : 'down' });
        }
      }
      pc.overall.over[li] += over;
      if (pc.current) pc.current.over[li] += over;
    }
  }

  const dueTolerance = 1e-9 * Math.max(1, Math.abs(model.end));
  const doseDueAtEnd = window ? window.troughAtEnd : model.doseLines.some((l) => l.nextGiven !== null && Math.abs(l.nextGiven - model.end) <= dueTolerance);
  return perCompartment.map((pc) => {
    // The last interval ends with the span; its trough is the concentration at the end when the
    // regimen's next dose falls due exactly then (the span was cut at a dosing time).
    closeInterval(pc, model.end, pc.lastC, doseDueAtEnd);
    return {
      compartment: model.compartments[pc.index].id,
      overall: {
        cmax: pc.overall.cmax,
        tmax: pc.overall.tmax,
        cmin: pc.overall.cmin,
        tmin: pc.overall.tmin,
        auc: aucNow[layout.auc[pc.index]] - pc.overall.aucStart,
        cEnd: pc.lastC,
        windows: windowFigures(pc.thresholds, pc.levels, pc.overall.over, model.end - model.start),
        crossings: pc.crossings,
        crossingsTruncated: pc.crossingCount > pc.crossings.length,
      },
      intervals: pc.intervals,
    };
  });
}
