/**
 * The arithmetic of one explicit Runge–Kutta step, read from the tableau: its stages,
 * the new state, the embedded error estimate, and on acceptance the continuous
 * extension. The engine (explicit-rk.ts) decides what to do with a step; a StepKernel
 * only computes it. This file holds the tableau unpacked into sparse rows, the work
 * arrays, and the kernel that interprets the rows; rk-step-compiler.ts turns the same
 * rows into straight-line code.
 */
import { hermiteCoefficients, hermiteForm } from './dense-store';
import type { DenseForm } from './dense-store';
import type { OdeSystem } from './ode-system';
import { alternatingForm, endSlopeIndex, fullStageCount } from './tableau';
import type { DenseSlope, ExplicitTableau } from './tableau';

/** The nonzero entries of one coefficient row: stage indices and weights. */
export interface SparseRow {
  readonly cols: Int32Array;
  readonly vals: Float64Array;
}

/** A tableau unpacked into sparse rows, so the stepping loops touch only nonzero coefficients. */
export interface UnpackedTableau {
  readonly tab: ExplicitTableau;
  readonly total: number;
  /** Index of f(t+h, y1) in the full stage list. */
  readonly end: number;
  /** Full-stage row r of a (main stages, then f(t+h, y1) if not FSAL, then the dense stages). */
  readonly rows: readonly SparseRow[];
  readonly rowC: Float64Array;
  readonly b: SparseRow;
  readonly e: SparseRow | null;
  readonly e3: SparseRow | null;
  readonly d: readonly SparseRow[];
  readonly form: DenseForm;
  /** The tableau's dense check with the form whose slope it needs, or null. */
  readonly denseCheck: { readonly weight: number; readonly form: DenseForm & DenseSlope } | null;
  /** Right-hand-side evaluations in attempt() (stages 2…s) and in complete(). */
  readonly attemptEvaluations: number;
  readonly completeEvaluations: number;
}

function sparse(row: readonly number[]): SparseRow {
  const cols: number[] = [];
  const vals: number[] = [];
  row.forEach((v, j) => {
    if (v !== 0) {
      cols.push(j);
      vals.push(v);
    }
  });
  return { cols: Int32Array.from(cols), vals: Float64Array.from(vals) };
}

const unpackedCache = new WeakMap<ExplicitTableau, UnpackedTableau>();

export function unpack(tab: ExplicitTableau): UnpackedTableau {
  const cached = unpackedCache.get(tab);
  if (cached) return cached;
  const total = fullStageCount(tab);
  const rows: (readonly number[])[] = [...tab.a];
  const nodes: number[] = [...tab.c];
  if (!tab.fsal) {
    rows.push(tab.b);
    nodes.push(1);
  }
  if (tab.dense) {
    rows.push(...tab.dense.extraA);
    nodes.push(...tab.dense.extraC);
  }
  const end = endSlopeIndex(tab);
  if (tab.dense && tab.hermiteVectors !== 4) throw new RangeError(`${tab.name}: a method-specific continuous extension builds on all four Hermite vectors`);
  const unpacked: UnpackedTableau = {
    tab,
    total,
    end,
    rows: rows.map(sparse),
    rowC: Float64Array.from(nodes),
    b: sparse(tab.b),
    e: tab.e ? sparse(tab.e) : null,
    e3: tab.e3 ? sparse(tab.e3) : null,
    d: tab.dense ? tab.dense.d.map(sparse) : [],
    form: tab.dense ? alternatingForm(4 + tab.dense.d.length) : tab.hermiteVectors === 4 ? hermiteForm : alternatingForm(tab.hermiteVectors),
    denseCheck: tab.denseCheck ? { weight: tab.denseCheck.weight, form: alternatingForm(4 + (tab.dense?.d.length ?? 0)) } : null,
    attemptEvaluations: tab.stages - 1,
    completeEvaluations: (tab.fsal ? 0 : 1) + (total - end - 1) + (tab.denseCheck ? 1 : 0),
  };
  unpackedCache.set(tab, unpacked);
  return unpacked;
}

/** Per-call work arrays. */
export interface Work {
  readonly n: number;
  /** Full stage list, stage j at [j·n, (j+1)·n). */
  readonly k: Float64Array;
  /** Views of k, one per stage, made once so that stepping allocates nothing. */
  readonly stage: readonly Float64Array[];
  readonly y0: Float64Array;
  readonly y1: Float64Array;
  readonly arg: Float64Array;
  /** Argument of the stiffness-test stage. */
  readonly yStiff: Float64Array;
  /** Error weights atol + rtol·max(|y0|, |y1|) of the last attempt. */
  readonly scale: Float64Array;
  /** Error vectors of the embedded estimates (and scratch for dense rows). */
  readonly err: Float64Array;
  readonly err3: Float64Array;
  /** Scratch for the continuous extension, form.vectors × n (interpreted kernel). */
  readonly coef: Float64Array;
}

