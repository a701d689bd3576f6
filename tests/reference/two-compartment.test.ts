/**
 * Two-compartment IV bolus against the bi-exponential closed form built from the
 * micro-constants (Gibaldi & Perrier, Pharmacokinetics, 2nd ed., ch. 2 — chapter from memory).
 */
import { describe, expect, it } from 'vitest';
import { amount, concentration, expectWithin, figures, rel, rowsOf, run, worstError } from './helpers.ts';

/** Exact path: scaled Padé matrix exponential, error a few ulps per propagation (see one-compartment tests). */
const EXACT = 1e-12;

describe('two-compartment IV bolus from micro-constants', () => {
  // Fictional "dravenide": 600 mg IV bolus into V1 = 15 L; k10 = 0.3, k12 = 0.8, k21 = 0.25 1/h.
  const D = 600;
  const V1 = 15;
  const k10 = 0.3;
  const k12 = 0.8;
  const k21 = 0.25;
  // α, β = ½[(k12 + k21 + k10) ± √((k12 + k21 + k10)² − 4·k21·k10)] (G&P ch. 2).
  const sum = k12 + k21 + k10;
  const root = Math.sqrt(sum * sum - 4 * k21 * k10);
  const alpha = 0.5 * (sum + root);
  const beta = 0.5 * (sum - root);
  // C(t) = (D/V1)[((α − k21)/(α − β))e^{−αt} + ((k21 − β)/(α − β))e^{−βt}] (G&P ch. 2).
  const central = (t: number) =>
    (D / V1) * (((alpha - k21) / (alpha - beta)) * Math.exp(-alpha * t) + ((k21 - beta) / (alpha - beta)) * Math.exp(-beta * t));
  // Amount in the peripheral compartment: D·k12/(α − β)·(e^{−βt} − e^{−αt}) (G&P ch. 2), with the
  // difference written as expm1(−βt) − expm1(−αt) so that it keeps its digits just after the dose.
  const peripheral = (t: number) => ((D * k12) / (alpha - beta)) * (Math.expm1(-beta * t) - Math.expm1(-alpha * t));

  const scenario = (method: string, rtol?: number) => ({
    title: 'Dravenide 600 mg IV bolus',
    compartments: [
      { id: 'central', label: 'Plasma', volume: `${V1} L` },
      { id: 'tissue', label: 'Peripheral tissue' },
    ],
    transfers: [
      { from: 'central', to: 'tissue', k: `${k12} 1/h` },
      { from: 'tissue', to: 'central', k: `${k21} 1/h` },
      { from: 'central', k: `${k10} 1/h` },
    ],
    doses: [{ into: 'central', amount: `${D} mg`, at: '1 h' }],
    output: { end: '49 h', step: '10 min' },
    solver: { method, ...(rtol ? { rtol } : {}) },
  });
  const after = (t: number) => Math.max(0, t - 1); // the dose is given at 1 h
  const result = run(scenario('auto'));

  it('follows the bi-exponential curve in plasma and the peripheral amount', () => {
    expect(result.diagnostics.path).toBe('exact');
    const rows = rowsOf(result);
    // Before the dose (t < 1 h, and the 'before' row at 1 h) everything is zero.
    const c = worstError(rows, concentration(result, 'central'), (r) => (r.t < 1 || (r.t === 1 && r.side === 'before') ? 0 : central(after(r.t))));
    expectWithin(c.error, EXACT, 'two-compartment plasma curve');
    const p = worstError(rows, amount(result, 'tissue'), (r) => (r.t <= 1 ? 0 : peripheral(after(r.t))));
    expectWithin(p.error, EXACT, 'two-compartment peripheral amount');
  });

  it('reports eigenvalues −α, −β and the terminal half-life ln2/β', () => {
    const d = result.diagnostics.disposition;
    expect(d.basis).toBe('exact');
    const re = d.eigenvalues.map((e) => e.re).sort((a, b) => a - b);
    expect(d.eigenvalues.every((e) => e.im === 0)).toBe(true);
    // The compartment matrix has eigenvalues −α and −β, the hybrid rate constants (G&P ch. 2).
    // A 2×2 eigenproblem is solved to a few ulps of the matrix norm (≈ 1.35 here).
    expectWithin(rel(re[0], -alpha), EXACT, 'two-compartment eigenvalue −α');
    expectWithin(rel(re[1], -beta), EXACT, 'two-compartment eigenvalue −β');
    // Terminal half-life ln2/β (G&P ch. 2; Rowland & Tozer, 4th ed., ch. 19 — chapter from memory).
    expect(d.terminalHalfLife).not.toBeNull();
    expectWithin(rel(d.terminalHalfLife as number, Math.LN2 / beta), EXACT, 'two-compartment terminal half-life');
    const halfLives = d.halfLives.filter((h): h is number => h !== null).sort((a, b) => a - b);
    expectWithin(rel(halfLives[0], Math.LN2 / alpha), EXACT, 'two-compartment distribution half-life');
  });

  it('reports AUC∞ = D/(V1·k10) over a long follow-up', () => {
    const long = run({ ...scenario('auto'), output: { end: 601, step: 10 } });
    // AUC∞ = D/CL with CL = k10·V1 (G&P ch. 2). The engine's AUC over 600 h after the dose is compared
    // with the integral of the bi-exponential over that span; that integral equals D/(V1·k10) up to the
    // tail e^{−β·600} ≈ 7e-16 (β ≈ 0.058 1/h), which checks the closed form itself.
    const T = 600;
    const A = ((D / V1) * (alpha - k21)) / (alpha - beta);
    const B = ((D / V1) * (k21 - beta)) / (alpha - beta);
    const partial = (A / alpha) * (1 - Math.exp(-alpha * T)) + (B / beta) * (1 - Math.exp(-beta * T));
    expectWithin(rel(partial, D / (V1 * k10)), 1e-11, 'bi-exponential AUC identity'); // the formula itself
    expectWithin(rel(figures(long, 'central').overall.auc, partial), EXACT, 'two-compartment AUC');
  });

  it.each([
    ['dopri5', 1e-9],
    ['rosenbrock', 1e-9],
  ])('the %s path follows the same curve to its tolerance (rtol %s)', (method, rtol) => {
    const r = run(scenario(method, rtol));
    expect(r.diagnostics.path).toBe('adaptive');
    // Local error ≤ rtol per step; the project's integrator tests hold global and dense-output errors
    // to 10·tol (tests/numerics/adaptive.test.ts). Measured against the peak concentration D/V1.
    const rows = rowsOf(r);
    const c = worstError(
      rows,
      concentration(r, 'central'),
      (row) => (row.t < 1 || (row.t === 1 && row.side === 'before') ? 0 : central(after(row.t))),
      D / V1,
    );
    expectWithin(c.error, 10 * rtol, `two-compartment ${method} plasma curve`);
  });
});
