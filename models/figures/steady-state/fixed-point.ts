/**
 * The fixed point of a saturable model's cycle map P (amounts at the start of a cycle →
 * amounts at its end): plain cycles while they contract briskly, Newton steps on
 * P(x) − x with a difference Jacobian once they do not (near saturation) or once the
 * change per cycle has sunk to rounding (a state that washes out every cycle: there the
 * contraction rate cannot be read from two cycles, but the Jacobian shows it at once).
 *
 * Everything is judged in scaled amounts: compartment i is measured against its own amount
 * plus a floor (atol over the steady-state tolerance, shrunk with the compartment's share
 * of the largest volume), so a washed-out trough of 1e-15 mg or a tiny effect compartment
 * is judged on a scale where a change means something. The difference step of the
 * Jacobian is √rtol of that same scale: a step proportional to a washed-out trough alone
 * would be far below the integration noise of a cycle, and the Jacobian noise.
 */
import type { Schedule } from '../../building/events.ts';
import { solveLinear } from '../../solving/linalg/lu.ts';
import { limits } from '../../scenario/limits.ts';
import { formatNumber } from '../../result/format-number.ts';
import { formatShare } from './capacity.ts';

export interface CycleMap {
  schedule: Schedule;
  /** Relative tolerance the cycles are integrated at. */
  rtol: number;
  /** Runs one cycle from the amounts x (AUC and eliminated states start at zero); returns the end state. */
  run(amounts: Float64Array): Float64Array;
  runs: number;
}

export type Found =
  | { ok: true; state: Float64Array; residual: number }
  | { ok: false; message: string; illConditioned?: { state: Float64Array; drift: number; rtolFactor: number } };

export interface SearchSettings {
  /** Steady-state tolerance (relative, per compartment). */
  tolerance: number;
  /** Absolute floor of each compartment's scale (amount). */
  floor: Float64Array;
  eliminatedIndex: number;
  dosePerCycle: number;
  amountUnit: string;
  /** The dose rate against the saturable capacities, for the messages. */
  account: string;
}

function maxAbs(v: ArrayLike<number>, count: number): number {
  let m = 0;
  for (let i = 0; i < count; i++) m = Math.max(m, Math.abs(v[i]));
  return m;
}

/**
 * Fixed-point iteration of the cycle map, with Newton steps once the plain iteration is slow
 * or its changes are at rounding. A candidate is accepted only when (a) its distance to the
 * fixed point — r/(1 − ρ) for a contraction of rate ρ measured over two cycles, or the Newton
 * correction (J − I)⁻¹(P(x) − x) once J is known — is within tolerance; (b) one cycle
 * eliminates what one cycle doses; and, when J was used, (c) the drift of the fixed point
 * with one cycle's integration error is within tolerance and J stands above its own noise.
 */
