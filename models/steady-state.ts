/**
 * Steady state of the maintenance regimen (the repeating dose lines): the periodic
 * solution that one dosing cycle maps onto itself. Linear models: in closed form,
 * x* = (I − e^{Mτ})⁻¹·g with g the state after one cycle from empty. Saturable models:
 * dosing cycles are iterated, accelerated by Newton steps on P(x) − x with a
 * difference Jacobian of the cycle map P, until the state repeats to tolerance.
 */
import { buildSchedule, type Schedule } from './events.ts';
import { createExpmWorkspace, expmScaled } from './linalg/expm.ts';
import { solveLinear } from './linalg/lu.ts';
import { limits } from './limits.ts';
import { CurveProbe } from './metrics/curve-probe.ts';
import { exposureFigures, type WindowFigures } from './metrics/exposure.ts';
import type { Administration, Model } from './model.ts';
import type { SolverStats } from './numerics/ode-system.ts';
import { choosePath, formatNumber, solveSchedule } from './simulate.ts';
import type { CompartmentSystem } from './system.ts';

export interface SteadyStateCompartment {
  compartment: string;
  /** Figures over one dosing cycle at steady state; times are from the start of the cycle. */
  cmax: number;
  tmax: number;
  cmin: number;
  tmin: number;
  /** Concentration at the end of the cycle, just before the next cycle's first dose. */
  trough: number;
  auc: number;
  cavg: number;
  fluctuation: number | null;
  /** AUC over a cycle at steady state / AUC over the first cycle from empty. */
  accumulationRatio: number | null;
  /** Time from the first maintenance dose until a cycle's AUC reaches 90% (95%) of the steady-state cycle AUC. */
  timeTo90: number | null;
  timeTo95: number | null;
  /** Number of maintenance cycles until the cycle AUC first reaches 90% (95%) of steady state. */
  cyclesTo90: number | null;
  cyclesTo95: number | null;
  windows: WindowFigures[];
}

export interface SteadyStateFigures {
  /** Length of one dosing cycle. */
  period: number;
  /** Dose lines (indices into doses) that make up the maintenance regimen. */
  lines: number[];
  reached: boolean;
  /** Plain-words account of how it was found, or why not. */
  message: string;
  method: 'closed-form' | 'iterated';
  /** Dosing cycles simulated to find it and its figures (the closed form needs two). */
  cycles: number;
  /** Largest |P(x) − x| relative to the largest amount at the accepted state or the amount dosed per cycle, whichever is larger. */
  residual: number;
  compartments: SteadyStateCompartment[];
}

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

/** The doses of one steady-state cycle [0, τ), with lag and infusions wrapped around the cycle. */
export function cycleAdministrations(lines: Model['doseLines'], period: number): Administration[] {
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
      // An infusion as pieces inside [0, τ): it may wrap past the cycle end, or outlast several cycles.
      const rate = amount / l.duration;
      for (let j = -Math.ceil(l.duration / period) - 1; j <= 0; j++) {
        const s = arrival + j * period;
        const a = Math.max(0, s);
        const b = Math.min(period, s + l.duration);
        if (b > a) out.push({ ...base, arrival: a, amount: rate * (b - a), duration: b - a });
      }
    }
  }
  return out.sort((p, q) => p.arrival - q.arrival);
}

interface CycleMap {
  schedule: Schedule;
  /** Relative tolerance the cycles are integrated at. */
  rtol: number;
  /** Runs one cycle from the amounts x (AUC and eliminated states start at zero); returns the end state. */
  run(amounts: Float64Array): Float64Array;
  runs: number;
}

function cycleMap(model: Model, system: CompartmentSystem, schedule: Schedule, stats: SolverStats): CycleMap {
  const n = system.dimension;
  const nc = system.layout.compartments;
  const map: CycleMap = {
    schedule,
    rtol: model.solver.rtol,
    runs: 0,
    run(amounts) {
      const y = new Float64Array(n);
      y.set(amounts.subarray(0, nc));
      map.runs++;
      return solveSchedule(model, system, schedule, y, stats).final;
    },
  };
  return map;
}

function maxAbs(v: Float64Array, count: number): number {
  let m = 0;
  for (let i = 0; i < count; i++) m = Math.max(m, Math.abs(v[i]));
  return m;
}

