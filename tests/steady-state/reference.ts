/**
 * References for the steady-state figures, computed without the engine's steady-state code:
 *
 * - linear models: the periodic solution x* = (I − Φ)⁻¹g of the affine cycle map x ↦ Φx + g,
 *   Φ = e^{Mτ} and g from mathjs `expm` of matrices written here (Gibaldi & Perrier,
 *   Pharmacokinetics, 2nd ed., ch. 3 and appendix on matrix methods, from memory: superposition
 *   of doses for linear systems); figures by evaluating that solution directly;
 * - one compartment with Michaelis–Menten elimination after IV boluses: the integrated
 *   Michaelis–Menten equation (Wagner 1975; Rowland & Tozer, 4th ed., ch. 20; from memory),
 *   Km·ln(C0/C) + (C0 − C) = (Vmax/V)·t, solved for C by Newton's method in ln C, and the AUC
 *   between two concentrations ∫C dt = [Km(Ca − Cb) + (Ca² − Cb²)/2]/(Vmax/V).
 *
 * Time to 90% of steady state, by the engine's stated definition: the first t at which the AUC
 * over the preceding dosing cycle, W(t) = AUC(t) − AUC(t − τ), reaches 90% of AUCτ at steady state.
 */
import { expm, lusolve, matrix, type Matrix } from 'mathjs';

export interface LinearModel {
  /** Amount block of the compartment matrix, m × m (rows: d/dt of compartment i). */
  m: number[][];
  /** Index of the compartment whose concentration is checked, and its volume. */
  observed: number;
  volume: number;
  /** Doses of one cycle, given at `given` (from 0), arriving `lag` later, into compartment `into`. */
  doses: { into: number; amount: number; given: number; lag: number; duration: number }[];
  period: number;
}

/** z = [amounts (m), ∫ amount of the observed compartment, 1]: one constant-input piece is e^{Bh}z. */
function augmented(model: LinearModel, rates: number[], h: number): number[][] {
  const m = model.m.length;
  const b = Array.from({ length: m + 2 }, () => new Array<number>(m + 2).fill(0));
  for (let i = 0; i < m; i++) {
    for (let j = 0; j < m; j++) b[i][j] = model.m[i][j] * h;
    b[i][m + 1] = rates[i] * h;
  }
  b[m][model.observed] = h;
  return (expm(matrix(b)) as Matrix).toArray() as number[][];
}

function apply(p: number[][], z: number[]): number[] {
  return p.map((row) => row.reduce((s, v, j) => s + v * z[j], 0));
}

/** Input events of a dose list over [from, to): boluses and infusion rate changes (times sorted). */
type Piece = { start: number; end: number; rates: number[]; boluses: number[] };

function pieces(model: LinearModel, admins: { into: number; amount: number; arrival: number; duration: number }[], from: number, to: number): Piece[] {
  const m = model.m.length;
  const times = new Set<number>([from, to]);
  for (const a of admins) {
    for (const t of [a.arrival, a.arrival + a.duration]) if (t > from && t < to) times.add(t);
  }
  const sorted = [...times].sort((p, q) => p - q);
  const out: Piece[] = [];
  for (let k = 0; k + 1 < sorted.length; k++) {
    const [start, end] = [sorted[k], sorted[k + 1]];
    const rates = new Array<number>(m).fill(0);
    const boluses = new Array<number>(m).fill(0);
    for (const a of admins) {
      if (a.duration === 0 && a.arrival === start) boluses[a.into] += a.amount;
      if (a.duration > 0 && a.arrival <= start && a.arrival + a.duration >= end) rates[a.into] += a.amount / a.duration;
    }
    out.push({ start, end, rates, boluses });
  }
  return out;
}

/** z after running the pieces from z0 up to time t (left of any bolus at t). */
function runTo(model: LinearModel, ps: Piece[], z0: number[], t: number): number[] {
  let z = z0.slice();
  for (const p of ps) {
    if (p.start >= t) break;
    z = z.map((v, i) => (i < p.boluses.length ? v + p.boluses[i] : v));
    z = apply(augmented(model, p.rates, Math.min(t, p.end) - p.start), z);
  }
  return z;
}