export function iterate(
  settings: SearchSettings,
  map: CycleMap,
  /** The same cycle at a 100 times tighter tolerance, to measure the integration error of one cycle. */
  tight: CycleMap,
  start: Float64Array,
  /** Accept only after a Newton step has measured the Jacobian here (a retry that starts at the state found). */
  needsJacobian = false,
): Found {
  const nc = map.schedule.breakpoints[0].rates.length;
  const { tolerance, floor, eliminatedIndex, dosePerCycle } = settings;
  const relative = Math.sqrt(Math.max(map.rtol, 1e-16));
  const scale = (x: Float64Array) => Float64Array.from({ length: nc }, (_, i) => Math.abs(x[i]) + floor[i]);
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

  let x = start.slice(0, nc);
  let full = map.run(x);
  let px = full.slice(0, nc);
  /** The last measured pair: P(x) − x summed over compartments, and what that cycle eliminated. */
  let lastChange = { body: 0, eliminated: full[eliminatedIndex] };
  const record = (from: Float64Array, end: Float64Array) => {
    let body = 0;
    for (let i = 0; i < nc; i++) body += end[i] - from[i];
    lastChange = { body, eliminated: end[eliminatedIndex] };
  };
  record(x, full);
  /** (J − I) of the last Newton step, J the cycle map's Jacobian, and the scale it was measured at. */
  let lastJacobian: Float64Array | null = null;
  let jacobianScale: Float64Array | null = null;
  let residual = residualOf(x, px);
  let plain = 0;
  /**
   * Newton steps in a row that did not reduce the change per cycle. Where there is no fixed
   * point (drug piling up behind a saturable way out) they jump about; after a few such misses
   * only plain cycles are run, so that what the message reports at the cycle limit is the
   * regimen's own course, not the cycle after an arbitrary jump.
   */
  let misses = 0;
  let plainOnly = false;
  while (map.runs < limits.steadyStateCycles) {
    if (residual <= tolerance) {
      const nextFull = map.run(px);
      const next = nextFull.slice(0, nc);
      record(px, nextFull);
      const r2 = residualOf(px, next);
      // Distance to the map's fixed point: from the contraction rate over the last two cycles or,
      // once Newton has measured the Jacobian J, from the Newton correction (J − I)⁻¹(P(x) − x),
      // which stays right when ρ is too close to 1 to be seen in two cycles (near saturation).
      // A contraction rate needs changes above rounding; below it only J can tell.
      const rho = residual > roundingLevel ? Math.min(0.999999, r2 / residual) : NaN;
      const bound = lastJacobian ? newtonDistance(lastJacobian, px, next) : Number.isNaN(rho) ? Infinity : r2 / (1 - rho);
      const balance = Math.abs(nextFull[eliminatedIndex] - dosePerCycle) / Math.max(dosePerCycle, 1e-300);
      if (bound <= tolerance && balance <= 10 * tolerance && !(needsJacobian && !lastJacobian)) {
        // A bound of exactly 0 (two cycles equal to the bit) is rounding, not perfection.
        if (!lastJacobian || !jacobianScale) return { ok: true, state: next, residual: Math.max(bound, Number.EPSILON) };
        // The map's fixed point is that of the integrated cycle, off the true one by (J − I)⁻¹δ,
        // δ the integration error of one cycle: measured against the same cycle at rtol/100.
        // Near saturation J → I and this drift grows without bound.
        const tightNext = tight.run(px).slice(0, nc);
        const drift = newtonDistance(lastJacobian, next, tightNext);
        // J − I is known only to the error of a cycle (integration, and at least rounding of the
        // amounts), relative to each compartment's scale, over the relative difference step;
        // near saturation its smallest singular value (1/‖(J − I)⁻¹‖, scaled) can sink below
        // that, and then neither the Newton steps nor the estimates above can be trusted.
        let cycleError = 0;
        for (let i = 0; i < nc; i++) {
          const err = Math.max(Math.abs(tightNext[i] - next[i]), 1e2 * Number.EPSILON * Math.abs(next[i]));
          cycleError = Math.max(cycleError, err / jacobianScale[i]);
        }
        const jacobianNoise = cycleError / relative;
        const smallest = 1 / scaledInverseNorm(lastJacobian, jacobianScale, nc);
        const resolved = smallest >= 10 * jacobianNoise;
        if (drift <= tolerance / 10 && resolved) return { ok: true, state: next, residual: Math.max(bound, drift, Number.EPSILON) };
        // The noise in J scales as √rtol (error rtol over a step √rtol): what would resolve J.
        const rtolFactor = Math.min(tolerance / (40 * drift), resolved ? Infinity : (smallest / (20 * jacobianNoise)) ** 2);
        return {
          ok: false,
          message: illConditionedMessage(settings, { drift, rtol: map.rtol, smallest, jacobianNoise, resolved }),
          illConditioned: { state: next, drift, rtolFactor },
        };
      }
      x = px;
      px = next;
      residual = r2;
      // Contracting briskly: a few more plain cycles settle it. Barely contracting (near
      // saturation ρ → 1) or not measurable (changes at rounding), plain cycles would not
      // tell: take a Newton step, which measures J.
      if (rho <= 0.5 && !needsJacobian) continue;
    } else if (plain < 8 || plainOnly) {
      // A few plain cycles first: cheap, and they bring the state near the attracting cycle.
      x = px;
      full = map.run(x);
      px = full.slice(0, nc);
      record(x, full);
      residual = residualOf(x, px);
      plain++;
      continue;
    }
    if (plainOnly) {
      x = px;
      full = map.run(x);
      px = full.slice(0, nc);
      record(x, full);
      residual = residualOf(x, px);
      continue;
    }
    const before = residual;
    const s = scale(x);
    const newton = newtonStep(map, x, px, nc, s, relative);
    lastJacobian = newton.jacobian;
    jacobianScale = s;
    if (!newton.step) {
      x = px;
    } else {
      let lambda = 1;
      const step = newton.step;
      let candidate = step.map((d, i) => x[i] + d);
      while (candidate.some((v) => v < 0) && lambda > 1e-3) {
        lambda /= 2;
        candidate = step.map((d, i) => x[i] + lambda * d);
      }
      x = Float64Array.from(candidate, (v) => Math.max(0, v));
    }
    full = map.run(x);
    px = full.slice(0, nc);
    record(x, full);
    residual = residualOf(x, px);
    misses = residual < before ? 0 : misses + 1;
    // Only where the cycles show drug piling up (a cycle eliminating clearly less than it doses):
    // near saturation a fixed point exists, and only Newton steps can find it.
    plainOnly = misses >= 5 && dosePerCycle - lastChange.eliminated > 10 * tolerance * dosePerCycle;
  }
  return { ok: false, message: cycleLimitMessage(settings, lastChange, residual) };
}