/**
 * Compartments that receive drug from the maintenance doses but have no way out of the body,
 * directly or through others: drug piles up there, so there is no steady state whatever the
 * rates (checked on the graph, since I − e^{Mτ} is then only nearly singular in floating point).
 */
export function trappedCompartments(model: Model, lines: Model['doseLines']): number[] {
  const n = model.compartments.length;
  const next: number[][] = Array.from({ length: n }, () => []);
  const previous: number[][] = Array.from({ length: n }, () => []);
  const exits = new Set<number>();
  for (const t of model.transfers) {
    if (t.to === null) exits.add(t.from);
    else {
      next[t.from].push(t.to);
      previous[t.to].push(t.from);
    }
  }
  const walk = (starts: Iterable<number>, edges: number[][]): Set<number> => {
    const seen = new Set<number>(starts);
    const stack = [...seen];
    while (stack.length > 0) {
      for (const m of edges[stack.pop() as number]) {
        if (!seen.has(m)) {
          seen.add(m);
          stack.push(m);
        }
      }
    }
    return seen;
  };
  const reached = walk(lines.map((l) => l.into), next);
  const canLeave = walk(exits, previous);
  return [...reached].filter((c) => !canLeave.has(c)).sort((a, b) => a - b);
}

/**
 * Average bioavailable input rate of the cycle against the largest rate saturable kinetics can
 * carry: out of the body, and out of any compartment whose every way out is saturable (a
 * saturable absorption from a gut depot dosed faster than its Vmax piles drug up there).
 */
function capacityProblem(model: Model, cycle: Administration[], period: number): string | null {
  const u = `${model.units.amount}/${model.units.time}`;
  for (let c = 0; c < model.compartments.length; c++) {
    const ways = model.transfers.filter((t) => t.from === c);
    if (ways.length === 0 || ways.some((t) => t.kinetics.kind === 'first-order')) continue;
    const carried = ways.reduce((sum, t) => sum + (t.kinetics.kind === 'saturable' ? t.kinetics.vmax : 0), 0);
    const direct = cycle.reduce((sum, a) => sum + (a.into === c ? a.amount : 0), 0) / period;
    if (direct >= carried) {
      return `no steady state: doses reach '${model.compartments[c].id}' at ${formatNumber(direct)} ${u} on average, at or above the most its saturable ways out can carry (Vmax ${formatNumber(carried)} ${u} in all), so drug piles up there without limit`;
    }
  }
  if (model.transfers.some((t) => t.to === null && t.kinetics.kind === 'first-order')) return null;
  const capacity = model.transfers.reduce(
    (s, t) => s + (t.to === null && t.kinetics.kind === 'saturable' ? t.kinetics.vmax : 0),
    0,
  );
  const input = cycle.reduce((s, a) => s + a.amount, 0) / period;
  if (input < capacity) return null;
  return capacity === 0
    ? 'no steady state: the model has no elimination from the body, so drug accumulates without limit'
    : `no steady state: the average dosing rate ${formatNumber(input)} ${u} is at or above the largest rate the saturable elimination can reach (Vmax = ${formatNumber(capacity)} ${u}), so concentrations rise without limit`;
}

/**
 * The repeating lines that make up the maintenance regimen: those still running at the
 * end of the span (so a dose change counts from its new dose), or, when every line has
 * stopped, those still running at the last dose (the regimen as if continued).
 */
export function maintenanceLines(model: Model): Model['doseLines'] {
  const repeating = model.doseLines.filter((l) => l.every !== null && l.count > 0);
  const running = repeating.filter((l) => {
    const every = l.every as number;
    const lastGiven = l.firstGiven + (l.count - 1) * every;
    return l.beyondEnd > 0 || lastGiven + every >= model.end - 1e-9 * every;
  });
  if (running.length > 0 || repeating.length === 0) return running;
  // All stopped before the end (a washout is being watched): the regimen that was given last,
  // not a loading series that ended earlier.
  const lastGiven = (l: Model['doseLines'][number]) => l.firstGiven + (l.count - 1) * (l.every as number);
  const latest = Math.max(...repeating.map(lastGiven));
  return repeating.filter((l) => lastGiven(l) + (l.every as number) > latest);
}

