/**
 * Builds the ODE system of a compartment model once per scenario. The state holds the
 * amount in each compartment, then the running AUC of each compartment with a volume
 * (dAUC/dt = A/V, integrated with the amounts rather than by trapezoids afterwards), then
 * the cumulative amount eliminated from the body (for the mass balance).
 */
import type { Model } from './model.ts';
import type { DerivativeCode, OdeSystem } from '../solving/numerics/ode-system.ts';

export interface StateLayout {
  /** Number of compartments; amounts occupy indices 0..compartments-1. */
  compartments: number;
  /** State index of each compartment's AUC, or -1 for a compartment without a volume. */
  auc: Int32Array;
  /** State index of the cumulative amount eliminated. */
  eliminated: number;
  size: number;
}

export function stateLayout(model: Model): StateLayout {
  const n = model.compartments.length;
  const auc = new Int32Array(n).fill(-1);
  let next = n;
  model.compartments.forEach((c, i) => {
    if (c.volume !== null) auc[i] = next++;
  });
  return { compartments: n, auc, eliminated: next, size: next + 1 };
}

/**
 * y' = L·y + MM(y) + u: L the first-order part (sparse), MM the saturable fluxes,
 * u the zero-order infusion rates in force (set by the driver between events).
 */
export class CompartmentSystem implements OdeSystem {
  readonly dimension: number;
  readonly layout: StateLayout;
  /** Current infusion rate into each state (only amount entries are ever non-zero). */
  readonly input: Float64Array;
  /** The first-order part as a dense row-major matrix (for the exact path and the Jacobian). */
  readonly linearMatrix: Float64Array;
  readonly linear: boolean;
  /** The first-order part row by row (compressed sparse rows): row i is entries rowStart[i]..rowStart[i+1). */
  private readonly rowStart: Int32Array;
  private readonly cols: Int32Array;
  private readonly vals: Float64Array;
  private readonly mmFrom: Int32Array;
  private readonly mmTo: Int32Array;
  private readonly mmVmax: Float64Array;
  private readonly mmKm: Float64Array;
  private readonly mmInvVolume: Float64Array;
  /** The derivative as straight-line code for the compiled step kernels; built on first use. */
  private straightLine: DerivativeCode | null = null;

