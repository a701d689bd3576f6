/**
 * The one stepping engine for every explicit Runge–Kutta tableau (tableau.ts): adaptive
 * with an embedded pair, or fixed-step. Work arrays are allocated once per call.
 */
import { DenseStore, hermiteCoefficients, hermiteForm } from './dense-store';
import type { DenseForm } from './dense-store';
import { IntegrationFailure } from './ode-system';
import type { OdeSystem, SolverStats } from './ode-system';
import { alternatingForm, endSlopeIndex, fullStageCount } from './tableau';
import type { DenseSlope, ExplicitTableau } from './tableau';

export interface AdaptiveOptions {
  rtol: number;
  atol: number;
  /** Step attempts (accepted + rejected) allowed in this call. */
  maxSteps: number;
  initialStep?: number;
  maxStep?: number;
}

export interface AdaptiveResult {
  /** The controller's proposal for the next step. */
  lastStep: number;
  /**
   * The first accepted step of this call: the hint for the next segment, which after the
   * next dose usually starts with the same fast transient as this one did.
   */
  firstStep: number;
  /** Time at which the stiffness monitor fired (y holds the state there), or null. */
  stiffAt: number | null;
}

const EPS = Number.EPSILON;

/**
 * Smallest step allowed at time t: one that still changes t in floating point (Hairer's codes
 * stop when 0.1|h| ≤ |t|·uround). Near t = 0 a tiny floor relative to the span keeps a step
 * that keeps shrinking from running on for ever; it must not be larger than the tiny first
 * steps a near-empty state with a large infusion rate legitimately asks for.
 */
export function minimumStep(t: number, t1: number): number {
  return 10 * EPS * Math.max(Math.abs(t), 1e-12 * Math.abs(t1 - t));
}

/** Index of the first non-finite entry, or −1. */
/**
 * The state component changing fastest relative to its tolerance, |f_i|/(atol + rtol|y_i|):
 * the one that holds the step size down, named when the integration gives up.
 */
export function fastestComponent(y: Float64Array, f: Float64Array, rtol: number, atol: number): number {
  let best = 0;
  let worst = -1;
  for (let i = 0; i < y.length; i++) {
    const r = Math.abs(f[i]) / (atol + rtol * Math.abs(y[i]));
    if (r > worst) {
      worst = r;
      best = i;
    }
  }
  return best;
}

export function firstNonFinite(v: Float64Array): number {
  for (let i = 0; i < v.length; i++) if (!Number.isFinite(v[i])) return i;
  return -1;
}

/** Hairer's weights sk_i = atol + rtol·max(|y0_i|, |y1_i|). */
export function fillScale(y0: Float64Array, y1: Float64Array, rtol: number, atol: number, out: Float64Array): void {
  for (let i = 0; i < y0.length; i++) out[i] = atol + rtol * Math.max(Math.abs(y0[i]), Math.abs(y1[i]));
}

/**
 * Starting step of Hairer's HINIT (Solving ODEs I, §II.4): balance an Euler step's
 * second-derivative estimate against the tolerance for a method of the given order.
 * Uses one derivative evaluation (written to f1, y1 used as scratch).
 */
export function initialStepSize(
  system: OdeSystem,
  t0: number,
  y0: Float64Array,
  f0: Float64Array,
  order: number,
  rtol: number,
  atol: number,
  hMax: number,
  y1: Float64Array,
  f1: Float64Array,
  stats: SolverStats,
): number {
  const n = y0.length;
  let dnf = 0;
  let dny = 0;
  for (let i = 0; i < n; i++) {
    const sk = atol + rtol * Math.abs(y0[i]);
    dnf += (f0[i] / sk) ** 2;
    dny += (y0[i] / sk) ** 2;
  }
  let h = dnf <= 1e-10 || dny <= 1e-10 ? 1e-6 : Math.sqrt(dny / dnf) * 0.01;
  h = Math.min(h, hMax);
  for (let i = 0; i < n; i++) y1[i] = y0[i] + h * f0[i];
  system.derivative(t0 + h, y1, f1);
  stats.derivativeEvaluations++;
  let der2 = 0;
  for (let i = 0; i < n; i++) {
    const sk = atol + rtol * Math.abs(y0[i]);
    der2 += ((f1[i] - f0[i]) / sk) ** 2;
  }
  der2 = Math.sqrt(der2) / h;
  const der12 = Math.max(Math.abs(der2), Math.sqrt(dnf));
  const h1 = der12 <= 1e-15 || !Number.isFinite(der12) ? Math.max(1e-6, h * 1e-3) : (0.01 / der12) ** (1 / order);
  return Math.min(100 * h, h1, hMax);
}