export function steadyStateFigures(model: Model, system: CompartmentSystem, stats: SolverStats): SteadyStateFigures | null {
  const lines = maintenanceLines(model);
  const intervals = lines.map((l) => l.every as number);
  if (intervals.length === 0) return null;
  const period = maintenancePeriod(intervals);
  const nc = system.layout.compartments;
  const lineIndices = lines.map((l) => l.line);
  const notReached = (p: number, message: string, cycles = 0): SteadyStateFigures => ({
    period: p,
    lines: lineIndices,
    reached: false,
    message,
    method: choosePath(model) === 'exact' ? 'closed-form' : 'iterated',
    cycles,
    residual: NaN,
    compartments: [],
  });
  if (period === null) {
    return notReached(NaN, 'no steady state computed: the dosing intervals of the repeating lines have no common period');
  }
  const trapped = trappedCompartments(model, lines);
  if (trapped.length > 0) {
    const names = trapped.map((c) => `'${model.compartments[c].id}'`).join(', ');
    return notReached(
      period,
      `no steady state: ${names} ${trapped.length > 1 ? 'receive' : 'receives'} drug but ${trapped.length > 1 ? 'have' : 'has'} no way out of the body, directly or through other compartments, so drug accumulates without limit`,
    );
  }
  const cycle = cycleAdministrations(lines, period);
  const capacity = capacityProblem(model, cycle, period);
  if (capacity) return notReached(period, capacity);

  const schedule = buildSchedule(cycle, nc, 0, period);
  // The cycle map is solved with the model's own method (and its own statistics, not the main run's).
  const cycleStats: SolverStats = { ...stats };
  const map = cycleMap(model, system, schedule, cycleStats);
  const first = map.run(new Float64Array(nc));
  const dosePerCycle = cycle.reduce((sum, a) => sum + a.amount, 0);
  const tighterModel = (rtol: number): Model => ({ ...model, solver: { ...model.solver, rtol, atol: (model.solver.atol * rtol) / model.solver.rtol } });
  const tightMap = (rtol: number) => cycleMap(tighterModel(Math.max(rtol / 100, TIGHTEST_RTOL / 10)), system, schedule, cycleStats);
  const tight = tightMap(model.solver.rtol);
  let found =
    choosePath(model) === 'exact'
      ? closedForm(system, period, first)
      : iterate(model, map, tight, first, system.layout.eliminated, dosePerCycle);
  let cycles = map.runs + tight.runs;
  let tightened: number | null = null;
  // Near saturation the integration error of a cycle moves the fixed point far: solve the cycles
  // again, from the state found, at a tolerance that brings that drift within the user's.
  for (let attempt = 0; attempt < 2 && !found.ok && found.illConditioned; attempt++) {
    const tolerance = steadyTolerance(model);
    const current = tightened ?? model.solver.rtol;
    const rtol = Math.min(current / 10, current * found.illConditioned.rtolFactor);
    if (!(rtol >= TIGHTEST_RTOL)) break;
    const retry = cycleMap(tighterModel(rtol), system, schedule, cycleStats);
    const retryTight = tightMap(rtol);
    found = iterate(model, retry, retryTight, found.illConditioned.state, system.layout.eliminated, dosePerCycle, true);
    cycles += retry.runs + retryTight.runs;
    tightened = rtol;
  }
  if (!found.ok) return notReached(period, found.message, cycles);

  const periodic = found.state;
  const cycleModel: Model = { ...model, administrations: cycle, start: 0, end: period };
  const run = solveSchedule(cycleModel, system, schedule, padState(periodic, system.dimension), cycleStats);
  const figures = exposureFigures(cycleModel, system.layout, new CurveProbe(run.trajectory, system, schedule));
  const tracked = figures.map((f) => model.compartments.findIndex((c) => c.id === f.compartment));
  const approach = approachToSteadyState(model, system, lines, period, figures.map((f) => f.overall.auc), tracked, cycleStats);
  const compartments = figures.map((f, k) => {
    const auc = f.overall.auc;
    const cavg = auc / period;
    const a = approach[k];
    const firstAuc = a.firstAuc;
    return {
      compartment: f.compartment,
      cmax: f.overall.cmax,
      tmax: f.overall.tmax,
      cmin: f.overall.cmin,
      tmin: f.overall.tmin,
      trough: f.overall.clast,
      auc,
      cavg,
      fluctuation: cavg > 0 ? (f.overall.cmax - f.overall.cmin) / cavg : null,
      accumulationRatio: firstAuc > 0 ? auc / firstAuc : null,
      timeTo90: a.time90,
      timeTo95: a.time95,
      cyclesTo90: a.cycles90,
      cyclesTo95: a.cycles95,
      windows: f.overall.windows,
    };
  });
  const how =
    choosePath(model) === 'exact'
      ? 'found in closed form from the cycle propagator'
      : `found by iterating dosing cycles (${cycles} cycles simulated${tightened === null ? '' : `, the last at rtol ${formatNumber(tightened)}: this close to saturation a cycle amplifies integration errors`}) until the state repeated to a relative ${formatNumber(found.residual)}`;
  const regimen = lines.map((l) => `doses[${l.line}]`).join(' and ');
  return {
    period,
    lines: lineIndices,
    reached: true,
    message: `steady state of ${regimen} over a dosing cycle of ${formatNumber(period)} ${model.units.time}, ${how}`,
    method: choosePath(model) === 'exact' ? 'closed-form' : 'iterated',
    cycles,
    residual: found.residual,
    compartments,
  };
}