  constructor(model: Model) {
    const layout = stateLayout(model);
    const n = layout.size;
    this.layout = layout;
    this.dimension = n;
    this.input = new Float64Array(n);
    const m = new Float64Array(n * n);
    const saturable: { from: number; to: number; vmax: number; km: number; invV: number }[] = [];
    for (const t of model.transfers) {
      const target = t.to ?? layout.eliminated;
      if (t.kinetics.kind === 'first-order') {
        const k = t.kinetics.k;
        m[t.from * n + t.from] -= k;
        m[target * n + t.from] += k;
      } else {
        const volume = model.compartments[t.from].volume ?? 1;
        saturable.push({ from: t.from, to: target, vmax: t.kinetics.vmax, km: t.kinetics.km, invV: 1 / volume });
      }
    }
    model.compartments.forEach((c, i) => {
      if (c.volume !== null) m[layout.auc[i] * n + i] += 1 / c.volume;
    });
    this.linearMatrix = m;
    this.linear = saturable.length === 0;

    const entries: number[] = [];
    this.rowStart = new Int32Array(n + 1);
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) if (m[i * n + j] !== 0) entries.push(i * n + j);
      this.rowStart[i + 1] = entries.length;
    }
    this.cols = Int32Array.from(entries, (e) => e % n);
    this.vals = Float64Array.from(entries, (e) => m[e]);
    this.mmFrom = Int32Array.from(saturable, (s) => s.from);
    this.mmTo = Int32Array.from(saturable, (s) => s.to);
    this.mmVmax = Float64Array.from(saturable, (s) => s.vmax);
    this.mmKm = Float64Array.from(saturable, (s) => s.km);
    this.mmInvVolume = Float64Array.from(saturable, (s) => s.invV);
  }

  derivative(_t: number, y: Float64Array, out: Float64Array): void {
    const n = this.dimension;
    const input = this.input;
    const start = this.rowStart;
    const cols = this.cols;
    const vals = this.vals;
    for (let i = 0; i < n; i++) {
      let s = input[i];
      for (let e = start[i]; e < start[i + 1]; e++) s += vals[e] * y[cols[e]];
      out[i] = s;
    }
    for (let s = 0; s < this.mmFrom.length; s++) {
      const from = this.mmFrom[s];
      // Amounts a hair below zero (solver noise) must not drive a saturable flux backwards.
      const c = Math.max(0, y[from] * this.mmInvVolume[s]);
      const flux = (this.mmVmax[s] * c) / (this.mmKm[s] + c);
      out[from] -= flux;
      out[this.mmTo[s]] += flux;
    }
  }

  /**
   * derivative() written out for this model's sparsity: parameters are read from p
   * (the sparse values, then Vmax, Km and 1/V of each saturable flux), so models of the
   * same shape share one compiled kernel whatever their values.
   */
  get code(): DerivativeCode {
    if (this.straightLine) return this.straightLine;
    const n = this.dimension;
    const sat = this.mmFrom.length;
    const params = new Float64Array(this.vals.length + 3 * sat);
    params.set(this.vals);
    const base = this.vals.length;
    for (let s = 0; s < sat; s++) {
      params[base + 3 * s] = this.mmVmax[s];
      params[base + 3 * s + 1] = this.mmKm[s];
      params[base + 3 * s + 2] = this.mmInvVolume[s];
    }
    const { rowStart, cols, mmFrom, mmTo } = this;
    this.straightLine = {
      shape: `compartments:${n}|rows:${rowStart.join(',')}|cols:${cols.join(',')}|saturable:${mmFrom.join(',')}>${mmTo.join(',')}`,
      params,
      input: this.input,
      emit(y, f) {
        const lines: string[] = [];
        for (let i = 0; i < n; i++) {
          let expr = `u[${i}]`;
          for (let e = rowStart[i]; e < rowStart[i + 1]; e++) expr += ` + p[${e}] * ${y(cols[e])}`;
          lines.push(`let ${f(i)} = ${expr};`);
        }
        for (let s = 0; s < sat; s++) {
          const at = base + 3 * s;
          lines.push(
            `{ const c = Math.max(0, ${y(mmFrom[s])} * p[${at + 2}]); const flux = (p[${at}] * c) / (p[${at + 1}] + c); ` +
              `${f(mmFrom[s])} -= flux; ${f(mmTo[s])} += flux; }`,
          );
        }
        return lines.join('\n');
      },
    };
    return this.straightLine;
  }

  jacobian(_t: number, y: Float64Array, out: Float64Array): void {
    const n = this.dimension;
    out.set(this.linearMatrix);
    for (let s = 0; s < this.mmFrom.length; s++) {
      const from = this.mmFrom[s];
      const invV = this.mmInvVolume[s];
      const c = y[from] * invV;
      if (c < 0) continue;
      const km = this.mmKm[s];
      const d = (this.mmVmax[s] * km * invV) / ((km + c) * (km + c));
      out[from * n + from] -= d;
      out[this.mmTo[s] * n + from] += d;
    }
  }

  /** Largest first-order rate out of any compartment plus the saturable ones at zero concentration (Vmax/(Km·V)): the fastest rate the model can show. */
  fastestRate(): number {
    const n = this.dimension;
    let fastest = 0;
    const perCompartment = new Float64Array(this.layout.compartments);
    for (let s = 0; s < this.mmFrom.length; s++) {
      perCompartment[this.mmFrom[s]] += (this.mmVmax[s] * this.mmInvVolume[s]) / this.mmKm[s];
    }
    for (let i = 0; i < this.layout.compartments; i++) {
      fastest = Math.max(fastest, -this.linearMatrix[i * n + i] + perCompartment[i]);
    }
    return fastest;
  }
}