/** Newton step for P(x) − x = 0 with a forward-difference Jacobian of the cycle map, and that J − I. */
function newtonStep(
  map: CycleMap,
  x: Float64Array,
  px: Float64Array,
  nc: number,
  scale: Float64Array,
  relative: number,
): { step: Float64Array | null; jacobian: Float64Array } {
  const jac = new Float64Array(nc * nc);
  // A difference step of √rtol of the compartment's scale balances the integration error in
  // P(x + h) − P(x), about rtol·scale/h, against the curvature error, about h.
  for (let j = 0; j < nc; j++) {
    const h = relative * scale[j];
    const xp = x.slice();
    xp[j] += h;
    const pj = map.run(xp);
    for (let i = 0; i < nc; i++) jac[i * nc + j] = (pj[i] - px[i]) / h - (i === j ? 1 : 0);
  }
  const rhs = Float64Array.from({ length: nc }, (_, i) => x[i] - px[i]);
  return { step: solveLinear(jac.slice(), nc, rhs), jacobian: jac };
}

/** ‖S⁻¹(J − I)S‖⁻¹ inverted: ‖(S⁻¹AS)⁻¹‖∞ by solving for each unit vector (A is small); Infinity when singular. */
function scaledInverseNorm(a: Float64Array, s: Float64Array, nc: number): number {
  const scaled = new Float64Array(nc * nc);
  for (let i = 0; i < nc; i++) for (let j = 0; j < nc; j++) scaled[i * nc + j] = (a[i * nc + j] * s[j]) / s[i];
  const rowSums = new Float64Array(nc);
  for (let j = 0; j < nc; j++) {
    const e = new Float64Array(nc);
    e[j] = 1;
    const column = solveLinear(scaled, nc, e);
    if (!column || !column.every(Number.isFinite)) return Infinity;
    for (let i = 0; i < nc; i++) rowSums[i] += Math.abs(column[i]);
  }
  return maxAbs(rowSums, nc);
}

function illConditionedMessage(
  settings: SearchSettings,
  m: { drift: number; rtol: number; smallest: number; jacobianNoise: number; resolved: boolean },
): string {
  const contraction = `one dosing cycle takes away a fraction ${formatNumber(m.smallest)} of a departure from the steady state`;
  const what = m.resolved
    ? `${contraction}, and the integration error of one cycle (measured against the same cycle at rtol ${formatNumber(m.rtol / 100)}) moves the steady state by a relative ${formatNumber(m.drift)}, more than a tenth of the tolerance`
    : `${contraction}, which is not above the noise of that measurement (${formatNumber(m.jacobianNoise)}, from one cycle's integration error)`;
  return `no steady state found to tolerance ${formatNumber(settings.tolerance)}: ${what}, with the cycles integrated at rtol ${formatNumber(m.rtol)}; ${settings.account}`;
}

function cycleLimitMessage(settings: SearchSettings, last: { body: number; eliminated: number }, residual: number): string {
  const dose = settings.dosePerCycle;
  const u = settings.amountUnit;
  const short = dose - last.eliminated;
  const eliminated =
    dose > 0
      ? `the last cycle computed eliminated ${formatNumber((100 * Math.abs(short)) / dose)}% ${short > 0 ? 'less' : 'more'} than it doses (${formatShare(last.eliminated, dose)} of ${formatNumber(dose)} ${u})`
      : `the last cycle computed eliminated ${formatNumber(last.eliminated)} ${u}`;
  const body = `the amount in the body ${last.body >= 0 ? 'rose' : 'fell'} by ${formatNumber(Math.abs(last.body))} ${u} over that cycle and the state changed by a relative ${formatNumber(residual)}`;
  return `no steady state within ${limits.steadyStateCycles} dosing cycles: ${eliminated}, ${body}; ${settings.account}`;
}
