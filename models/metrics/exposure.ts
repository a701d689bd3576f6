/**
 * Exposure figures per compartment: per dosing interval and over the whole span.
 * One pass over the trajectory's knots (the solver's steps, or a fine subdivision of
 * each exact piece); between two knots, turning points are located as roots of the
 * slope and threshold crossings as roots of C − level, on the continuous solution.
 */
import type { Model } from '../model.ts';
import type { StateLayout } from '../system.ts';
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
  clast: number;
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
export function intervalStarts(model: Model): Float64Array {
  const times = Array.from(new Set(model.administrations.map((a) => a.given)))
    .filter((t) => t >= model.start && t < model.end)
    .sort((a, b) => a - b);
  return Float64Array.from(times);
}

/** Sorted unique union of the given ascending arrays. */
function mergeTimes(lists: Float64Array[]): Float64Array {
  const all = new Float64Array(lists.reduce((n, l) => n + l.length, 0));
  let k = 0;
  for (const l of lists) {
    all.set(l, k);
    k += l.length;
  }
  all.sort();
  let u = 0;
  for (let i = 0; i < all.length; i++) if (u === 0 || all[i] !== all[u - 1]) all[u++] = all[i];
  return all.slice(0, u);
}

export function exposureFigures(model: Model, layout: StateLayout, probe: CurveProbe): CompartmentFigures[] {
  const schedule = probe.schedule;
  const bpTimes = Float64Array.from(schedule.breakpoints, (b) => b.time);
  const starts = intervalStarts(model);
  const scan = mergeTimes([probe.trajectory.knots(), bpTimes, starts, Float64Array.of(model.start, model.end)]).filter(
    (t) => t >= model.start && t <= model.end,
  );
  // Rows: a breakpoint gets a left and a right row (state or slope may jump there).
  const isBreakpoint = new Set(bpTimes);
  const isBoundary = new Set(starts);
  let rowCount = 0;
  for (const t of scan) rowCount += isBreakpoint.has(t) && t > model.start ? 2 : 1;
  const rowTimes = new Float64Array(rowCount);
  const rowSides = new Uint8Array(rowCount);
  let r = 0;
  for (const t of scan) {
    if (isBreakpoint.has(t) && t > model.start) {
      rowTimes[r] = t;
      rowSides[r++] = 0;
    }
    rowTimes[r] = t;
    rowSides[r++] = 1;
  }

  const tracked = model.compartments
    .map((c, i) => ({ index: i, volume: c.volume }))
    .filter((c): c is { index: number; volume: number } => c.volume !== null);
  const perCompartment = tracked.map((c) => {
    const levels: Level[] = [];
    for (const th of model.thresholds) {
      if (th.compartment !== c.index) continue;
      if (th.above !== null) levels.push({ value: th.above, threshold: th.index, edge: 'above' });
      if (th.below !== null) levels.push({ value: th.below, threshold: th.index, edge: 'below' });
    }
    return {
      ...c,
      levels,
      thresholds: model.thresholds.filter((th) => th.compartment === c.index),
      overall: new Accumulator(model.start, levels.length, 0),
      current: null as Accumulator | null,
      intervals: [] as IntervalFigures[],
      crossings: [] as Crossing[],
      crossingCount: 0,
      prevC: 0,
      prevS: 0,
      prevT: NaN,
      lastC: 0,
    };
  });

  const n = layout.size;
  const slope = new Float64Array(n);
  const pair = new Float64Array(2);
  const timeTolerance = 1e-10 * Math.max(1, Math.abs(model.end), Math.abs(model.start));
  let breakpoint = 0;
  let aucNow: Float64Array = new Float64Array(n);

  const closeInterval = (pc: (typeof perCompartment)[number], t: number, c: number, trough: boolean) => {
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

  probe.trajectory.sample(rowTimes, rowSides, (row, state) => {
    const t = rowTimes[row];
    const side = rowSides[row] === 0 ? 'left' : 'right';
    breakpoint = probe.breakpointAt(t, side);
    probe.slopeOf(state, breakpoint, slope);
    aucNow = state;
    const boundary = isBoundary.has(t);
    const soleRow = !isBreakpoint.has(t) || t === model.start;
    for (const pc of perCompartment) {
      const i = pc.index;
      const c = state[i] / pc.volume;
      const s = slope[i] / pc.volume;
      if (t > pc.prevT) {
        scanPair(pc, pc.prevT, pc.prevC, pc.prevS, t, c, s, breakpoint, side);
      }
      if (boundary && (side === 'left' || soleRow)) {
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

  function scanPair(
    pc: (typeof perCompartment)[number],
    a: number,
    ca: number,
    sa: number,
    b: number,
    cb: number,
    sb: number,
    bpIndex: number,
    sideB: 'left' | 'right',
  ): void {
    // Rates in force inside (a, b): those of the breakpoint at or before a.
    const inside = sideB === 'left' ? bpIndex : probe.breakpointAt(b, 'left');
    const i = pc.index;
    const v = pc.volume;
    const concentrationAt = (t: number, out: Float64Array, curvature: boolean) => {
      probe.trajectory.stateAt(t, 'right', probe.state);
      probe.slopeOf(probe.state, inside, probe.slope);
      out[0] = probe.state[i] / v;
      out[1] = probe.slope[i] / v;
      if (curvature) {
        probe.updateCurvature();
        out[2] = probe.curvature[i] / v;
      }
    };
    const parts: [number, number, number, number, number, number][] = [];
    if ((sa > 0 && sb < 0) || (sa < 0 && sb > 0)) {
      const triple = new Float64Array(3);
      const tStar = refineRoot(
        (t, out) => {
          concentrationAt(t, triple, true);
          out[0] = triple[1];
          out[1] = triple[2];
        },
        a,
        b,
        sa,
        sb,
        NaN,
        NaN,
        timeTolerance,
      );
      concentrationAt(tStar, triple, false);
      const cStar = triple[0];
      pc.current?.see(tStar, cStar);
      pc.overall.see(tStar, cStar);
      parts.push([a, ca, sa, tStar, cStar, 0], [tStar, cStar, 0, b, cb, sb]);
    } else {
      parts.push([a, ca, sa, b, cb, sb]);
    }
    for (const [p, cp, sp, q, cq, sq] of parts) {
      pc.levels.forEach((level, li) => {
        const L = level.value;
        const dp = cp - L;
        const dq = cq - L;
        let over = 0;
        if (dp >= 0 && dq >= 0) over = q - p;
        else if ((dp < 0 && dq > 0) || (dp > 0 && dq < 0)) {
          const tc = refineRoot(
            (t, out) => {
              concentrationAt(t, pair, false);
              out[0] = pair[0] - L;
              out[1] = pair[1];
            },
            p,
            q,
            dp,
            dq,
            sp,
            sq,
            timeTolerance,
          );
          over = dp > 0 ? tc - p : q - tc;
          pc.crossingCount++;
          if (pc.crossings.length < maxCrossingsListed) {
            pc.crossings.push({ time: tc, threshold: level.threshold, edge: level.edge, direction: dp < 0 ? 'up' : 'down' });
          }
        }
        pc.overall.over[li] += over;
        if (pc.current) pc.current.over[li] += over;
      });
    }
  }

  return perCompartment.map((pc) => {
    // The last interval ends with the span; it has a trough only if a dose is given exactly at the end.
    closeInterval(pc, model.end, pc.lastC, false);
    return {
      compartment: model.compartments[pc.index].id,
      overall: {
        cmax: pc.overall.cmax,
        tmax: pc.overall.tmax,
        cmin: pc.overall.cmin,
        tmin: pc.overall.tmin,
        auc: aucNow[layout.auc[pc.index]],
        clast: pc.lastC,
        windows: windowFigures(pc.thresholds, pc.levels, pc.overall.over, model.end - model.start),
        crossings: pc.crossings,
        crossingsTruncated: pc.crossingCount > pc.crossings.length,
      },
      intervals: pc.intervals,
    };
  });
}
