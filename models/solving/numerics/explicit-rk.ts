/**
 * The one stepping engine for every explicit Runge–Kutta tableau (tableau.ts): adaptive
 * with an embedded pair, or fixed-step. It decides on steps; the arithmetic of a step is
 * a StepKernel (rk-step.ts), interpreted from the tableau or compiled from it. Work arrays
 * are allocated once per tableau and state size.
 */
import { DenseStore } from './dense-store';
import { IntegrationFailure } from './ode-system';
import type { OdeSystem, SolverStats } from './ode-system';
import { freshWork, interpretedKernel, unpack } from './rk-step';
import type { StepKernel, UnpackedTableau, Work } from './rk-step';
import { codeGenerationEnabled } from './generated-code';
import { compiledKernel } from './rk-step-compiler';
import type { ExplicitTableau } from './tableau';

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
   * The controller's proposal after the first accepted step of this call: the first step
   * to try in the next segment, which after the next dose usually starts with the same
   * transient as this one did. (Reusing the first accepted step itself would carry a
   * cautious starting step from segment to segment, each regrowing it step by step.)
   */
  restartStep: number;
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

/**
 * x^p, by square roots when p is 1/2, 1/4 or 1/8 (DOP853's exponents: its controller takes
 * two such powers on every step, and Math.pow costs several times a square root).
 */
function power(x: number, p: number): number {
  if (p === 0.125) return Math.sqrt(Math.sqrt(Math.sqrt(x)));
  if (p === 0.25) return Math.sqrt(Math.sqrt(x));
  if (p === 0.5) return Math.sqrt(x);
  return x ** p;
}

/** x^k for a small non-negative integer k, by repeated multiplication. */
function intPow(x: number, k: number): number {
  let r = 1;
  for (let i = 0; i < k; i++) r *= x;
  return r;
}

/** dst = src over the first n entries (a plain loop: cheaper than TypedArray.set for a few entries). */
function copy(src: Float64Array, dst: Float64Array, n: number): void {
  for (let i = 0; i < n; i++) dst[i] = src[i];
}

/** Index of the first non-finite entry, or −1. */
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

/** Work arrays by tableau (the object, not its name: compiled kernels are bound to them) and n. */
const workCache = new WeakMap<UnpackedTableau, Map<number, Work>>();

/** Work arrays for (tableau, n), made once and reused by every segment (calls never nest). */
function makeWork(u: UnpackedTableau, n: number): Work {
  let byDimension = workCache.get(u);
  const cached = byDimension?.get(n);
  if (cached) return cached;
  const work = freshWork(u, n);
  if (!byDimension) {
    byDimension = new Map();
    workCache.set(u, byDimension);
  }
  byDimension.set(n, work);
  return work;
}

/** Kernels by system and tableau, bound to the shared work arrays of (tableau, n); loaded before use. */
const kernelCache = new WeakMap<OdeSystem, Map<UnpackedTableau, { compiled: boolean; kernel: StepKernel }>>();

/** The compiled kernel when the system offers its code and compilation is allowed; else the interpreter. */
function kernelFor(system: OdeSystem, u: UnpackedTableau, w: Work): StepKernel {
  const wanted = codeGenerationEnabled() && system.code !== undefined;
  let bySystem = kernelCache.get(system);
  const cached = bySystem?.get(u);
  if (cached && cached.compiled === wanted) {
    cached.kernel.load();
    return cached.kernel;
  }
  const compiled = wanted && system.code ? compiledKernel(system.code, u, w) : null;
  const kernel = compiled ?? interpretedKernel(system, u, w);
  if (!bySystem) {
    bySystem = new Map();
    kernelCache.set(system, bySystem);
  }
  bySystem.set(u, { compiled: wanted, kernel });
  kernel.load();
  return kernel;
}