/** The doses of the steady-state cycle [0, τ): every copy of each dose given in earlier cycles, clipped. */
function wrappedCycle(model: LinearModel) {
  const admins: { into: number; amount: number; arrival: number; duration: number }[] = [];
  const tau = model.period;
  for (const d of model.doses) {
    const reach = d.given + d.lag + d.duration;
    for (let j = -Math.ceil(reach / tau) - 1; j <= 0; j++) {
      const arrival = d.given + d.lag + j * tau;
      if (d.duration === 0) {
        if (arrival >= 0 && arrival < tau) admins.push({ into: d.into, amount: d.amount, arrival, duration: 0 });
        continue;
      }
      const a = Math.max(0, arrival);
      const b = Math.min(tau, arrival + d.duration);
      if (b > a) admins.push({ into: d.into, amount: (d.amount * (b - a)) / d.duration, arrival: a, duration: b - a });
    }
  }
  return admins;
}

export interface SteadyReference {
  trough: number;
  peak: number;
  auc: number;
  time90: number;
  time95: number;
}

export function linearReference(model: LinearModel): SteadyReference {
  const m = model.m.length;
  const tau = model.period;
  const cycle = pieces(model, wrappedCycle(model), 0, tau);
  const zero = new Array<number>(m + 2).fill(0);
  zero[m + 1] = 1;
  const g = runTo(model, cycle, zero, tau).slice(0, m);
  const phi = (expm(matrix(model.m.map((row) => row.map((v) => v * tau)))) as Matrix).toArray() as number[][];
  const iMinusPhi = phi.map((row, i) => row.map((v, j) => (i === j ? 1 : 0) - v));
  const xStar = ((lusolve(iMinusPhi, g.map((v) => [v])) as number[][]).map((r) => r[0]));
  const start = [...xStar, 0, 1];
  const end = runTo(model, cycle, start, tau);
  const conc = (t: number) => runTo(model, cycle, start, t)[model.observed] / model.volume;
  // Peak: the largest of a grid (right limits at the boluses included), refined by golden section.
  let best = { t: 0, c: -Infinity };
  const grid = 96;
  const candidates = new Set<number>([0, ...cycle.map((p) => p.start)]);
  for (let k = 0; k <= grid; k++) candidates.add((tau * k) / grid);
  for (const t of candidates) {
    // Right limit: just after any bolus arriving at t.
    const bolus = cycle.find((p) => p.start === t)?.boluses[model.observed] ?? 0;
    const c = conc(t) + bolus / model.volume;
    if (c > best.c) best = { t, c };
  }
  let [a, b] = [Math.max(0, best.t - tau / grid), Math.min(tau, best.t + tau / grid)];
  const r = (Math.sqrt(5) - 1) / 2;
  for (let i = 0; i < 80; i++) {
    const x1 = b - r * (b - a);
    const x2 = a + r * (b - a);
    if (conc(x1) >= conc(x2)) b = x2;
    else a = x1;
  }
  const peak = Math.max(best.c, conc(0.5 * (a + b)));
  const auc = end[m] / model.volume;
  // W(t) = ∫₀ᵗ u for one cycle's doses given alone (superposition; see the engine's definition).
  const single = model.doses.map((d) => ({ into: d.into, amount: d.amount, arrival: d.given + d.lag, duration: d.duration }));
  const lastInput = Math.max(...single.map((d) => d.arrival + d.duration));
  const timeTo = (level: number) => {
    let hi = Math.max(tau, lastInput + 1);
    const w = (t: number) => runTo(model, pieces(model, single, 0, Math.max(t, lastInput + 1)), zero, t)[m] / model.volume;
    while (w(hi) < level) hi *= 2;
    let lo = 0;
    for (let i = 0; i < 100 && hi - lo > 1e-14 * hi; i++) {
      const mid = 0.5 * (lo + hi);
      if (w(mid) >= level) hi = mid;
      else lo = mid;
    }
    return hi;
  };
  return { trough: xStar[model.observed] / model.volume, peak, auc, time90: timeTo(0.9 * auc), time95: timeTo(0.95 * auc) };
}

