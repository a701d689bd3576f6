/**
 * Steady state of a linear model in closed form, whatever integration method the user
 * chose for the curves: the cycle map is affine, x ↦ Φx + g with Φ = e^{Mτ} over the amount
 * block, so its fixed point is x* = (I − Φ)⁻¹g — no cycles to iterate.
 *
 * The approach to it, in closed form too. By superposition the regimen from empty is
 * C(t) = Σₘ u(t − mτ), u the response to one cycle's doses given alone (with their lags and
 * full infusions), so the AUC over the preceding cycle is W(t) = ∫_{t−τ}^{t} C = ∫₀ᵗ u, and
 * W(∞) = AUCτ at steady state. The time to 90% is where one cycle's doses, given alone, have
 * delivered 90% of their AUC to infinity: found on the exact solution of those doses, with the
 * AUC still to come after them, wᵀy (w from (−M)ᵀw = e_c/V_c), a sum of non-negative terms —
 * nothing is computed as a small difference of large numbers.
 */
import { buildSchedule } from '../../building/events.ts';
import { expmScaled, sharedExpmWorkspace } from '../../solving/linalg/expm.ts';
import { solveLinear } from '../../solving/linalg/lu.ts';
import { propagateExact } from '../../solving/linear-path.ts';
import type { Administration } from '../../building/model.ts';
import type { CompartmentSystem } from '../../building/system.ts';

/** The amount block of M restricted to the compartments `keep` (row-major, in their order). */
function amountBlock(system: CompartmentSystem, keep: number[]): Float64Array {
  const n = system.dimension;
  const m = keep.length;
  const block = new Float64Array(m * m);
  for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) block[i * m + j] = system.linearMatrix[keep[i] * n + keep[j]];
  return block;
}

/**
 * Amounts at the start of a steady-state cycle: (I − Φ)x = g over the compartments the doses
 * reach (the others stay empty; one of them without a way out would make I − Φ singular).
 * `first` is the end state of one cycle from empty, g.
 */
export function linearPeriodicState(system: CompartmentSystem, period: number, first: Float64Array, reached: number[]): Float64Array | null {
  const nc = system.layout.compartments;
  const m = reached.length;
  // Amounts never depend on the AUC or eliminated states, so the amount block of e^{Mτ} is the
  // exponential of the amount block alone — without the 1/V of the AUC rows (1e9 for an effect
  // compartment of negligible volume), whose scale would otherwise set the rounding.
  const phi = expmScaled(amountBlock(system, reached), m, period, new Float64Array(m * m), sharedExpmWorkspace(m));
  const a = new Float64Array(m * m);
  for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) a[i * m + j] = (i === j ? 1 : 0) - phi[i * m + j];
  const x = solveLinear(a, m, Float64Array.from(reached, (c) => first[c]));
  if (!x || !x.every(Number.isFinite)) return null;
  const out = new Float64Array(nc);
  // Φ ≥ 0 and g ≥ 0 elementwise, so x* ≥ 0: a negative entry is rounding of an empty compartment.
  reached.forEach((c, i) => (out[c] = Math.max(0, x[i])));
  return out;
}

export interface LinearApproach {
  /** Per tracked compartment: AUC of one cycle's doses given alone, to infinity (= AUCτ at steady state). */
  steadyAuc: number;
  /** AUC over the first cycle of the regimen from empty, W(τ). */
  firstAuc: number;
  time90: number | null;
  time95: number | null;
}

/**
 * W(t) = ∫₀ᵗ u for each tracked compartment, and the times it reaches 90% and 95% of W(∞).
 * `single` is one cycle's doses as given (unwrapped), from time 0.
 */
