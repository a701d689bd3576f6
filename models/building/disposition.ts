/**
 * Eigenvalues of the compartment matrix and the half-lives they imply. For a linear
 * model every amount is a sum of exponentials e^{λt}; the terminal half-life comes from
 * the eigenvalue closest to zero. A saturable model is linearised at zero concentration,
 * where Michaelis–Menten elimination behaves as first order with rate Vmax/(Km·V).
 */
import { eigenvalues } from '../solving/linalg/eigenvalues.ts';
import type { CompartmentSystem } from './system.ts';

export interface Disposition {
  /** 'exact' for linear models; 'linearised' at zero concentration for saturable ones. */
  basis: 'exact' | 'linearised';
  eigenvalues: { re: number; im: number }[];
  /** ln 2 / |Re λ| per eigenvalue (null for λ = 0: no way out of that mode). */
  halfLives: (number | null)[];
  /** Half-life of the slowest mode; null when some amount never leaves the body. */
  terminalHalfLife: number | null;
  /** Fastest rate |λ| of the model (sets the stability limit of explicit fixed steps). */
  fastestRate: number;
}

export function disposition(system: CompartmentSystem): Disposition {
  const nc = system.layout.compartments;
  const n = system.dimension;
  const jac = new Float64Array(n * n);
  system.jacobian(0, new Float64Array(n), jac);
  const block = new Float64Array(nc * nc);
  for (let i = 0; i < nc; i++) for (let j = 0; j < nc; j++) block[i * nc + j] = jac[i * n + j];
  let ev: { re: Float64Array; im: Float64Array };
  try {
    ev = eigenvalues(block, nc);
  } catch {
    // The QR iteration did not converge (pathological rates): report no eigenvalues rather than fail the run.
    return { basis: system.linear ? 'exact' : 'linearised', eigenvalues: [], halfLives: [], terminalHalfLife: null, fastestRate: fallbackRate(block, nc) };
  }
  const scale = Math.max(1e-300, ...Array.from(ev.re, Math.abs));
  const values = Array.from(ev.re, (re, i) => ({ re, im: ev.im[i] }));
  const halfLives = values.map((v) => (Math.abs(v.re) <= 1e-12 * scale ? null : Math.LN2 / Math.abs(v.re)));
  const slowest = values[0];
  return {
    basis: system.linear ? 'exact' : 'linearised',
    eigenvalues: values,
    halfLives,
    terminalHalfLife: slowest && halfLives[0] !== null && slowest.re < 0 ? halfLives[0] : null,
    fastestRate: Math.max(...values.map((v) => Math.hypot(v.re, v.im))),
  };
}

/** Gershgorin bound on the fastest rate when eigenvalues are not available. */
function fallbackRate(block: Float64Array, n: number): number {
  let bound = 0;
  for (let i = 0; i < n; i++) {
    let row = 0;
    for (let j = 0; j < n; j++) row += Math.abs(block[i * n + j]);
    bound = Math.max(bound, row);
  }
  return bound;
}
