/**
 * The loading dose: one first dose, in place of the first maintenance dose, that brings the first
 * trough to the steady-state trough of the maintenance regimen, so the first interval starts
 * where the regimen ends up.
 * - Linear model: the closed form, loading = maintenance × accumulation ratio R (Gibaldi & Perrier,
 *   Pharmacokinetics, from memory; R = 1/(1 − e^{−kτ}) for one compartment), R taken as the
 *   steady-state trough over the first trough from empty — that ratio for one compartment, with
 *   bolus doses or infusions, and for any linear model the amount whose first trough is the
 *   steady-state trough, since the first trough is proportional to the first dose; verified by simulation.
 * - Saturable model: no such ratio holds, so the first trough is bisected on simulation: it
 *   rises with the dose (compartment systems are cooperative), so the root is bracketed by
 *   doubling and halved down to LOADING_RTOL.
 * The amount is then rounded onto the strengths' sums by propose.rounding.
 */

/** Relative width to which a saturable model's loading dose is bisected: well below any strength step. */
export const LOADING_RTOL = 1e-4;

/** Gibaldi & Perrier's loading dose (from memory): the maintenance dose times the accumulation ratio. */
export function closedFormLoading(maintenance: number, accumulationRatio: number): number {
  return maintenance * accumulationRatio;
}

/**
 * The amount L with firstTrough(L) = target, firstTrough increasing from firstTrough(0) = 0:
 * bracketed from `guess` by doubling (at most 40 times), then bisected to LOADING_RTOL.
 * Returns null when no bracket is found.
 */
export function bisectLoading(firstTrough: (amount: number) => number, target: number, guess: number): { amount: number; evaluations: number } | null {
  let evaluations = 0;
  const f = (x: number) => {
    evaluations++;
    return firstTrough(x);
  };
  let lo = 0;
  let hi = guess;
  for (let i = 0; f(hi) < target; i++) {
    if (i >= 40) return null;
    lo = hi;
    hi *= 2;
  }
  while (hi - lo > LOADING_RTOL * hi) {
    const mid = 0.5 * (lo + hi);
    if (f(mid) < target) lo = mid;
    else hi = mid;
  }
  return { amount: 0.5 * (lo + hi), evaluations };
}