function padState(amounts: Float64Array, n: number): Float64Array {
  const y = new Float64Array(n);
  y.set(amounts);
  return y;
}

type Found =
  | { ok: true; state: Float64Array; residual: number }
  | { ok: false; message: string; illConditioned?: { state: Float64Array; drift: number; rtolFactor: number } };

/** Amounts at the start of a steady-state cycle: (I − Φ)x = g over the amount block. */
function closedForm(system: CompartmentSystem, period: number, first: Float64Array): Found {
  const n = system.dimension;
  const nc = system.layout.compartments;
  // Amounts never depend on the AUC or eliminated states, so the amount block of e^{Mτ} is the
  // exponential of the amount block alone — without the 1/V of the AUC rows (1e9 for an effect
  // compartment of negligible volume), whose scale would otherwise set the rounding.
  const block = new Float64Array(nc * nc);
  for (let i = 0; i < nc; i++) for (let j = 0; j < nc; j++) block[i * nc + j] = system.linearMatrix[i * n + j];
  const phi = expmScaled(block, nc, period, new Float64Array(nc * nc), createExpmWorkspace(nc));
  const a = new Float64Array(nc * nc);
  for (let i = 0; i < nc; i++) {
    for (let j = 0; j < nc; j++) a[i * nc + j] = (i === j ? 1 : 0) - phi[i * nc + j];
  }
  const x = solveLinear(a, nc, first.slice(0, nc));
  if (!x || x.some((v) => !Number.isFinite(v) || v < -1e-9 * maxAbs(first, nc))) {
    return { ok: false, message: 'no steady state: some compartment has no way out of the body, so drug accumulates without limit' };
  }
  return { ok: true, state: x, residual: 0 };
}

/**
 * Fixed-point iteration of the cycle map, with Newton steps once the plain iteration is slow.
 * A candidate is accepted only when (a) the error bound r/(1 − ρ) of a contraction with rate ρ,
 * estimated from one more cycle, is within tolerance — a small change per cycle alone is not
 * enough when the map barely contracts near saturation — and (b) one cycle eliminates what one
 * cycle doses, which rules out a state that is merely growing slowly in relative terms.
 */