export function freshWork(u: UnpackedTableau, n: number): Work {
  const k = new Float64Array(u.total * n);
  return {
    n,
    k,
    stage: Array.from({ length: u.total }, (_, j) => k.subarray(j * n, (j + 1) * n)),
    y0: new Float64Array(n),
    y1: new Float64Array(n),
    arg: new Float64Array(n),
    yStiff: new Float64Array(n),
    scale: new Float64Array(n),
    err: new Float64Array(n),
    err3: new Float64Array(n),
    coef: new Float64Array(u.form.vectors * n),
  };
}

/**
 * One step's arithmetic on a Work, with k_1 = f(t, y0) already in place. Evaluations are
 * counted by the engine (UnpackedTableau.attemptEvaluations / completeEvaluations).
 */
export interface StepKernel {
  /** Loads what the kernel reads from the system (parameters, infusion rates in force); called as each integration call starts. */
  load(): void;
  /** Stages 2…s and y1 = y0 + hΣ b_j k_j into w.y1; the weights into w.scale; returns the scaled error norm (0 without an estimate). */
  attempt(t: number, h: number, rtol: number, atol: number): number;
  /**
   * For an accepted step: f(t+h, y1) into its stage, the extra dense stages, and the
   * continuous extension (form.vectors × n values) into out from offset at; returns the
   * scaled defect of the extension at mid-step (0 when the tableau has no dense check).
   */
  complete(t: number, h: number, out: Float64Array, at: number): number;
}

/** out = base + scale·Σ_q vals[q]·k_{cols[q]} (base null: zero), stage by stage. */
function combine(k: Float64Array, n: number, row: SparseRow, scale: number, base: Float64Array | null, out: Float64Array): void {
  if (base) for (let i = 0; i < n; i++) out[i] = base[i];
  else for (let i = 0; i < n; i++) out[i] = 0;
  const { cols, vals } = row;
  for (let q = 0; q < cols.length; q++) {
    const w = scale * vals[q];
    const at = cols[q] * n;
    for (let i = 0; i < n; i++) out[i] += w * k[at + i];
  }
}

/**
 * The kernel that walks the sparse rows: works for any system, and is the reference that
 * the compiled kernel must reproduce bit for bit (tests/numerics/rk-step-compiler.test.ts).
 */
export function interpretedKernel(system: OdeSystem, u: UnpackedTableau, w: Work): StepKernel {
  const { n, k, stage, y0, y1, arg, yStiff, scale, err, err3, coef } = w;
  const tab = u.tab;
  const stiffStage = tab.stiffness ? tab.stiffness.stage : -1;

  const evalStage = (r: number, t: number, h: number): void => {
    combine(k, n, u.rows[r], h, y0, arg);
    system.derivative(t + u.rowC[r] * h, arg, stage[r]);
  };

  return {
    load() {},
    attempt(t, h, rtol, atol) {
      for (let r = 1; r < tab.stages; r++) {
        evalStage(r, t, h);
        if (r === stiffStage) yStiff.set(arg);
      }
      // With FSAL the last stage's argument is y1 itself.
      if (tab.fsal) y1.set(arg);
      else combine(k, n, u.b, h, y0, y1);
      for (let i = 0; i < n; i++) scale[i] = atol + rtol * Math.max(Math.abs(y0[i]), Math.abs(y1[i]));
      if (!u.e) return 0;
      combine(k, n, u.e, h, null, err);
      let sum5 = 0;
      for (let i = 0; i < n; i++) sum5 += (err[i] / scale[i]) ** 2;
      if (!u.e3) return Math.sqrt(sum5 / n);
      // DOP853's combined 5th/3rd-order estimate (Hairer–Nørsett–Wanner I, §II.10).
      combine(k, n, u.e3, h, null, err3);
      let sum3 = 0;
      for (let i = 0; i < n; i++) sum3 += (err3[i] / scale[i]) ** 2;
      const deno = sum5 + 0.01 * sum3;
      return deno > 0 ? sum5 / Math.sqrt(n * deno) : 0;
    },

    complete(t, h, out, at) {
      if (!tab.fsal) system.derivative(t + h, y1, stage[u.end]);
      for (let r = u.end + 1; r < u.total; r++) evalStage(r, t, h);
      hermiteCoefficients(h, y0, stage[0], y1, stage[u.end], coef, u.tab.hermiteVectors);
      for (let v = 0; v < u.d.length; v++) {
        combine(k, n, u.d[v], h, null, err);
        coef.set(err, (4 + v) * n);
      }
      out.set(coef, at);
      const check = u.denseCheck;
      if (!check) return 0;
      // Scaled RMS of weight·h·(p'(t_m) − f(t_m, p(t_m))) at mid-step: how far the continuous
      // extension strays from the differential equation between the steps.
      check.form.evaluate(0.5, coef, 0, n, arg);
      check.form.slope(0.5, coef, 0, n, err);
      system.derivative(t + 0.5 * h, arg, err3);
      let sum = 0;
      for (let i = 0; i < n; i++) sum += ((check.weight * (err[i] - h * err3[i])) / scale[i]) ** 2;
      return Math.sqrt(sum / n);
    },
  };
}