/**
 * Hairer's stiffness detection (DOPRI5 / DOP853): the ratio h·‖Δf‖/‖Δy‖ between two
 * points at the step's end estimates h|λ| of the dominant eigenvalue; sitting on the
 * stability boundary for many consecutive steps means the step is limited by stability.
 */
export class StiffnessMonitor {
  private suspicious = 0;
  private calm = 0;
  private accepted = 0;

  /**
   * @param required consecutive suspicious steps before declaring stiffness (Hairer: 15)
   * @param calmReset non-suspicious steps that clear the count (Hairer: 6)
   * @param checkEvery test every k-th accepted step while unsuspicious (Hairer's NSTIFF;
   *   1 here, since the test costs O(n) and segments between doses are short)
   */
  constructor(
    readonly required = 15,
    readonly calmReset = 6,
    readonly checkEvery = 1,
  ) {}

  wantsCheck(): boolean {
    this.accepted++;
    return this.suspicious > 0 || this.accepted % this.checkEvery === 0;
  }

  /** Feeds one h|λ| estimate; true once stiffness is established. */
  observe(hLambda: number, threshold: number): boolean {
    if (hLambda > threshold) {
      this.calm = 0;
      this.suspicious++;
      return this.suspicious >= this.required;
    }
    this.calm++;
    if (this.calm >= this.calmReset) this.suspicious = 0;
    return false;
  }
}

/** The nonzero entries of one coefficient row: stage indices and weights. */
interface SparseRow {
  readonly cols: Int32Array;
  readonly vals: Float64Array;
}