function iterate(
  model: Model,
  map: CycleMap,
  /** The same cycle at a 100 times tighter tolerance, to measure the integration error of one cycle. */
  tight: CycleMap,
  start: Float64Array,
  eliminatedIndex: number,
  dosePerCycle: number,
  /** Accept only after a Newton step has measured the Jacobian here (a retry that starts at the state found). */
  needsJacobian = false,
): Found {
  const nc = map.schedule.breakpoints[0].rates.length;
  const tolerance = steadyTolerance(model);
  let x = start.slice(0, nc);
  let px = map.run(x).slice(0, nc);
  /** (J − I) of the last Newton step, J the cycle map's Jacobian, and its difference step (amount). */
  let lastJacobian: Float64Array | null = null;
  let lastDifferenceStep = 0;
  // Compartment by compartment, relative to its own amount with the absolute tolerance as a floor:
  // a change is judged where it happens (a tiny effect compartment is not measured against the
  // dose), and the rounding noise left in a washed-out trough (1e-15 mg) is no change at all.
  // atol is an amount: in a compartment of negligible volume (an effect compartment) the
  // amounts that matter are smaller in proportion, so its floor shrinks with its volume.
  const largest = Math.max(1e-300, ...model.compartments.map((c) => c.volume ?? 0));
  const floor = model.compartments.slice(0, nc).map((c) => (model.solver.atol / tolerance) * Math.min(1, (c.volume ?? largest) / largest));
  const weighted = (d: ArrayLike<number>, b: Float64Array) => {
    let r = 0;
    for (let i = 0; i < nc; i++) r = Math.max(r, Math.abs(d[i]) / (Math.abs(b[i]) + floor[i]));
    return r;
  };
  const residualOf = (a: Float64Array, b: Float64Array) => weighted(Float64Array.from({ length: nc }, (_, i) => b[i] - a[i]), b);
  /** ‖(J − I)⁻¹(b − a)‖, weighted as above: how far a change b − a per cycle puts b from the fixed point. */
  const newtonDistance = (jacobian: Float64Array, a: Float64Array, b: Float64Array) => {
    const d = solveLinear(jacobian.slice(), nc, Float64Array.from({ length: nc }, (_, i) => b[i] - a[i]));
    return d && d.every(Number.isFinite) ? weighted(d, b) : Infinity;
  };
  /** Changes this small are rounding: two cycles that repeat this closely say nothing about contraction. */
  const roundingLevel = 1e3 * Number.EPSILON;
  let residual = residualOf(x, px);
  /** (eliminated − dosed)/dosed over the last cycle checked, or 0. */
  let lastBalance = 0;
  let plain = 0;
  while (map.runs < limits.steadyStateCycles) {
    if (residual <= tolerance) {
      const full = map.run(px);
      const next = full.slice(0, nc);
      const r2 = residualOf(px, next);
      // Distance to the map's fixed point: from the contraction rate over the last two cycles or,
      // once Newton has measured the Jacobian J, from the Newton correction (J − I)⁻¹(P(x) − x),
      // which stays right when ρ is too close to 1 to be seen in two cycles (near saturation).
      // A contraction rate needs changes above rounding; below it only J can tell.
      const rho = residual > roundingLevel ? Math.min(0.999999, r2 / residual) : NaN;
      const bound = lastJacobian ? newtonDistance(lastJacobian, px, next) : Number.isNaN(rho) ? Infinity : r2 / (1 - rho);
      const balance = Math.abs(full[eliminatedIndex] - dosePerCycle) / Math.max(dosePerCycle, 1e-300);
      lastBalance = (full[eliminatedIndex] - dosePerCycle) / Math.max(dosePerCycle, 1e-300);
      if (bound <= tolerance && balance <= 10 * tolerance && !(needsJacobian && !lastJacobian)) {
        // A bound of exactly 0 (two cycles equal to the bit) is rounding, not perfection.
        if (!lastJacobian) return { ok: true, state: next, residual: Math.max(bound, Number.EPSILON) };
        // The map's fixed point is that of the integrated cycle, off the true one by (J − I)⁻¹δ,
        // δ the integration error of one cycle: measured against the same cycle at rtol/100.
        // Near saturation J → I and this drift grows without bound.
        const tightNext = tight.run(px).slice(0, nc);
        const drift = newtonDistance(lastJacobian, next, tightNext);
        // J − I is known only to the error of a cycle (integration, and at least rounding of the
        // amounts: two cycles may agree to the bit and still share it) over the difference step;
        // near saturation its smallest singular value (1/‖(J − I)⁻¹‖) can sink below that, and
        // then neither the Newton steps nor the estimates above can be trusted.
        let cycleError = 1e2 * Number.EPSILON * maxAbs(next.map(Math.abs), nc);
        for (let i = 0; i < nc; i++) cycleError = Math.max(cycleError, Math.abs(tightNext[i] - next[i]));
        const jacobianNoise = cycleError / lastDifferenceStep;
        const smallest = 1 / inverseNorm(lastJacobian, nc);
        const resolved = smallest >= 10 * jacobianNoise;
        if (drift <= tolerance / 10 && resolved) return { ok: true, state: next, residual: Math.max(bound, drift, Number.EPSILON) };
        // The noise in J scales as √rtol (error rtol over a step √rtol): what would resolve J.
        const rtolFactor = Math.min(tolerance / (40 * drift), resolved ? Infinity : (smallest / (20 * jacobianNoise)) ** 2);
        return { ok: false, message: illConditionedMessage(drift, map.rtol), illConditioned: { state: next, drift, rtolFactor } };
      }
      x = px;
      px = next;
      residual = r2;
      // Contracting briskly: a few more plain cycles settle it. Barely contracting (near
      // saturation ρ → 1) or not measurable, plain cycles would not tell: take Newton steps.
      if (rho <= 0.5 && !needsJacobian) continue;
    } else if (plain < 8) {
      // A few plain cycles first: cheap, and they bring the state near the attracting cycle.
      x = px;
      px = map.run(x).slice(0, nc);
      residual = residualOf(x, px);
      plain++;
      continue;
    }
    const newton = newtonStep(map, x, px, nc);
    const step = newton.step;
    lastJacobian = newton.jacobian;
    lastDifferenceStep = newton.differenceStep;
    if (!step) {
      x = px;
      px = map.run(x).slice(0, nc);
    } else {
      let lambda = 1;
      let candidate = step.map((d, i) => x[i] + d);
      while (candidate.some((v) => v < 0) && lambda > 1e-3) {
        lambda /= 2;
        candidate = step.map((d, i) => x[i] + lambda * d);
      }
      x = Float64Array.from(candidate, (v) => Math.max(0, v));
      px = map.run(x).slice(0, nc);
    }
    residual = residualOf(x, px);
  }
  return {
    ok: false,
    message:
      Math.abs(lastBalance) > 10 * tolerance
        ? `no steady state within ${limits.steadyStateCycles} dosing cycles: a cycle still eliminated ${formatNumber(100 * Math.abs(lastBalance))}% ${lastBalance < 0 ? 'less' : 'more'} than it doses (does drug pile up behind a saturable way out?)`
        : `no steady state within ${limits.steadyStateCycles} dosing cycles: the state still changed by a relative ${formatNumber(residual)} per cycle (is the dosing rate close to the saturable elimination capacity?)`,
  };
}

