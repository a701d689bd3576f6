/**
 * Linearly implicit Rosenbrock integration for stiff segments, with the analytic
 * Jacobian. The method is data (RosenbrockTableau) in Hairer–Wanner's transformed form
 * (Solving ODEs II, §IV.7, eq. (7.4')):
 *   (I/(γh) − J) u_i = f(t + α_i h, y0 + Σ_{j<i} a_ij u_j) + Σ_{j<i} (c_ij/h) u_j + γ_i h ∂f/∂t,
 *   y1 = y0 + Σ m_j u_j,   err = Σ e_j u_j,
 * so one LU factorisation per step serves every stage.
 */
import { DenseStore, hermiteForm } from './dense-store';
import { IntegrationFailure } from './ode-system';
import type { OdeSystem, SolverStats } from './ode-system';
import { fastestComponent, fillScale, firstNonFinite, initialStepSize, minimumStep } from './explicit-rk';
import type { Row } from './tableau';
import { luFactor, luSolve } from '../linalg/lu';

export interface RosenbrockTableau {
  readonly name: string;
  readonly order: number;
  readonly embeddedOrder: number;
  readonly stages: number;
  /** Diagonal γ of the method. */
  readonly gamma: number;
  /** Stage nodes α_i = Σ_j α_ij. */
  readonly alpha: Row;
  /** γ_i = Σ_j γ_ij (diagonal included), weights of ∂f/∂t. */
  readonly gammaSum: Row;
  /** Transformed coefficients a_ij = (αΓ⁻¹)_ij; row i has i entries. */
  readonly a: readonly Row[];
  /** Transformed coefficients c_ij = (diag(1/γ) − Γ⁻¹)_ij; row i has i entries. */
  readonly c: readonly Row[];
  /** Solution weights m = bᵀΓ⁻¹. */
  readonly m: Row;
  /** Error weights (y1 − ŷ1 in terms of the u_j). */
  readonly e: Row;
  /**
   * Two rows over the u_j giving (v2, v3) of the dense form
   * y(θ) = (1−θ) y0 + θ(y1 + (1−θ)(v2 + θ v3)), i.e. hermiteForm with (y0, y1−y0, v2, v3).
   */
  readonly dense: readonly [Row, Row];
}

const A51 = 0.1221224509226641e1;
const A52 = 0.6019134481288629e1;
const A53 = 0.1253708332932087e2;
const A54 = -0.687886036105895;

// RODAS4: Hairer & Wanner, Solving ODEs II, §VI.4 (code RODAS, METH = 1); L-stable, stiffly accurate, order 4(3), dense output of order 3.
export const RODAS4: RosenbrockTableau = {
  name: 'rodas4',
  order: 4,
  embeddedOrder: 3,
  stages: 6,
  gamma: 0.25,
  alpha: [0, 0.386, 0.21, 0.63, 1, 1],
  gammaSum: [0.25, -0.1043, 0.1035, -0.3620000000000023e-1, 0, 0],
  a: [
    [],
    [0.1544e1],
    [0.9466785280815826, 0.2557011698983284],
    [0.3314825187068521e1, 0.2896124015972201e1, 0.9986419139977817],
    [A51, A52, A53, A54],
    [A51, A52, A53, A54, 1],
  ],
  c: [
    [],
    [-0.56688e1],
    [-0.2430093356833875e1, -0.2063599157091915],
    [-0.1073529058151375, -0.9594562251023355e1, -0.2047028614809616e2],
    [0.7496443313967647e1, -0.1024680431464352e2, -0.3399990352819905e2, 0.117089089320616e2],
    [0.8083246795921522e1, -0.7981132988064893e1, -0.3152159432874371e2, 0.1631930543123136e2, -0.6058818238834054e1],
  ],
  m: [A51, A52, A53, A54, 1, 1],
  e: [0, 0, 0, 0, 0, 1],
  dense: [
    [0.1012623508344586e2, -0.7487995877610167e1, -0.3480091861555747e2, -0.7992771707568823e1, 0.1025137723295662e1, 0],
    [-0.6762803392801253, 0.6087714651680015e1, 0.1643084320892478e2, 0.2476722511418386e2, -0.6594389125716872e1, 0],
  ],
};

export interface RosenbrockOptions {
  rtol: number;
  atol: number;
  maxSteps: number;
  initialStep?: number;
  maxStep?: number;
}


/** Per-call work arrays. */
interface Work {
  readonly n: number;
  readonly jac: Float64Array;
  readonly w: Float64Array;
  readonly piv: Int32Array;
  /** Stage increments u_j at [j·n, (j+1)·n). */
  readonly u: Float64Array;
  readonly y0: Float64Array;
  readonly y1: Float64Array;
  readonly f0: Float64Array;
  readonly ft: Float64Array;
  readonly arg: Float64Array;
  readonly rhs: Float64Array;
  readonly scale: Float64Array;
  readonly coef: Float64Array;
}