/** A tableau unpacked into sparse rows, so the stepping loops touch only nonzero coefficients. */
interface Compiled {
  readonly tab: ExplicitTableau;
  readonly total: number;
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

const compiledCache = new WeakMap<ExplicitTableau, Compiled>();

function compile(tab: ExplicitTableau): Compiled {
  const cached = compiledCache.get(tab);
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
  const compiled: Compiled = {
    tab,
    total,
    end: endSlopeIndex(tab),
    rows: rows.map(sparse),
    rowC: Float64Array.from(nodes),
    b: sparse(tab.b),
    e: tab.e ? sparse(tab.e) : null,
    e3: tab.e3 ? sparse(tab.e3) : null,
    d: tab.dense ? tab.dense.d.map(sparse) : [],
    form: tab.dense ? alternatingForm(4 + tab.dense.d.length) : hermiteForm,
    denseCheck: tab.denseCheck ? { weight: tab.denseCheck.weight, form: alternatingForm(4 + (tab.dense?.d.length ?? 0)) } : null,
  };
  compiledCache.set(tab, compiled);
  return compiled;
}

/** Per-call work arrays. */
interface Work {
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
  readonly scale: Float64Array;
  /** Error vectors of the embedded estimates (and scratch for dense rows). */
  readonly err: Float64Array;
  readonly err3: Float64Array;
  readonly coef: Float64Array;
}

const workCache = new Map<string, Work>();

/** Work arrays for (tableau, n), made once and reused by every segment (calls never nest). */
function makeWork(cm: Compiled, n: number): Work {
  const key = `${cm.tab.name}:${n}`;
  const cached = workCache.get(key);
  if (cached) return cached;
  const work = freshWork(cm, n);
  workCache.set(key, work);
  return work;
}

function freshWork(cm: Compiled, n: number): Work {
  const k = new Float64Array(cm.total * n);
  return {
    n,
    k,
    stage: Array.from({ length: cm.total }, (_, j) => k.subarray(j * n, (j + 1) * n)),
    y0: new Float64Array(n),
    y1: new Float64Array(n),
    arg: new Float64Array(n),
    yStiff: new Float64Array(n),
    scale: new Float64Array(n),
    err: new Float64Array(n),
    err3: new Float64Array(n),
    coef: new Float64Array(cm.form.vectors * n),
  };
}

/** Evaluates full-stage row r at t + c_r h from y0, writing the argument to w.arg. */
function evalStage(system: OdeSystem, cm: Compiled, w: Work, r: number, t: number, h: number, stats: SolverStats): void {
  combine(w.k, w.n, cm.rows[r], h, w.y0, w.arg);
  system.derivative(t + cm.rowC[r] * h, w.arg, w.stage[r]);
  stats.derivativeEvaluations++;
}

/**
 * Stages 2…s from k_1 = f(t, y0) already in place; y1 = y0 + hΣ b_j k_j. With FSAL the last
 * stage's argument is y1 itself, so it is copied from there rather than recomputed.
 */
function attemptStep(system: OdeSystem, cm: Compiled, w: Work, t: number, h: number, stats: SolverStats): void {
  const s = cm.tab.stages;
  const stiffStage = cm.tab.stiffness ? cm.tab.stiffness.stage : -1;
  for (let r = 1; r < s; r++) {
    evalStage(system, cm, w, r, t, h, stats);
    if (r === stiffStage) w.yStiff.set(w.arg);
  }
  if (cm.tab.fsal) {
    w.y1.set(w.arg);
    return;
  }
  combine(w.k, w.n, cm.b, h, w.y0, w.y1);
}

/** Scaled RMS error (Hairer); DOP853's combined 5th/3rd-order estimate when e3 is present. */
function errorNorm(cm: Compiled, w: Work, h: number, rtol: number, atol: number): number {
  const { n, k, y0, y1, scale, err, err3 } = w;
  fillScale(y0, y1, rtol, atol, scale);
  if (!cm.e) return 0;
  combine(k, n, cm.e, h, null, err);
  let sum5 = 0;
  for (let i = 0; i < n; i++) sum5 += (err[i] / scale[i]) ** 2;
  if (!cm.e3) return Math.sqrt(sum5 / n);
  combine(k, n, cm.e3, h, null, err3);
  let sum3 = 0;
  for (let i = 0; i < n; i++) sum3 += (err3[i] / scale[i]) ** 2;
  const deno = sum5 + 0.01 * sum3;
  return deno > 0 ? sum5 / Math.sqrt(n * deno) : 0;
}

/** f(t+h, y1) into its slot (one evaluation unless the tableau is FSAL). */
function endSlope(system: OdeSystem, cm: Compiled, w: Work, t: number, h: number, stats: SolverStats): Float64Array {
  const f1 = w.stage[cm.end];
  if (!cm.tab.fsal) {
    system.derivative(t + h, w.y1, f1);
    stats.derivativeEvaluations++;
  }
  return f1;
}

/** Fills w.coef with the accepted step's continuous extension (extra stages evaluated here). */
function denseCoefficients(system: OdeSystem, cm: Compiled, w: Work, t: number, h: number, stats: SolverStats): void {
  const { n, k, y0, y1, coef } = w;
  const f0 = w.stage[0];
  const f1 = w.stage[cm.end];
  const firstExtra = cm.end + 1;
  for (let r = firstExtra; r < cm.total; r++) evalStage(system, cm, w, r, t, h, stats);
  hermiteCoefficients(h, y0, f0, y1, f1, coef);
  for (let v = 0; v < cm.d.length; v++) {
    combine(k, n, cm.d[v], h, null, w.err);
    coef.set(w.err, (4 + v) * n);
  }
}

/**
 * Scaled RMS of weight·h·(p'(t_m) − f(t_m, p(t_m))) at the middle of the step: how far the
 * continuous extension strays from the differential equation between the steps.
 */
function denseDefect(system: OdeSystem, cm: Compiled, w: Work, t: number, h: number, stats: SolverStats, weight: number): number {
  const check = cm.denseCheck;
  if (!check) return 0;
  const { n, arg, err, err3, scale } = w;
  check.form.evaluate(0.5, w.coef, 0, n, arg);
  check.form.slope(0.5, w.coef, 0, n, err);
  system.derivative(t + 0.5 * h, arg, err3);
  stats.derivativeEvaluations++;
  let sum = 0;
  for (let i = 0; i < n; i++) sum += ((weight * (err[i] - h * err3[i])) / scale[i]) ** 2;
  return Math.sqrt(sum / n);
}

/** h·‖f(y1) − k_stage‖ / ‖y1 − Y_stage‖, Hairer's estimate of h|λ|. */
function stiffnessRatio(cm: Compiled, w: Work, h: number): number {
  const test = cm.tab.stiffness;
  if (!test) return 0;
  const { n, k, y1, yStiff } = w;
  let num = 0;
  let den = 0;
  for (let i = 0; i < n; i++) {
    num += (k[cm.end * n + i] - k[test.stage * n + i]) ** 2;
    den += (y1[i] - yStiff[i]) ** 2;
  }
  return den > 0 ? h * Math.sqrt(num / den) : 0;
}

function checkSpan(t0: number, t1: number): void {
  if (!(t1 >= t0) || !Number.isFinite(t0) || !Number.isFinite(t1)) {
    throw new RangeError(`integration span must satisfy t0 ≤ t1 (got ${t0}, ${t1})`);
  }
}

function nonFinite(t: number, component: number, what: string): IntegrationFailure {
  return new IntegrationFailure(
    'non-finite',
    t,
    component,
    `non-finite ${what} in state component ${component} at t = ${t}`,
  );
}

/** Loads y(t0) into the work arrays and evaluates the first slope, failing on non-finite values. */
function startSegment(system: OdeSystem, w: Work, t0: number, y: Float64Array, stats: SolverStats): Float64Array {
  w.y0.set(y);
  const bad0 = firstNonFinite(w.y0);
  if (bad0 >= 0) throw nonFinite(t0, bad0, 'initial value');
  const f0 = w.stage[0];
  system.derivative(t0, w.y0, f0);
  stats.derivativeEvaluations++;
  const badF = firstNonFinite(f0);
  if (badF >= 0) throw nonFinite(t0, badF, 'derivative');
  return f0;
}

/**
 * Adaptive integration of y from t0 to exactly t1 with an embedded pair. A trial step
 * that produces non-finite values is treated as rejected (the step shrinks); the failure
 * is reported as 'non-finite' only when the step can no longer shrink.
 */
export function integrateAdaptive(
  system: OdeSystem,
  t0: number,
  t1: number,
  y: Float64Array,
  tableau: ExplicitTableau,
  options: AdaptiveOptions,
  store: DenseStore,
  stats: SolverStats,
  stiffness?: StiffnessMonitor,
): AdaptiveResult {
  if (!tableau.e) throw new RangeError(`${tableau.name} has no embedded error estimate`);
  checkSpan(t0, t1);
  const { rtol, atol, maxSteps } = options;
  const n = system.dimension;
  const cm = compile(tableau);
  const w = makeWork(cm, n);
  const ctl = tableau.controller;
  const span = t1 - t0;
  if (span === 0) return { lastStep: options.initialStep ?? 0, firstStep: options.initialStep ?? 0, stiffAt: null };

  const f0 = startSegment(system, w, t0, y, stats);

  const hMax = Math.min(options.maxStep ?? span, span);
  let h =
    // A hint too small to make progress (the first step of a segment that began near zero) is
    // replaced by the automatic estimate.
    options.initialStep !== undefined && options.initialStep > 1e3 * minimumStep(t0, t1)
      ? Math.min(options.initialStep, hMax)
      : initialStepSize(system, t0, w.y0, f0, tableau.order, rtol, atol, hMax, w.y1, w.arg, stats);

  const alpha = 1 / tableau.order - 0.75 * ctl.beta;
  let errOld = 1e-4;
  let rejectedLast = false;
  let nonFiniteComponent = -1;
  let attempts = 0;
  let firstStep = 0;
  let t = t0;

  for (;;) {
    if (attempts >= maxSteps) {
      const c = fastestComponent(w.y0, f0, rtol, atol);
      throw new IntegrationFailure('too-many-steps', t, c, `more than ${maxSteps} steps before t = ${t1} (stopped at t = ${t})`);
    }
    if (h < minimumStep(t, t1)) {
      if (nonFiniteComponent >= 0) throw nonFinite(t, nonFiniteComponent, 'value on every trial step');
      const c = fastestComponent(w.y0, f0, rtol, atol);
      throw new IntegrationFailure('step-size-underflow', t, c, `step size ${h} underflows at t = ${t}`);
    }
    // Stretch to t1 rather than leave a sliver step (Hairer's 1.01 rule); never past t1.
    const last = t + 1.01 * h >= t1;
    const hStep = last ? t1 - t : h;
    attempts++;

    attemptStep(system, cm, w, t, hStep, stats);
    const bad = firstNonFinite(w.y1);
    const err = bad >= 0 ? Infinity : errorNorm(cm, w, hStep, rtol, atol);
    if (!(err <= 1)) {
      nonFiniteComponent = bad;
      stats.rejectedSteps++;
      rejectedLast = true;
      const shrink = Number.isFinite(err) ? Math.min(1 / ctl.facMin, err ** alpha / ctl.safety) : 1 / ctl.facMin;
      h = hStep / shrink;
      continue;
    }
    nonFiniteComponent = -1;

    const fac11 = err ** alpha;
    const fac = Math.max(1 / ctl.facMax, Math.min(1 / ctl.facMin, fac11 / errOld ** ctl.beta / ctl.safety));
    let hNew = hStep / fac;
    errOld = Math.max(err, 1e-4);

    const f1 = endSlope(system, cm, w, t, hStep, stats);
    const badEnd = firstNonFinite(f1);
    if (badEnd >= 0) throw nonFinite(t + hStep, badEnd, 'derivative');
    denseCoefficients(system, cm, w, t, hStep, stats);
    if (cm.denseCheck) {
      const defect = denseDefect(system, cm, w, t, hStep, stats, cm.denseCheck.weight);
      const fd = defect ** (1 / tableau.order) / ctl.safety;
      if (!(defect <= 1)) {
        // The values between the steps would miss the tolerance: retry smaller, as for a step error.
        stats.rejectedSteps++;
        stats.denseRejections++;
        rejectedLast = true;
        h = hStep / Math.min(1 / ctl.facMin, Number.isFinite(fd) ? fd : 1 / ctl.facMin);
        continue;
      }
      hNew = Math.min(hNew, hStep / Math.max(1 / ctl.facMax, fd));
    }
    store.append(t, hStep, cm.form, w.coef);
    stats.acceptedSteps++;
    if (firstStep === 0) firstStep = hStep;

    const stiffNow =
      stiffness !== undefined && tableau.stiffness !== null && stiffness.wantsCheck()
        ? stiffness.observe(stiffnessRatio(cm, w, hStep), tableau.stiffness.threshold)
        : false;

    if (rejectedLast) hNew = Math.min(hNew, hStep);
    rejectedLast = false;
    t = last ? t1 : t + hStep;
    w.y0.set(w.y1);
    if (cm.end !== 0) f0.set(f1);

    if (last) {
      y.set(w.y0);
      return { lastStep: Math.max(hNew, h), firstStep, stiffAt: null };
    }
    if (stiffNow) {
      y.set(w.y0);
      return { lastStep: hNew, firstStep, stiffAt: t };
    }
    h = Math.min(hNew, hMax);
  }
}

/**
 * Fixed step h from t0 to exactly t1; the grid is t0 + k·h (no accumulated drift) and the
 * last step is shortened to land on t1. Dense output is cubic Hermite from the end slopes,
 * and each end slope is reused as the next step's first stage.
 */
export function integrateFixed(
  system: OdeSystem,
  t0: number,
  t1: number,
  y: Float64Array,
  tableau: ExplicitTableau,
  h: number,
  store: DenseStore,
  stats: SolverStats,
): void {
  checkSpan(t0, t1);
  if (!(h > 0) || !Number.isFinite(h)) throw new RangeError(`fixed step must be positive (got ${h})`);
  const span = t1 - t0;
  if (span === 0) return;
  const n = system.dimension;
  const cm = compile(tableau);
  const w = makeWork(cm, n);
  const f0 = startSegment(system, w, t0, y, stats);
  // Tolerance on the count so that h = span/N gives exactly N steps despite rounding.
  const steps = Math.max(1, Math.ceil(span / h - 1e-9));
  for (let m = 0; m < steps; m++) {
    const t = t0 + m * h;
    const tNext = m === steps - 1 ? t1 : t0 + (m + 1) * h;
    const hStep = tNext - t;
    attemptStep(system, cm, w, t, hStep, stats);
    const bad = firstNonFinite(w.y1);
    if (bad >= 0) throw nonFinite(tNext, bad, 'value');
    const f1 = endSlope(system, cm, w, t, hStep, stats);
    const badEnd = firstNonFinite(f1);
    if (badEnd >= 0) throw nonFinite(tNext, badEnd, 'derivative');
    denseCoefficients(system, cm, w, t, hStep, stats);
    store.append(t, hStep, cm.form, w.coef);
    stats.acceptedSteps++;
    w.y0.set(w.y1);
    if (cm.end !== 0) f0.set(f1);
  }
  y.set(w.y0);
}
