/**
 * Independent reference for the linear model: superposition of single-dose closed forms.
 *
 * After one bolus D into the gut depot, each amount is a sum of exponentials
 * a(τ) = Σᵢ cᵢ·e^{λᵢτ} over the eigenvalues λᵢ of the 3×3 rate matrix K (mathjs eigs).
 * The coefficients follow from the derivatives at τ = 0, a⁽ᵐ⁾(0) = (Kᵐ·x₀)_c for
 * m = 0, 1, 2 — a Vandermonde system Σᵢ cᵢ·λᵢᵐ = (Kᵐ·x₀)_c — the standard way to get the
 * macro-constants of a polyexponential (Gibaldi & Perrier, Pharmacokinetics, 2nd ed.,
 * ch. 2–3: sums of exponentials with coefficients from the initial conditions). Repeated
 * doses are summed (linearity). As a further check of the single-dose form, it is compared
 * with mathjs expm(K·τ)·x₀ at a few τ.
 */
import { eigs, expm, lusolve, matrix, multiply } from 'mathjs';
import { halvexin, rates } from './scenario.ts';

/** Rate matrix of the amounts (gut, central, peripheral): x' = K·x. */
export function rateMatrix(): number[][] {
  const { ka, k10, k12, k21 } = rates;
  return [
    [-ka, 0, 0],
    [ka, -(k10 + k12), k21],
    [0, k12, -k21],
  ];
}

export interface SingleDose {
  lambdas: number[];
  /** coefficients[c][i]: compartment c, exponential i (per mg arriving in the gut). */
  coefficients: number[][];
}

function asReal(v: unknown): number {
  if (typeof v === 'number') return v;
  if (v !== null && typeof v === 'object' && 're' in v && 'im' in v) {
    const z = v as { re: number; im: number };
    if (Math.abs(z.im) > 1e-12 * Math.abs(z.re)) throw new Error(`complex eigenvalue ${z.re} + ${z.im}i`);
    return z.re;
  }
  throw new Error(`unexpected eigenvalue ${String(v)}`);
}

export function singleDose(): SingleDose {
  const k = rateMatrix();
  const values = eigs(k, { eigenvectors: false }).values;
  const lambdas = (Array.isArray(values) ? values : (values.toArray() as unknown[])).map(asReal);
  // Moments Kᵐ·x₀ for x₀ = e_gut (1 mg).
  const x0 = [1, 0, 0];
  const x1 = multiply(k, x0) as number[];
  const x2 = multiply(k, x1) as number[];
  const vandermonde = [lambdas.map(() => 1), lambdas, lambdas.map((l) => l * l)];
  const coefficients = [0, 1, 2].map((c) => {
    const sol = lusolve(vandermonde, [x0[c], x1[c], x2[c]]) as number[][];
    return sol.map((row) => row[0]);
  });
  return { lambdas, coefficients };
}

/** Amounts after 1 mg into the gut, τ ≥ 0. */
export function singleDoseAmounts(sd: SingleDose, tau: number): number[] {
  return sd.coefficients.map((cs) => cs.reduce((s, c, i) => s + c * Math.exp(sd.lambdas[i] * tau), 0));
}

/** Largest relative difference between the tri-exponential single dose and mathjs expm(K·τ)·x₀. */
export function singleDoseVsExpm(sd: SingleDose, taus: number[]): number {
  const k = rateMatrix();
  let worst = 0;
  for (const tau of taus) {
    const phi = expm(matrix(k.map((row) => row.map((v) => v * tau)))).toArray() as number[][];
    const ours = singleDoseAmounts(sd, tau);
    for (let c = 1; c < 3; c++) worst = Math.max(worst, Math.abs(ours[c] - phi[c][0]) / Math.abs(phi[c][0]));
  }
  return worst;
}

/** Dose arrival times and amounts of the benchmark regimen. */
export function doseTimes(): { times: number[]; amount: number } {
  const times = Array.from({ length: halvexin.count }, (_, j) => j * halvexin.every).filter((t) => t < halvexin.end);
  return { times, amount: halvexin.dose * halvexin.bioavailability };
}

/**
 * Amounts (gut, central, peripheral) at t by superposition; side 0 leaves out a dose
 * arriving exactly at t (the value just before it), side 1 includes it.
 */
export function superposed(sd: SingleDose, t: number, side: 0 | 1): number[] {
  const { times, amount } = doseTimes();
  const out = [0, 0, 0];
  for (const td of times) {
    if (td > t || (td === t && side === 0)) break;
    const a = singleDoseAmounts(sd, t - td);
    for (let c = 0; c < 3; c++) out[c] += amount * a[c];
  }
  return out;
}