/** Newton step for P(x) − x = 0 with a forward-difference Jacobian of the cycle map, and that J − I. */
function newtonStep(
  map: CycleMap,
  x: Float64Array,
  px: Float64Array,
  nc: number,
): { step: Float64Array | null; jacobian: Float64Array; differenceStep: number } {
  const rtol = map.rtol;
  const scale = Math.max(maxAbs(x, nc), 1e-12);
  const jac = new Float64Array(nc * nc);
  // A difference step of √rtol (relative) balances the integration error in P(x + h) − P(x),
  // about rtol/h, against the curvature error, about h.
  const relative = Math.sqrt(Math.max(rtol, 1e-16));
  for (let j = 0; j < nc; j++) {
    const h = relative * Math.max(Math.abs(x[j]), scale);
    const xp = x.slice();
    xp[j] += h;
    const pj = map.run(xp);
    for (let i = 0; i < nc; i++) jac[i * nc + j] = (pj[i] - px[i]) / h - (i === j ? 1 : 0);
  }
  const rhs = Float64Array.from({ length: nc }, (_, i) => x[i] - px[i]);
  return { step: solveLinear(jac.slice(), nc, rhs), jacobian: jac, differenceStep: relative * scale };
}

/** ‖A⁻¹‖∞ by solving for each unit vector (A is small); Infinity when A is singular. */
function inverseNorm(a: Float64Array, nc: number): number {
  const rowSums = new Float64Array(nc);
  for (let j = 0; j < nc; j++) {
    const e = new Float64Array(nc);
    e[j] = 1;
    const column = solveLinear(a.slice(), nc, e);
    if (!column || !column.every(Number.isFinite)) return Infinity;
    for (let i = 0; i < nc; i++) rowSums[i] += Math.abs(column[i]);
  }
  return maxAbs(rowSums, nc);
}

/**
 * How closely a saturable steady state is determined: 100·rtol (a cycle's integration error
 * is a few rtol, and the acceptance tests are estimates), within [1e-10, 1e-3] — a loose
 * rtol must not turn "repeats within 100%" into a steady state.
 */
