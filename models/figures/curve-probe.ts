/**
 * Evaluates a finished trajectory at any time: the state, its slope f(x) and its
 * curvature J·f (the system is autonomous between breakpoints), with the infusion
 * rates that are in force at that time and side. Metrics use it to place peaks and
 * threshold crossings on the true curve rather than on the output grid.
 */
import type { Schedule } from '../building/events.ts';
import type { Trajectory } from '../solving/numerics/dense-store.ts';
import type { CompartmentSystem } from '../building/system.ts';

export class CurveProbe {
  readonly state: Float64Array;
  readonly slope: Float64Array;
  readonly curvature: Float64Array;
  private readonly jac: Float64Array;

  constructor(
    readonly trajectory: Trajectory,
    readonly system: CompartmentSystem,
    readonly schedule: Schedule,
  ) {
    const n = system.dimension;
    this.state = new Float64Array(n);
    this.slope = new Float64Array(n);
    this.curvature = new Float64Array(n);
    this.jac = new Float64Array(n * n);
  }

  useRatesOf(breakpoint: number): void {
    const input = this.system.input;
    input.fill(0);
    input.set(this.schedule.breakpoints[breakpoint].rates);
  }

  /** Slope of the given state with the rates of `breakpoint`, into `out`. */
  slopeOf(state: Float64Array, breakpoint: number, out: Float64Array): void {
    this.useRatesOf(breakpoint);
    this.system.derivative(0, state, out);
  }

  /** curvature ← J(state)·slope, for the state and slope last written into this probe. */
  updateCurvature(): void {
    const n = this.system.dimension;
    this.system.jacobian(0, this.state, this.jac);
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += this.jac[i * n + j] * this.slope[j];
      this.curvature[i] = s;
    }
  }
}
