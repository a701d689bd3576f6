/**
 * Explicit Runge–Kutta methods as data. One engine (explicit-rk.ts) drives every
 * tableau; nothing method-specific lives in code except what these fields describe.
 *
 * Stage numbering used by `dense` and `stiffness`: the "full stage list" is
 *   0 … stages−1        the main stages k_j,
 *   stages              f(t+h, y1) — only when `fsal` is false (with FSAL it is stage stages−1),
 *   then                the extra dense-output stages, in order.
 * This is the numbering of Hairer's DOP853 (stages 1–12, 13 = f(x+h, y1), 14–16 extra).
 */
import type { DenseForm } from './dense-store';

export type Row = readonly number[];

/** Continuous extension beyond the cubic Hermite part, in Hairer's nested form. */
export interface DenseOutputData {
  /** Nodes of stages evaluated only on accepted steps, for the interpolant. */
  readonly extraC: Row;
  /** Their coefficient rows, indexed over the full stage list (row r may use stages < its own index). */
  readonly extraA: readonly Row[];
  /**
   * Each row gives one extra vector h·Σ_j d_j k_j (full stage list) after Hairer's four
   * Hermite-like vectors (y0, Δ, h f0 − Δ, Δ − h f1 − (h f0 − Δ)).
   */
  readonly d: readonly Row[];
}

/** Hairer's stiffness test: h·‖f(y1) − k_stage‖ / ‖y1 − Y_stage‖ against a threshold. */
export interface StiffnessTest {
  /** Index of the stage compared with the final point (both at c = 1). */
  readonly stage: number;
  /** The real stability-interval length of the method (Hairer: 3.25 for DOPRI5, 6.1 for DOP853). */
  readonly threshold: number;
}

export interface ControllerSettings {
  /** Gustafsson PI exponent on the previous error; 0 gives the elementary controller. */
  readonly beta: number;
  readonly safety: number;
  /** Bounds on h_new / h. */
  readonly facMin: number;
  readonly facMax: number;
}

export interface ExplicitTableau {
  readonly name: string;
  readonly order: number;
  /** Order of the embedded solution; null for methods used only with a fixed step. */
  readonly embeddedOrder: number | null;
  readonly stages: number;
  readonly c: Row;
  /** Strictly lower-triangular rows: a[i] has i entries. */
  readonly a: readonly Row[];
  readonly b: Row;
  /** Error weights b − b̂ over the main stages; null for fixed-step methods. */
  readonly e: Row | null;
  /**
   * A second, lower-order error estimate combined with `e` as in DOP853
   * (err = err5² / sqrt(err5² + 0.01·err3²)); null for an ordinary embedded pair.
   */
  readonly e3: Row | null;
  /** The last stage is f(t+h, y1) (its a-row equals b), so it is the next step's first stage. */
  readonly fsal: boolean;
  /** Method-specific continuous extension; null means the Hermite vectors alone (hermiteVectors). */
  readonly dense: DenseOutputData | null;
  /**
   * How many of the four Hermite vectors (y0, Δ, h f0 − Δ, Δ − h f1 − (h f0 − Δ)) a step
   * keeps, which sets the interpolant between steps when `dense` is null: 2 the straight line
   * from y0 to y1, 3 the quadratic through y0 and y1 with slope f0 at y0, 4 the cubic Hermite.
   * A method's interpolant should be of its own order and no higher: a higher one only adds
   * wiggles (a cubic through non-negative Euler steps dips below zero) and memory. 4 with `dense`.
   */
  readonly hermiteVectors: 2 | 3 | 4;
  readonly stiffness: StiffnessTest | null;
  /**
   * Check of the continuous extension between steps: its defect p'(t) − f(t, p(t)) at
   * θ = 0.5 is weighted by `weight`·h and held to the tolerance like the step error
   * (defect control, Enright 1989, "A new error-control for initial value solvers",
   * Appl. Math. Comput. 31). null when the interpolant is as accurate as the steps.
   */
  readonly denseCheck: { readonly weight: number } | null;
  readonly controller: ControllerSettings;
}

/** dp/dθ of a dense form (divide by h for the time derivative). */
export interface DenseSlope {
  slope(theta: number, coef: Float64Array, offset: number, n: number, out: Float64Array): void;
}

const formsByCount = new Map<number, DenseForm & DenseSlope>();

/**
 * The nested form y0 + θ(v1 + θ'(v2 + θ(v3 + θ'(v4 + …)))) with θ' = 1 − θ used by Hairer's
 * DOPRI5 (5 vectors) and DOP853 (8 vectors); with 4 vectors it is the cubic Hermite form.
 */
export function alternatingForm(vectors: number): DenseForm & DenseSlope {
  const cached = formsByCount.get(vectors);
  if (cached) return cached;
  const form: DenseForm & DenseSlope = {
    vectors,
    evaluate(theta, coef, offset, n, out) {
      const theta1 = 1 - theta;
      // Factors alternate from the top vector down; taken two at a time, so no test per vector.
      const first = ((vectors - 2) & 1) === 0 ? theta : theta1;
      const second = first === theta ? theta1 : theta;
      for (let i = 0; i < n; i++) {
        let acc = coef[offset + (vectors - 1) * n + i];
        let v = vectors - 2;
        for (; v >= 1; v -= 2) {
          acc = coef[offset + v * n + i] + first * acc;
          acc = coef[offset + (v - 1) * n + i] + second * acc;
        }
        if (v === 0) acc = coef[offset + i] + first * acc;
        out[i] = acc;
      }
    },
    // The same nesting differentiated: (a + φ·b)' = φ'·b + φ·b', with φ = θ (φ' = 1) or 1 − θ (φ' = −1).
    slope(theta, coef, offset, n, out) {
      const theta1 = 1 - theta;
      for (let i = 0; i < n; i++) {
        let acc = coef[offset + (vectors - 1) * n + i];
        let dacc = 0;
        for (let v = vectors - 2; v >= 0; v--) {
          const even = (v & 1) === 0;
          dacc = (even ? 1 : -1) * acc + (even ? theta : theta1) * dacc;
          acc = coef[offset + v * n + i] + (even ? theta : theta1) * acc;
        }
        out[i] = dacc;
      }
    },
  };
  formsByCount.set(vectors, form);
  return form;
}

/** Length of the full stage list (see the module comment). */
export function fullStageCount(tab: ExplicitTableau): number {
  return tab.stages + (tab.fsal ? 0 : 1) + (tab.dense ? tab.dense.extraC.length : 0);
}

/** Index of f(t+h, y1) in the full stage list. */
export function endSlopeIndex(tab: ExplicitTableau): number {
  return tab.fsal ? tab.stages - 1 : tab.stages;
}