export function linearApproach(
  system: CompartmentSystem,
  single: Administration[],
  period: number,
  tracked: number[],
  volumes: number[],
  reached: number[],
  work: { integrations: number },
): LinearApproach[] {
  const layout = system.layout;
  const nc = layout.compartments;
  const n = system.dimension;
  const m = reached.length;
  const lastInput = Math.max(0, ...single.map((a) => a.arrival + a.duration));
  // Past every input (a bolus arriving exactly at a schedule's end would be left out).
  const inputsEnd = lastInput >= period ? lastInput + period : period;
  const block = amountBlock(system, reached);
  // w_c: AUC of compartment c to infinity per unit amount in each reached compartment.
  const negT = new Float64Array(m * m);
  for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) negT[i * m + j] = -block[j * m + i];
  const weights = tracked.map((c, k) => {
    const e = new Float64Array(m);
    const at = reached.indexOf(c);
    if (at < 0) return null;
    e[at] = 1 / volumes[k];
    const w = solveLinear(negT, m, e);
    return w && w.every((v) => Number.isFinite(v) && v >= -1e-12 * Math.max(...w.map(Math.abs))) ? w.map((v) => Math.max(0, v)) : null;
  });
  const tail = (amounts: Float64Array, k: number) => {
    const w = weights[k];
    if (!w) return NaN;
    let s = 0;
    for (let i = 0; i < m; i++) s += w[i] * amounts[reached[i]];
    return s;
  };
  const y = new Float64Array(n);
  const solve = (end: number) => {
    work.integrations++;
    return propagateExact(system, buildSchedule(single, nc, 0, end), new Float64Array(n)).trajectory;
  };
  let trajectory = solve(inputsEnd);
  trajectory.stateAt(inputsEnd, 'left', y);
  const atEnd = y.slice();
  const totals = tracked.map((c, k) => (layout.auc[c] >= 0 ? y[layout.auc[c]] + tail(atEnd, k) : NaN));
  // How far past the last input the solution must run for every compartment to reach 95%:
  // s doubles until the AUC still to come after it, wᵀe^{Ms}y, is below 5% everywhere.
  const yReached = Float64Array.from(reached, (c) => atEnd[c]);
  const ws = sharedExpmWorkspace(m);
  const phi = new Float64Array(m * m);
  const moved = new Float64Array(nc);
  /** The amounts s after the last input, with no more doses: e^{Ms}y over the reached block. */
  const after = (s: number) => {
    expmScaled(block, m, s, phi, ws);
    moved.fill(0);
    for (let i = 0; i < m; i++) {
      let v = 0;
      for (let j = 0; j < m; j++) v += phi[i * m + j] * yReached[j];
      moved[reached[i]] = v;
    }
    return moved;
  };
  let extra = 0;
  const short = tracked.some((c, k) => totals[k] > 0 && y[layout.auc[c]] < 0.95 * totals[k]);
  if (short) {
    let s = period;
    for (let doubling = 0; doubling < 200; doubling++, s *= 2) {
      const amounts = after(s);
      if (tracked.every((_, k) => !(totals[k] > 0) || tail(amounts, k) <= 0.05 * totals[k])) break;
    }
    extra = s;
    trajectory = solve(inputsEnd + extra);
  }
  const end = inputsEnd + extra;
  const aucAt = (t: number, c: number) => {
    trajectory.stateAt(t, 'left', y);
    return y[layout.auc[c]];
  };
  /** First t with W(t) ≥ level: W is non-decreasing (u ≥ 0), so bisection finds it. */
  const crossing = (level: number, c: number): number | null => {
    if (aucAt(end, c) < level) return null;
    let lo = 0;
    let hi = end;
    for (let i = 0; i < 200 && hi - lo > 4 * Number.EPSILON * hi; i++) {
      const mid = 0.5 * (lo + hi);
      if (aucAt(mid, c) >= level) hi = mid;
      else lo = mid;
    }
    return hi;
  };
  return tracked.map((c, k) => {
    const total = totals[k];
    if (!(total > 0) || layout.auc[c] < 0) return { steadyAuc: total, firstAuc: NaN, time90: null, time95: null };
    return { steadyAuc: total, firstAuc: aucAt(period, c), time90: crossing(0.9 * total, c), time95: crossing(0.95 * total, c) };
  });
}
