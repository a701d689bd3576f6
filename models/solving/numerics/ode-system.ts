/**
 * The contract between a model and the integrators: an autonomous-between-events
 * system y' = f(t, y) that writes into caller-owned buffers (no allocation per call).
 */
export interface OdeSystem {
  readonly dimension: number;
  /** Writes f(t, y) into `out` (length `dimension`). */
  derivative(t: number, y: Float64Array, out: Float64Array): void;
  /** Writes the Jacobian ∂f/∂y into `out`, row-major (out[i*n + j] = ∂f_i/∂y_j). */
  jacobian(t: number, y: Float64Array, out: Float64Array): void;
  /**
   * The same derivative as straight-line statements, for the compiled step kernels
   * (rk-step-compiler.ts); absent, the kernels call derivative(). Only for systems
   * that do not depend on t between events.
   */
  readonly code?: DerivativeCode;
}

/**
 * An autonomous derivative written out as statements over scalar locals. The statements
 * may read `p[j]` (params, fixed) and `u[i]` (input, read at every call), and call `Math`;
 * they must declare each f(i) with `let` and may declare block-scoped temporaries.
 * Identical arithmetic, in the same order, as derivative(): compiled and interpreted runs
 * agree bit for bit.
 */
export interface DerivativeCode {
  /** Identifies the emitted statements: systems with equal shapes emit the same code. */
  readonly shape: string;
  readonly params: Float64Array;
  readonly input: Float64Array;
  emit(y: (i: number) => string, f: (i: number) => string): string;
}

/** Counters every integrator adds to; the driver reports them as diagnostics. */
export interface SolverStats {
  acceptedSteps: number;
  rejectedSteps: number;
  /** Of the rejected steps, those rejected because the values between the steps missed the tolerance. */
  denseRejections: number;
  derivativeEvaluations: number;
  jacobianEvaluations: number;
  /** Linear solves' LU factorisations (stiff method only). */
  factorizations: number;
  /** Times the automatic method switched from the explicit pair to the stiff method. */
  stiffSwitches: number;
}

export function emptyStats(): SolverStats {
  return {
    acceptedSteps: 0,
    rejectedSteps: 0,
    denseRejections: 0,
    derivativeEvaluations: 0,
    jacobianEvaluations: 0,
    factorizations: 0,
    stiffSwitches: 0,
  };
}

/**
 * Why an integration gave up: the step shrank below what t can resolve; more steps were
 * needed than the budget (solver.maxSteps) allows; a value became non-finite; or the dense
 * store would grow past its memory ceiling (DENSE_STORE_MAX_BYTES in dense-store.ts).
 */
export type FailureReason = 'step-size-underflow' | 'too-many-steps' | 'non-finite' | 'too-much-memory';

/** A numerical failure inside a segment; the driver turns it into an error value naming time and state index. */
export class IntegrationFailure extends Error {
  constructor(
    readonly reason: FailureReason,
    readonly time: number,
    /** Index of the first offending state component, when one can be named. */
    readonly component: number | null,
    message: string,
  ) {
    super(message);
    this.name = 'IntegrationFailure';
  }
}