function steadyTolerance(model: Model): number {
  return Math.min(1e-3, Math.max(1e-10, 100 * model.solver.rtol));
}

function illConditionedMessage(drift: number, rtol: number): string {
  return (
    `no steady state found to tolerance: the regimen is so close to what saturable elimination can clear that the integration ` +
    `error of one dosing cycle moves the steady state by a relative ${formatNumber(drift)}, even at rtol ${formatNumber(rtol)}`
  );
}

/** Tightest relative tolerance the steady-state search asks of the integrator. */
const TIGHTEST_RTOL = 1e-13;

interface Approach {
  time90: number | null;
  time95: number | null;
  cycles90: number | null;
  cycles95: number | null;
  /** AUC over the first cycle of the maintenance regimen given alone from empty. */
  firstAuc: number;
}

/** The maintenance lines as actually given from the first maintenance dose for `cycles` cycles (no wrapping). */
function unwrappedAdministrations(lines: Model['doseLines'], period: number, cycles: number): Administration[] {
  const origin = Math.min(...lines.map((l) => l.firstGiven));
  const out: Administration[] = [];
  for (const l of lines) {
    const every = l.every as number;
    const count = Math.round((cycles * period) / every);
    for (let m = 0; m < count; m++) {
      const given = l.firstGiven - origin + m * every;
      out.push({ line: l.line, occurrence: m, into: l.into, given, arrival: given + l.lag, nominal: l.nominal, amount: l.nominal * l.bioavailability, duration: l.duration });
    }
  }
  return out.sort((p, q) => p.arrival - q.arrival);
}

/**
 * How fast the maintenance regimen alone (no loading dose) approaches steady state: it is
 * simulated as given, from empty, and the AUC of cycle n is compared with the steady-state
 * cycle AUC as a fraction f_n. The time is interpolated in ln(1 − f) between cycles, which is
 * exact for one-compartment kinetics (1 − f_n = e^{−nkτ}, so t90 = ln 10/k ≈ 3.3 half-lives).
 * Lags and infusions that run past a cycle end fall in the next cycle, as they do in practice.
 */
function approachToSteadyState(
  model: Model,
  system: CompartmentSystem,
  lines: Model['doseLines'],
  period: number,
  steadyAuc: number[],
  tracked: number[],
  stats: SolverStats,
): Approach[] {
  const layout = system.layout;
  const nc = layout.compartments;
  const y = new Float64Array(system.dimension);
  let result: Approach[] = [];
  for (let cycles = 16; ; cycles *= 4) {
    const admins = unwrappedAdministrations(lines, period, cycles);
    const schedule = buildSchedule(admins, nc, 0, cycles * period);
    const run = solveSchedule({ ...model, administrations: admins, start: 0, end: cycles * period }, system, schedule, new Float64Array(system.dimension), stats);
    const aucAt = (t: number, c: number) => {
      run.trajectory.stateAt(t, 'left', y);
      return y[layout.auc[c]];
    };
    result = tracked.map((c, k) => {
      const r: Approach = { time90: null, time95: null, cycles90: null, cycles95: null, firstAuc: aucAt(period, c) };
      if (!(steadyAuc[k] > 0)) return r;
      let previous = 0;
      let before = 0;
      for (let n = 1; n <= cycles && r.time95 === null; n++) {
        const after = aucAt(n * period, c);
        const f = (after - before) / steadyAuc[k];
        before = after;
        for (const [target, key, count] of [
          [0.9, 'time90', 'cycles90'],
          [0.95, 'time95', 'cycles95'],
        ] as const) {
          if (r[key] === null && f >= target) {
            const lo = Math.log(Math.max(1e-300, 1 - previous));
            const hi = Math.log(Math.max(1e-300, 1 - f));
            const frac = hi < lo ? (Math.log(1 - target) - lo) / (hi - lo) : 1;
            r[key] = (n - 1 + Math.min(1, Math.max(0, frac))) * period;
            r[count] = n;
          }
        }
        previous = f;
      }
      return r;
    });
    const pending = result.some((r, k) => steadyAuc[k] > 0 && r.time95 === null);
    if (!pending || cycles * 4 > limits.steadyStateCycles) return result;
  }
}