/** One compartment, Michaelis–Menten elimination, IV boluses of D every τ. */
export interface MmModel {
  volume: number;
  vmax: number;
  km: number;
  dose: number;
  period: number;
}

/** C(t) from C0 by the integrated Michaelis–Menten equation, Newton in y = ln C (monotone from ln C0). */
export function mmConcentration(p: MmModel, c0: number, t: number): number {
  const v = p.vmax / p.volume;
  if (t <= 0) return c0;
  let y = Math.log(c0);
  for (let i = 0; i < 200; i++) {
    const c = Math.exp(y);
    const g = p.km * (Math.log(c0) - y) + (c0 - c) - v * t;
    const step = g / (p.km + c);
    y += step;
    if (Math.abs(step) <= 1e-15 * Math.max(1, Math.abs(y))) break;
  }
  return Math.exp(y);
}

/** ∫C dt while C falls from ca to cb. */
export function mmAuc(p: MmModel, ca: number, cb: number): number {
  return ((ca - cb) * (p.km + 0.5 * (ca + cb))) / (p.vmax / p.volume);
}

/**
 * Steady state in closed form (the integrated equation over one cycle, from the trough Ct to
 * Ct + D/V and back: Ct = (D/V)/(e^{(τ − D/Vmax)(Vmax/V)/Km} − 1)), and the approach by
 * iterating the cycle map from empty: cycle after cycle, troughs by the integrated equation.
 * Returns time90/time95 as Infinity when they need more than `maxCycles` cycles.
 */
export function mmReference(
  p: MmModel,
  maxCycles = 1e6,
): SteadyReference & { cycles90: number; cycles95: number; slope90: number; slope95: number } {
  const rise = p.dose / p.volume;
  const v = p.vmax / p.volume;
  const trough = rise / Math.expm1(((p.period - p.dose / p.vmax) * v) / p.km);
  const auc = mmAuc(p, trough + rise, trough);
  const troughs = [0];
  /** W'(t) = C(t) − C(t − τ) at the crossing: how sharply the time is fixed by W. */
  const timeTo = (f: number): { time: number; cycle: number; slope: number } => {
    const level = f * auc;
    for (let n = 1; n <= maxCycles; n++) {
      while (troughs.length <= n) {
        const c0 = troughs[troughs.length - 1] + rise;
        troughs.push(mmConcentration(p, c0, p.period));
      }
      const start = troughs[n - 1] + rise;
      if (mmAuc(p, start, troughs[n]) < level) continue;
      // W(t) for t = (n − 1)τ + s: the rest of cycle n − 1 from s on, plus cycle n up to s.
      const previous = n > 1 ? troughs[n - 2] + rise : null;
      const w = (s: number) => {
        const now = mmAuc(p, start, mmConcentration(p, start, s));
        if (previous === null) return now;
        return now + mmAuc(p, mmConcentration(p, previous, s), troughs[n - 1]);
      };
      let [lo, hi] = [0, p.period];
      for (let i = 0; i < 100 && hi - lo > 1e-15 * p.period; i++) {
        const mid = 0.5 * (lo + hi);
        if (w(mid) >= level) hi = mid;
        else lo = mid;
      }
      const slope = mmConcentration(p, start, hi) - (previous === null ? 0 : mmConcentration(p, previous, hi));
      return { time: (n - 1) * p.period + hi, cycle: n, slope };
    }
    return { time: Infinity, cycle: Infinity, slope: NaN };
  };
  const t90 = timeTo(0.9);
  const t95 = timeTo(0.95);
  return { trough, peak: trough + rise, auc, time90: t90.time, time95: t95.time, cycles90: t90.cycle, cycles95: t95.cycle, slope90: t90.slope, slope95: t95.slope };
}