/** h·‖f(y1) − k_stage‖ / ‖y1 − Y_stage‖, Hairer's estimate of h|λ|. */
function stiffnessRatio(cm: UnpackedTableau, w: Work, h: number): number {
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
  const cm = unpack(tableau);
  const w = makeWork(cm, n);
  const kernel = kernelFor(system, cm, w);
  const ctl = tableau.controller;
  const span = t1 - t0;
  if (span === 0) return { lastStep: options.initialStep ?? 0, restartStep: options.initialStep ?? 0, stiffAt: null };

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
  let restartStep = 0;
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

    const estimate = kernel.attempt(t, hStep, rtol, atol);
    stats.derivativeEvaluations += cm.attemptEvaluations;
    const bad = firstNonFinite(w.y1);
    const err = bad >= 0 ? Infinity : estimate;
    if (!(err <= 1)) {
      nonFiniteComponent = bad;
      stats.rejectedSteps++;
      rejectedLast = true;
      const shrink = Number.isFinite(err) ? Math.min(1 / ctl.facMin, err ** alpha / ctl.safety) : 1 / ctl.facMin;
      h = hStep / shrink;
      continue;
    }
    nonFiniteComponent = -1;

    const fac11 = power(err, alpha);
    const fac = Math.max(1 / ctl.facMax, Math.min(1 / ctl.facMin, fac11 / (ctl.beta === 0 ? 1 : errOld ** ctl.beta) / ctl.safety));
    let hNew = hStep / fac;
    errOld = Math.max(err, 1e-4);

    const size = cm.form.vectors * n;
    const at = store.reserve(size, t);
    const defect = kernel.complete(t, hStep, store.openChunk, at);
    stats.derivativeEvaluations += cm.completeEvaluations;
    const f1 = w.stage[cm.end];
    const badEnd = firstNonFinite(f1);
    if (badEnd >= 0) throw nonFinite(t + hStep, badEnd, 'derivative');
    if (cm.denseCheck) {
      if (!(defect <= 1)) {
        // The values between the steps would miss the tolerance: retry smaller, as for a step error.
        const fd = defect ** (1 / tableau.order) / ctl.safety;
        stats.rejectedSteps++;
        stats.denseRejections++;
        rejectedLast = true;
        h = hStep / Math.min(1 / ctl.facMin, Number.isFinite(fd) ? fd : 1 / ctl.facMin);
        continue;
      }
      // The defect limits the next step only when fd = defect^(1/order)/safety exceeds the step
      // error's factor hStep/hNew: compared in powers, which spares a pow() on most steps.
      if (defect > intPow((hStep / hNew) * ctl.safety, tableau.order)) {
        hNew = Math.min(hNew, hStep / Math.max(1 / ctl.facMax, power(defect, 1 / tableau.order) / ctl.safety));
      }
    }
    store.commit(t, hStep, cm.form, size);
    stats.acceptedSteps++;

    const stiffNow =
      stiffness !== undefined && tableau.stiffness !== null && stiffness.wantsCheck()
        ? stiffness.observe(stiffnessRatio(cm, w, hStep), tableau.stiffness.threshold)
        : false;

    if (rejectedLast) hNew = Math.min(hNew, hStep);
    rejectedLast = false;
    // A last step shortened to land on t1 says nothing against the step it replaced.
    if (restartStep === 0) restartStep = last ? Math.max(hNew, h) : hNew;
    t = last ? t1 : t + hStep;
    copy(w.y1, w.y0, n);
    if (cm.end !== 0) copy(f1, f0, n);

    if (last) {
      y.set(w.y0);
      return { lastStep: Math.max(hNew, h), restartStep, stiffAt: null };
    }
    if (stiffNow) {
      y.set(w.y0);
      return { lastStep: hNew, restartStep, stiffAt: t };
    }
    h = Math.min(hNew, hMax);
  }
}

/** A number for a message: six significant digits, as the results print them. */
const fmt6 = (v: number): string => String(Number(v.toPrecision(6)));

