/**
 * Shared tools for the checks against outside sources: running a scenario, reading its
 * rows (a bolus time appears twice: before, then after), relative errors, and an
 * independent reference integrator (odex, Hairer & Wanner's GBS extrapolation code)
 * driven over a dose schedule written out by the test itself.
 */
import { Solver } from 'odex';
import { expect } from 'vitest';
import type { CompartmentFigures } from '../../models/figures/exposure.ts';
import { simulate, type SimulationResult } from '../../models/simulate.ts';

/** Runs a scenario and fails loudly with the engine's problems when it is rejected. */
export function run(scenario: unknown): SimulationResult {
  const outcome = simulate(scenario);
  if (!outcome.ok) {
    throw new Error(`scenario rejected: ${outcome.problems.map((p) => `${p.path}: ${p.message}`).join('; ')}`);
  }
  return outcome.value;
}

export function concentration(result: SimulationResult, id: string): Float64Array {
  const series = result.compartments.find((c) => c.id === id);
  if (!series || !series.concentration) throw new Error(`no concentration series for '${id}'`);
  return series.concentration;
}

export function amount(result: SimulationResult, id: string): Float64Array {
  const series = result.compartments.find((c) => c.id === id);
  if (!series) throw new Error(`no series for '${id}'`);
  return series.amount;
}

export function figures(result: SimulationResult, id: string): CompartmentFigures {
  const f = result.metrics.compartments.find((c) => c.compartment === id);
  if (!f) throw new Error(`no exposure figures for '${id}'`);
  return f;
}

export type Side = 'before' | 'after' | 'only';

export interface Row {
  index: number;
  t: number;
  side: Side;
}

/** The result's rows with their side: a repeated time is (before the bolus, after it). */
export function rowsOf(result: SimulationResult): Row[] {
  const t = result.times;
  const rows: Row[] = [];
  for (let i = 0; i < t.length; i++) {
    const side: Side = i + 1 < t.length && t[i + 1] === t[i] ? 'before' : i > 0 && t[i - 1] === t[i] ? 'after' : 'only';
    rows.push({ index: i, t: t[i], side });
  }
  return rows;
}

/** |a − b| / |b|, or |a − b| when b is zero. */
export function rel(a: number, b: number): number {
  return b === 0 ? Math.abs(a - b) : Math.abs(a - b) / Math.abs(b);
}

/** Largest error of the series against the reference over the rows, relative to `scale` (or to each value when scale is omitted). */
export function worstError(
  rows: Row[],
  series: Float64Array,
  reference: (row: Row) => number,
  scale?: number,
): { error: number; at: Row | null } {
  let error = 0;
  let at: Row | null = null;
  for (const row of rows) {
    const ref = reference(row);
    const e = scale === undefined ? rel(series[row.index], ref) : Math.abs(series[row.index] - ref) / scale;
    if (e > error) {
      error = e;
      at = row;
    }
  }
  return { error, at };
}

/** Largest value of an array. */
export function maxOf(a: ArrayLike<number>): number {
  let m = -Infinity;
  for (let i = 0; i < a.length; i++) m = Math.max(m, a[i]);
  return m;
}

/** One moment of the reference schedule: bolus amounts added, then infusion rates changed, per state index. */
export interface ReferenceEvent {
  time: number;
  jumps?: [index: number, amount: number][];
  rateChanges?: [index: number, delta: number][];
}

export interface ReferenceProblem {
  /** Number of states. */
  n: number;
  /** Right-hand side with the infusion rates in force (written by the test from the scenario's parameters). */
  rhs: (y: number[], rates: number[]) => number[];
  events: ReferenceEvent[];
  start: number;
  end: number;
  rtol: number;
  atol: number;
}

/**
 * Integrates the reference problem with odex from breakpoint to breakpoint (never across
 * a bolus or a rate change), applying jumps and rate changes at the breakpoints, and
 * returns the state at each requested row: 'before' is the left limit at a breakpoint,
 * 'after' and 'only' the right limit. Values inside a segment come from odex's dense
 * output, whose own interpolation error is estimated and controlled by odex.
 */
export function odexReference(problem: ReferenceProblem, rows: Row[]): number[][] {
  const { n, start, end } = problem;
  const events = [...problem.events].filter((e) => e.time >= start && e.time < end).sort((a, b) => a.time - b.time);
  const times = Array.from(new Set([start, ...events.map((e) => e.time)])).sort((a, b) => a - b);
  const out: number[][] = rows.map(() => []);
  const pending = rows.map((r, i) => ({ ...r, slot: i })).sort((a, b) => a.t - b.t);
  let y = new Array<number>(n).fill(0);
  const rates = new Array<number>(n).fill(0);

  for (let k = 0; k < times.length; k++) {
    const a = times[k];
    const b = k + 1 < times.length ? times[k + 1] : end;
    // Left limits at a: the state before this breakpoint's jumps.
    for (const r of pending) if (r.t === a && r.side === 'before') out[r.slot] = y.slice();
    for (const e of events) {
      if (e.time !== a) continue;
      for (const [i, amount] of e.jumps ?? []) y[i] += amount;
      for (const [i, delta] of e.rateChanges ?? []) rates[i] += delta;
    }
    for (const r of pending) if (r.t === a && r.side !== 'before') out[r.slot] = y.slice();
    // Rows strictly inside (a, b), and rows at b from the left (or at the end of the span).
    const inside = pending.filter((r) => r.t > a && (r.t < b || (r.t === b && (r.side === 'before' || b === end))));
    const solver = new Solver(n);
    solver.relativeTolerance = problem.rtol;
    solver.absoluteTolerance = problem.atol;
    solver.maxSteps = 1_000_000;
    solver.denseOutput = true;
    const rates0 = rates.slice();
    let cursor = 0;
    const result = solver.solve(
      (_t, state) => problem.rhs(state, rates0),
      a,
      y,
      b,
      (_nr, xOld, x, _y, dense) => {
        if (!dense) return;
        while (cursor < inside.length && inside[cursor].t <= x) {
          const t = inside[cursor].t;
          const value: number[] = [];
          for (let i = 0; i < n; i++) value.push(t >= xOld ? dense(i, t) : NaN);
          out[inside[cursor].slot] = value;
          cursor++;
        }
      },
    );
    if (result.outcome !== 0) throw new Error(`odex did not converge on [${a}, ${b}] (outcome ${result.outcome})`);
    y = result.y;
    // Rows exactly at b from the left take the segment's end state rather than the interpolant.
    for (const r of inside) if (r.t === b) out[r.slot] = y.slice();
  }
  if (out.some((v) => v.length !== n || v.some((x) => !Number.isFinite(x)))) {
    throw new Error('odex reference left some rows without a value');
  }
  return out;
}

/** Michaelis–Menten flux Vmax·C/(Km + C) with C = amount/volume. */
export function mmFlux(amountInFrom: number, volume: number, vmax: number, km: number): number {
  const c = amountInFrom / volume;
  return (vmax * c) / (km + c);
}

/**
 * Asserts error < tolerance. With REFERENCE_REPORT=1 in the environment it also prints the
 * observed error, so that the margins of all reference checks can be reviewed in one run.
 */
export function expectWithin(error: number, tolerance: number, label: string): void {
  if (process.env.REFERENCE_REPORT) {
    console.log(`[reference] ${label}: ${error.toExponential(2)} (tolerance ${tolerance.toExponential(1)})`);
  }
  expect(error, label).toBeLessThan(tolerance);
}
