/**
 * The mass balance of a run, dosed = remaining + eliminated, and the check that refuses a
 * result whose balance fails. Every path here (the matrix exponential, Runge–Kutta and
 * Rosenbrock steps with the analytic Jacobian, the two-step multistep method) preserves
 * linear invariants exactly up to rounding (Hairer, Lubich & Wanner, Geometric Numerical
 * Integration, 2nd ed., Thm. IV.1.5), and the amount eliminated is integrated as a state; so
 * the balance holds to rounding whatever the tolerance, and a failure beyond rounding means
 * the arithmetic itself broke down (rates or volumes outside what doubles resolve).
 */
import type { Model } from '../building/model.ts';
import type { Problem } from '../scenario/problems.ts';
import type { StateLayout } from '../building/system.ts';

export interface MassBalance {
  /** Amount that has arrived by the end (bioavailable amounts; infusions pro rata). */
  dosed: number;
  /** Amount in the body at the end. */
  remaining: number;
  /** Amount eliminated by the end. */
  eliminated: number;
  /** |dosed − remaining − eliminated| / dosed. */
  relativeError: number;
}

/**
 * Largest relative error accepted. Measured on every sample with every method at rtol 1e-4
 * to 1e-10 and fixed steps of 0.01 h: at most 1.2e-13. 1e-9 leaves room for the rounding of
 * millions of steps and still catches any failure that matters to a figure.
 */
export const massBalanceTolerance = 1e-9;

export function massBalance(model: Model, layout: StateLayout, final: Float64Array): MassBalance {
  let dosed = 0;
  for (const a of model.administrations) {
    if (a.arrival >= model.end) continue;
    dosed += a.duration === 0 ? a.amount : (a.amount * Math.min(a.duration, model.end - a.arrival)) / a.duration;
  }
  let remaining = 0;
  for (let i = 0; i < layout.compartments; i++) remaining += final[i];
  const eliminated = final[layout.eliminated];
  const residual = Math.abs(dosed - remaining - eliminated);
  return { dosed, remaining, eliminated, relativeError: dosed > 0 ? residual / dosed : residual };
}

function short(v: number): string {
  const a = Math.abs(v);
  return a !== 0 && Number.isFinite(a) && (a >= 1e6 || a < 1e-4) ? v.toExponential(3) : Number(v.toPrecision(4)).toString();
}

/** The transfer whose rate (per unit time, times the span) is the most extreme, with its path and words. */
function mostExtremeRate(model: Model): { path: string; words: string; stiffness: number } | null {
  let best: { path: string; words: string; stiffness: number } | null = null;
  const span = model.end - model.start;
  const t = model.units.time;
  model.transfers.forEach((tr, i) => {
    const from = model.compartments[tr.from];
    const volume = from.volume;
    let rate: number;
    let words: string;
    let path = `transfers[${i}]`;
    if (tr.kinetics.kind === 'first-order') {
      rate = tr.kinetics.k;
      if (tr.kinetics.clearance !== null && volume !== null) {
        path += '.cl';
        words = `a clearance of ${short(tr.kinetics.clearance)} ${model.units.volume}/${t} out of '${from.id}' (volume ${short(volume)} ${model.units.volume}) is a rate constant of ${short(rate)} 1/${t}`;
      } else {
        path += '.k';
        words = `the rate constant ${short(rate)} 1/${t} out of '${from.id}'`;
      }
    } else {
      // A saturable way out is fastest at low concentration, where its rate is Vmax/(Km·V).
      rate = volume === null ? 0 : tr.kinetics.vmax / (tr.kinetics.km * volume);
      path += '.vmax';
      words = `Vmax/(Km·V) out of '${from.id}' is a rate constant of ${short(rate)} 1/${t}`;
    }
    const stiffness = rate * span;
    if (best === null || stiffness > best.stiffness) best = { path, words, stiffness };
  });
  return best;
}

/** The dose line with the largest amount, for a sum of doses that overflows. */
function largestDoseLine(model: Model): number {
  let line = 0;
  let largest = -Infinity;
  for (const l of model.doseLines) {
    if (l.nominal > largest) {
      largest = l.nominal;
      line = l.line;
    }
  }
  return line;
}

/**
 * A problem when the balance is not finite or fails beyond rounding, naming the field that
 * most likely causes it; null when the balance holds.
 */
export function massBalanceProblem(model: Model, balance: MassBalance): Problem | null {
  const a = model.units.amount;
  if (![balance.dosed, balance.remaining, balance.eliminated].every(Number.isFinite)) {
    return {
      path: `doses[${largestDoseLine(model)}].amount`,
      message: `the amounts overflow double-precision arithmetic (dosed ${short(balance.dosed)} ${a}, remaining ${short(balance.remaining)} ${a}, eliminated ${short(balance.eliminated)} ${a}); no figure of this run can be trusted — give the amounts in a larger unit or check them`,
    };
  }
  if (balance.relativeError <= massBalanceTolerance) return null;
  const measured = `the mass balance fails: dosed ${short(balance.dosed)} ${a}, but ${short(balance.remaining)} ${a} remain and ${short(balance.eliminated)} ${a} were eliminated (relative error ${balance.relativeError.toExponential(2)}, where rounding gives below ${massBalanceTolerance})`;
  const extreme = mostExtremeRate(model);
  // Over a span of 1e9 time constants or more the fast mode is gone long before the first
  // step ends; that is where the exponential's scaling and squaring loses the slow modes.
  if (extreme && extreme.stiffness > 1e9) {
    return {
      path: extreme.path,
      message: `${measured}. ${extreme.words[0].toUpperCase()}${extreme.words.slice(1)}, ${short(extreme.stiffness)} times the simulated span: too fast to resolve beside the model's other rates in double precision, so the run is refused; check this value and its volume`,
    };
  }
  return { path: 'solver', message: `${measured}; the run is refused — try method 'auto' or a tighter tolerance, and check the model's extreme values` };
}