/**
 * Steps a fixed step h takes over [t0, t1]: the grid t0 + k·h, the last step shortened to land
 * on t1. The tolerance on the count makes h = span/N give exactly N steps despite rounding.
 * Infinite when the ratio overflows.
 */
export function fixedStepCount(t0: number, t1: number, h: number): number {
  const span = t1 - t0;
  return span === 0 ? 0 : Math.max(1, Math.ceil(span / h - 1e-9));
}

/**
 * The checks a fixed-step method makes before its first step: its step count is known, so a
 * span that needs more than maxSteps steps, or more room than the store has left, fails at
 * once ('too-many-steps' at the time the budget would run out; 'too-much-memory') instead of
 * after the budget's worth of work.
 */
export function checkFixedBudget(t0: number, t1: number, h: number, maxSteps: number, store: DenseStore, vectors: number): number {
  const steps = fixedStepCount(t0, t1, h);
  if (steps > maxSteps) {
    const budget = Math.max(0, Math.floor(maxSteps));
    throw tooManyFixedSteps(h, steps, t0, t1, budget, t0 + budget * h);
  }
  store.ensureRoom(steps, vectors, (k) => t0 + k * h);
  return steps;
}

/** 'too-many-steps' for a fixed step h that needs `steps` steps over [t0, t1] where `budget` are allowed, running out at time t. */
export function tooManyFixedSteps(h: number, steps: number, t0: number, t1: number, budget: number, t: number): IntegrationFailure {
  const count = Number.isFinite(steps) ? String(steps) : 'more than 1e308';
  return new IntegrationFailure(
    'too-many-steps',
    t,
    null,
    `a fixed step of ${fmt6(h)} needs ${count} steps from t = ${fmt6(t0)} to t = ${fmt6(t1)}, more than solver.maxSteps (${budget}) allows: the budget runs out at t = ${fmt6(t)}; use a larger step`,
  );
}

/**
 * Fixed step h from t0 to exactly t1; the grid is t0 + k·h (no accumulated drift) and the
 * last step is shortened to land on t1. Each step keeps the tableau's `hermiteVectors` of the
 * Hermite form from the end slopes (linear, quadratic or cubic between steps), and each end
 * slope is reused as the next step's first stage. More than maxSteps steps, or more than the
 * store can hold, is refused before the first step.
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
  maxSteps: number,
): void {
  checkSpan(t0, t1);
  if (!(h > 0) || !Number.isFinite(h)) throw new RangeError(`fixed step must be positive (got ${h})`);
  const span = t1 - t0;
  if (span === 0) return;
  const n = system.dimension;
  const cm = unpack(tableau);
  const steps = checkFixedBudget(t0, t1, h, maxSteps, store, cm.form.vectors);
  const w = makeWork(cm, n);
  const kernel = kernelFor(system, cm, w);
  const f0 = startSegment(system, w, t0, y, stats);
  for (let m = 0; m < steps; m++) {
    const t = t0 + m * h;
    const tNext = m === steps - 1 ? t1 : t0 + (m + 1) * h;
    const hStep = tNext - t;
    kernel.attempt(t, hStep, 0, 1);
    stats.derivativeEvaluations += cm.attemptEvaluations;
    const bad = firstNonFinite(w.y1);
    if (bad >= 0) throw nonFinite(tNext, bad, 'value');
    const size = cm.form.vectors * n;
    const at = store.reserve(size, t);
    kernel.complete(t, hStep, store.openChunk, at);
    stats.derivativeEvaluations += cm.completeEvaluations;
    const f1 = w.stage[cm.end];
    const badEnd = firstNonFinite(f1);
    if (badEnd >= 0) throw nonFinite(tNext, badEnd, 'derivative');
    store.commit(t, hStep, cm.form, size);
    stats.acceptedSteps++;
    copy(w.y1, w.y0, n);
    if (cm.end !== 0) copy(f1, f0, n);
  }
  y.set(w.y0);
}