function makeWork(tab: RosenbrockTableau, n: number): Work {
  return {
    n,
    jac: new Float64Array(n * n),
    w: new Float64Array(n * n),
    piv: new Int32Array(n),
    u: new Float64Array(tab.stages * n),
    y0: new Float64Array(n),
    y1: new Float64Array(n),
    f0: new Float64Array(n),
    ft: new Float64Array(n),
    arg: new Float64Array(n),
    rhs: new Float64Array(n),
    scale: new Float64Array(n),
    coef: new Float64Array(4 * n),
  };
}

/**
 * ∂f/∂t by a one-sided difference (Hairer's RODAS increment √(uround·max(1e−5, |t|))),
 * taken inside [t0, t1] so that f is never sampled across a discontinuity. Systems are
 * autonomous between events, so this is usually exactly zero, but a time-dependent input
 * would otherwise silently lose an order.
 */
function timeDerivative(system: OdeSystem, t: number, t0: number, t1: number, wk: Work, stats: SolverStats): void {
  const delta = Math.sqrt(Number.EPSILON * Math.max(1e-5, Math.abs(t)));
  const step = t + delta <= t1 ? delta : t - delta >= t0 ? -delta : 0;
  if (step === 0) {
    wk.ft.fill(0);
    return;
  }
  system.derivative(t + step, wk.y0, wk.ft);
  stats.derivativeEvaluations++;
  for (let i = 0; i < wk.n; i++) wk.ft[i] = (wk.ft[i] - wk.f0[i]) / step;
}

/** Forms and factors I/(γh) − J; false when the matrix is singular. */
function factorIterationMatrix(tab: RosenbrockTableau, wk: Work, h: number, stats: SolverStats): boolean {
  const { n, jac, w, piv } = wk;
  const diag = 1 / (tab.gamma * h);
  for (let i = 0; i < n * n; i++) w[i] = -jac[i];
  for (let i = 0; i < n; i++) w[i * n + i] += diag;
  stats.factorizations++;
  return luFactor(w, n, piv);
}

/** All stages of one step; leaves y1 and returns the scaled RMS error (NaN/∞ when non-finite). */
function rosenbrockStages(
  system: OdeSystem,
  tab: RosenbrockTableau,
  wk: Work,
  t: number,
  h: number,
  rtol: number,
  atol: number,
  stats: SolverStats,
): number {
  const { n, u, y0, y1, f0, ft, arg, rhs, w, piv, scale } = wk;
  for (let s = 0; s < tab.stages; s++) {
    const aRow = tab.a[s];
    const cRow = tab.c[s];
    if (s === 0) {
      rhs.set(f0);
    } else {
      for (let i = 0; i < n; i++) {
        let sum = y0[i];
        for (let j = 0; j < s; j++) sum += aRow[j] * u[j * n + i];
        arg[i] = sum;
      }
      system.derivative(t + tab.alpha[s] * h, arg, rhs);
      stats.derivativeEvaluations++;
    }
    const g = tab.gammaSum[s] * h;
    for (let i = 0; i < n; i++) {
      let sum = rhs[i] + g * ft[i];
      for (let j = 0; j < s; j++) sum += (cRow[j] / h) * u[j * n + i];
      rhs[i] = sum;
    }
    luSolve(w, n, piv, rhs);
    u.set(rhs, s * n);
  }
  for (let i = 0; i < n; i++) {
    let sum = y0[i];
    for (let j = 0; j < tab.stages; j++) sum += tab.m[j] * u[j * n + i];
    y1[i] = sum;
  }
  fillScale(y0, y1, rtol, atol, scale);
  let acc = 0;
  for (let i = 0; i < n; i++) {
    let err = 0;
    for (let j = 0; j < tab.stages; j++) err += tab.e[j] * u[j * n + i];
    acc += (err / scale[i]) ** 2;
  }
  return Math.sqrt(acc / n);
}

function denseCoefficients(tab: RosenbrockTableau, wk: Work): void {
  const { n, u, y0, y1, coef } = wk;
  const d2 = tab.dense[0];
  const d3 = tab.dense[1];
  for (let i = 0; i < n; i++) {
    let v2 = 0;
    let v3 = 0;
    for (let j = 0; j < tab.stages; j++) {
      const uj = u[j * n + i];
      v2 += d2[j] * uj;
      v3 += d3[j] * uj;
    }
    coef[i] = y0[i];
    coef[n + i] = y1[i] - y0[i];
    coef[2 * n + i] = v2;
    coef[3 * n + i] = v3;
  }
}

function nonFinite(t: number, component: number, what: string): IntegrationFailure {
  return new IntegrationFailure('non-finite', t, component, `non-finite ${what} in state component ${component} at t = ${t}`);
}

/** Hairer's RODAS step bounds: h may shrink by at most 5 and grow by at most 6 per step. */
const FAC_SHRINK = 5;
const FAC_GROW = 1 / 6;
const SAFETY = 0.9;

/**
 * Adaptive Rosenbrock integration from t0 to exactly t1 (y in: y(t0), out: y(t1)), with
 * Gustafsson's predictive controller as in RODAS. The Jacobian is evaluated once per
 * accepted step and kept across rejections (the state has not moved); the iteration
 * matrix is refactored for every new step size.
 */
