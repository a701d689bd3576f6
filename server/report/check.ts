/**
 * The check of a result: the same scenario solved a second time by an independent path,
 * and the largest difference in concentration between the two at the reported times.
 *
 * - Linear model solved exactly (matrix exponential) → checked by adaptive DOP853 at
 *   rtol 1e-10, atol 1e-12: a different algorithm whose error is far below the printed digits.
 * - Linear model solved numerically → checked by the exact path.
 * - Saturable model → the adaptive method again at a tolerance 100× tighter (capped at the
 *   tightest the schema accepts, 1e-13); when the run used the Rosenbrock method alone the
 *   check uses the explicit DOP853 instead, so the two runs share no code path.
 *   A fixed-step run is checked by the adaptive method at rtol 1e-10.
 */
import type { SimulationResult } from '../../models/simulate.ts';
import { simulate } from '../../models/simulate.ts';
import type { SolverMethod } from '../../models/scenario/schema.ts';

export interface CheckSettings {
  method: SolverMethod;
  rtol: number;
  atol: number;
  /** Plain-words account of why this path was chosen. */
  why: string;
}

export interface CheckOutcome {
  settings: CheckSettings;
  /** The second solution, or the problems that stopped it. */
  ok: boolean;
  problems: string[];
  result: SimulationResult | null;
  /** Largest |c₁ − c₂| over all compartments with a volume and all reported times. */
  maxAbsolute: number;
  /** maxAbsolute relative to the largest concentration of its compartment (Cmax). */
  maxRelativeToCmax: number;
  /** Where the largest relative difference occurs. */
  at: { compartment: string; time: number } | null;
  /** Relative difference of the overall AUC (largest over compartments). */
  aucRelative: number;
  /** Largest |a₁ − a₂| of the amounts, over every compartment (depots included), relative to that compartment's largest amount. */
  amountRelative: number;
}

const tightest = 1e-13;

export function checkSettings(result: SimulationResult, scenario: Record<string, unknown>, linear: boolean): CheckSettings {
  const d = result.diagnostics;
  if (d.path === 'exact') {
    return { method: 'dop853', rtol: 1e-10, atol: 1e-12, why: 'linear model solved exactly; checked by adaptive Dormand–Prince 8(5,3) integration at tight tolerance' };
  }
  if (linear) {
    return { method: 'exact', rtol: 1e-10, atol: 1e-12, why: 'linear model solved numerically; checked by the exact matrix-exponential solution' };
  }
  if (d.path === 'fixed') {
    return { method: 'auto', rtol: 1e-10, atol: 1e-12, why: 'fixed-step run of a saturable model; checked by the adaptive method at rtol 1e-10' };
  }
  const rtol = Math.max(tightest, (d.rtol ?? 1e-8) / 100);
  const atol = Math.max(1e-300, (d.atol ?? 1e-10) / 100);
  const onlyRosenbrock = d.methodsUsed.length > 0 && d.methodsUsed.every((m) => /rodas|rosenbrock/i.test(m));
  const requested = (scenario.solver as { method?: string } | undefined)?.method;
  if (onlyRosenbrock || requested === 'rosenbrock') {
    return { method: 'dop853', rtol, atol, why: 'saturable model solved by the Rosenbrock method; checked by explicit Dormand–Prince 8(5,3) at a tighter tolerance' };
  }
  const factor = (d.rtol ?? 1e-8) / rtol;
  return {
    method: 'auto',
    rtol,
    atol,
    why: `saturable model; checked by the adaptive method at a ${factor >= 99.5 ? '100×' : `${Number(factor.toPrecision(2))}× (the tightest accepted)`} tighter tolerance`,
  };
}

export function independentCheck(scenario: Record<string, unknown>, result: SimulationResult, linear: boolean): CheckOutcome {
  const settings = checkSettings(result, scenario, linear);
  // The check's own settings: no fixed step, and a step budget of its own — generous next to
  // the first run's work, bounded so that a check too costly to finish is reported as such
  // rather than running into the server's time budget.
  const solver = { ...((scenario.solver as Record<string, unknown> | undefined) ?? {}) };
  delete solver.step;
  const d = result.diagnostics;
  const maxSteps = Math.min(50_000_000, Math.max(1_000_000, 50 * (d.acceptedSteps + d.rejectedSteps)));
  const second = simulate({ ...scenario, solver: { ...solver, method: settings.method, rtol: settings.rtol, atol: settings.atol, maxSteps } });
  const empty = { settings, maxAbsolute: NaN, maxRelativeToCmax: NaN, at: null, aucRelative: NaN, amountRelative: NaN };
  if (!second.ok) return { ...empty, ok: false, problems: second.problems.map((p) => `${p.path}: ${p.message}`), result: null };
  const other = second.value;
  if (other.times.length !== result.times.length || other.times.some((t, i) => t !== result.times[i])) {
    return { ...empty, ok: false, problems: ['the second solution was reported at different times'], result: other };
  }
  let maxAbsolute = 0;
  let maxRelative = 0;
  let at: CheckOutcome['at'] = null;
  let aucRelative = 0;
  let amountRelative = 0;
  result.compartments.forEach((s, k) => {
    const a1 = s.amount;
    const a2 = other.compartments[k].amount;
    let peak = 0;
    for (let i = 0; i < a1.length; i++) peak = Math.max(peak, Math.abs(a1[i]));
    for (let i = 0; i < a1.length; i++) amountRelative = Math.max(amountRelative, Math.abs(a1[i] - a2[i]) / (peak || 1));
    const c1 = s.concentration;
    const c2 = other.compartments[k].concentration;
    const figures1 = result.metrics.compartments.find((f) => f.compartment === s.id);
    const figures2 = other.metrics.compartments.find((f) => f.compartment === s.id);
    if (!c1 || !c2 || !figures1 || !figures2) return;
    const cmax = figures1.overall.cmax;
    for (let i = 0; i < c1.length; i++) {
      const diff = Math.abs(c1[i] - c2[i]);
      if (diff > maxAbsolute) maxAbsolute = diff;
      const rel = cmax > 0 ? diff / cmax : diff;
      if (at === null || rel > maxRelative) {
        maxRelative = Math.max(maxRelative, rel);
        at = { compartment: s.id, time: result.times[i] };
      }
    }
    const auc1 = figures1.overall.auc;
    const auc2 = figures2.overall.auc;
    if (auc1 > 0) aucRelative = Math.max(aucRelative, Math.abs(auc1 - auc2) / auc1);
  });
  return { settings, ok: true, problems: [], result: other, maxAbsolute, maxRelativeToCmax: maxRelative, at, aucRelative, amountRelative };
}

/** How far the printed numbers can be trusted, in words, from the relative difference. */
export function verdict(check: CheckOutcome): string {
  if (!check.ok) return 'The check could not be completed, so the accuracy of the figures is not confirmed.';
  // With no concentration to compare (amounts only), the amounts decide.
  const r = check.at === null ? check.amountRelative : Math.max(check.maxRelativeToCmax, check.amountRelative);
  if (r <= 5e-6) return 'The two solutions agree far beyond the four significant digits printed: the figures are limited by the parameters entered, not by the arithmetic.';
  if (r <= 5e-4) return 'The two solutions agree to better than the printed fourth digit would show for the peak; the last printed digit of small values may differ.';
  if (r <= 1e-2) return 'The two solutions differ by up to about 1% of Cmax: read the figures to two or three digits only, or tighten the tolerance (smaller rtol) or step.';
  return 'The two solutions differ by more than 1% of Cmax: the figures are not reliable with these solver settings. Use method "auto", or a smaller step or tolerance.';
}