export function integrateRosenbrock(
  system: OdeSystem,
  t0: number,
  t1: number,
  y: Float64Array,
  options: RosenbrockOptions,
  store: DenseStore,
  stats: SolverStats,
  tableau: RosenbrockTableau = RODAS4,
): { lastStep: number } {
  if (!(t1 >= t0)) throw new RangeError(`integration span must satisfy t0 ≤ t1 (got ${t0}, ${t1})`);
  const span = t1 - t0;
  if (span === 0) return { lastStep: options.initialStep ?? 0 };
  const { rtol, atol, maxSteps } = options;
  const n = system.dimension;
  const wk = makeWork(tableau, n);
  wk.y0.set(y);
  const bad0 = firstNonFinite(wk.y0);
  if (bad0 >= 0) throw nonFinite(t0, bad0, 'initial value');
  system.derivative(t0, wk.y0, wk.f0);
  stats.derivativeEvaluations++;
  const badF = firstNonFinite(wk.f0);
  if (badF >= 0) throw nonFinite(t0, badF, 'derivative');

  const hMax = Math.min(options.maxStep ?? span, span);
  let h =
    // A hint too small to make progress (the first step of a segment that began near zero) is
    // replaced by the automatic estimate.
    options.initialStep !== undefined && options.initialStep > 1e3 * minimumStep(t0, t1)
      ? Math.min(options.initialStep, hMax)
      : initialStepSize(system, t0, wk.y0, wk.f0, tableau.order, rtol, atol, hMax, wk.y1, wk.arg, stats);

  const expo = 1 / tableau.order;
  let t = t0;
  let attempts = 0;
  let accepted = 0;
  let rejectedLast = false;
  let needJacobian = true;
  let nonFiniteComponent = -1;
  let hAcc = 0;
  let errAcc = 0;

  for (;;) {
    if (attempts >= maxSteps) {
      const c = fastestComponent(wk.y0, wk.f0, rtol, atol);
      throw new IntegrationFailure('too-many-steps', t, c, `more than ${maxSteps} steps before t = ${t1} (stopped at t = ${t})`);
    }
    if (h < minimumStep(t, t1)) {
      if (nonFiniteComponent >= 0) throw nonFinite(t, nonFiniteComponent, 'value on every trial step');
      const c = fastestComponent(wk.y0, wk.f0, rtol, atol);
      throw new IntegrationFailure('step-size-underflow', t, c, `step size ${h} underflows at t = ${t}`);
    }
    const last = t + 1.01 * h >= t1;
    const hStep = last ? t1 - t : h;
    attempts++;

    if (needJacobian) {
      system.jacobian(t, wk.y0, wk.jac);
      stats.jacobianEvaluations++;
      timeDerivative(system, t, t0, t1, wk, stats);
      needJacobian = false;
    }
    if (!factorIterationMatrix(tableau, wk, hStep, stats)) {
      stats.rejectedSteps++;
      rejectedLast = true;
      h = 0.5 * hStep;
      continue;
    }

    const err = rosenbrockStages(system, tableau, wk, t, hStep, rtol, atol, stats);
    const bad = firstNonFinite(wk.y1);
    if (bad >= 0 || !(err <= 1)) {
      nonFiniteComponent = bad;
      stats.rejectedSteps++;
      rejectedLast = true;
      const fac = Number.isFinite(err) ? Math.max(FAC_GROW, Math.min(FAC_SHRINK, err ** expo / SAFETY)) : FAC_SHRINK;
      // A first step that fails is usually far too large (Hairer's RODAS divides by 10).
      h = accepted === 0 ? hStep * 0.1 : hStep / fac;
      continue;
    }
    nonFiniteComponent = -1;

    let fac = Math.max(FAC_GROW, Math.min(FAC_SHRINK, err ** expo / SAFETY));
    if (accepted > 0) {
      const facGus = Math.max(FAC_GROW, Math.min(FAC_SHRINK, ((hAcc / hStep) * (err * err / errAcc) ** expo) / SAFETY));
      fac = Math.max(fac, facGus);
    }
    hAcc = hStep;
    errAcc = Math.max(1e-2, err);
    let hNew = hStep / fac;
    if (rejectedLast) hNew = Math.min(hNew, hStep);
    rejectedLast = false;

    denseCoefficients(tableau, wk);
    store.append(t, hStep, hermiteForm, wk.coef);
    stats.acceptedSteps++;
    accepted++;
    t = last ? t1 : t + hStep;
    wk.y0.set(wk.y1);
    if (last) {
      y.set(wk.y0);
      return { lastStep: Math.max(hNew, h) };
    }
    system.derivative(t, wk.y0, wk.f0);
    stats.derivativeEvaluations++;
    const badEnd = firstNonFinite(wk.f0);
    if (badEnd >= 0) throw nonFinite(t, badEnd, 'derivative');
    needJacobian = true;
    h = Math.min(hNew, hMax);
  }
}
