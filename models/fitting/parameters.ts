/**
 * The unknowns of a fit and how they map to the quantities' values. The optimiser sees an
 * unconstrained-looking vector p with box bounds:
 * - wls: p_i = ln(w/t) (log scale) or logit(w) − logit(t) (fractions), w the written value,
 *   t the written typical; bounds ±ln 1000, i.e. typical ×/÷ 1000 (odds ×/÷ 1000 for a fraction);
 * - map: p = u, the whitened deviations: d = L·u are the standard normal effects exactly as the
 *   population applies them (value = base·exp(spread·d), or logistic(logit(base) + spread·d)),
 *   so the prior term is uᵀu; bounds |u_i| ≤ ln 1000 / spread_i (typical ×/÷ 1000 for
 *   uncorrelated effects).
 * `base` is the typical value times the subject's covariate relations (the value at d = 0).
 */
import type { FitPlan } from './settings.ts';

const LN_1000 = Math.log(1000);

export function logit(x: number): number {
  return Math.log(x / (1 - x));
}

export function logistic(t: number): number {
  return t >= 0 ? 1 / (1 + Math.exp(-t)) : Math.exp(t) / (1 + Math.exp(t));
}

export class Parameters {
  readonly count: number;
  readonly lower: Float64Array;
  readonly upper: Float64Array;
  /** Effects d of every varying quantity for the current u (map), in the plan's factor order. */
  readonly effects: Float64Array;
  private readonly size: number;

  constructor(
    readonly plan: FitPlan,
    /** Each estimated quantity's value for this subject at p = 0 (typical with covariate relations). */
    readonly base: Float64Array,
  ) {
    this.count = plan.estimated.length;
    this.size = plan.estimated.length + plan.others.length;
    this.effects = new Float64Array(this.size);
    this.lower = new Float64Array(this.count);
    this.upper = new Float64Array(this.count);
    plan.estimated.forEach((e, i) => {
      const b = plan.objective === 'map' ? LN_1000 / (e.spread as number) : LN_1000;
      this.lower[i] = -b;
      this.upper[i] = b;
    });
  }

  get map(): boolean {
    return this.plan.objective === 'map';
  }

  /** d = L·u with u zero beyond the estimated quantities: the others take their conditional mean. */
  setEffects(u: Float64Array): Float64Array {
    const L = this.plan.factor as Float64Array;
    const n = this.size;
    const k = this.count;
    for (let r = 0; r < n; r++) {
      let sum = 0;
      for (let c = 0; c < Math.min(k, r + 1); c++) sum += L[r * n + c] * u[c];
      this.effects[r] = sum;
    }
    return this.effects;
  }

  /** The subject's value of estimated quantity i at p (for map, after setEffects(p)). */
  value(i: number, p: Float64Array): number {
    const e = this.plan.estimated[i];
    const b = this.base[i];
    if (this.map) {
      const t = (e.spread as number) * this.effects[i];
      return e.slot.scale === 'log' ? b * Math.exp(t) : logistic(logit(b) + t);
    }
    const mult = b / e.typical;
    return e.slot.scale === 'log' ? b * Math.exp(p[i]) : mult * logistic(logit(e.typical) + p[i]);
  }

  /** The value to write as the quantity's typical so that the subject gets `value` (its covariate relations kept). */
  written(i: number, value: number): number {
    return value / (this.base[i] / this.plan.estimated[i].typical);
  }

  /**
   * d value_i / d (the transformed coordinate of i): in wls p_i itself, in map the effect d_i
   * (the delta method then takes the covariance of d = L₁₁u).
   */
  slope(i: number, value: number): number {
    const e = this.plan.estimated[i];
    if (this.map) {
      const s = e.spread as number;
      return e.slot.scale === 'log' ? value * s : value * (1 - value) * s;
    }
    if (e.slot.scale === 'log') return value;
    const mult = this.base[i] / e.typical;
    const w = value / mult;
    return mult * w * (1 - w);
  }

  /**
   * A direction v in the optimiser's coordinates as relative changes of the values:
   * δvalue_i / value_i = slope_i · δc_i / value_i, c_i the coordinate `slope` differentiates by
   * (p_i in wls; d = L₁₁v in map). Log, logit and whitened coordinates weigh a change
   * differently (a logit step moves F by (1 − F) of a log step), so a direction is compared
   * across quantities only after this.
   */
  relativeDirection(v: Float64Array, values: readonly number[]): Float64Array {
    const k = this.count;
    const out = new Float64Array(k);
    for (let i = 0; i < k; i++) {
      let c = v[i];
      if (this.map) {
        const L = this.plan.factor as Float64Array;
        c = 0;
        for (let j = 0; j <= i; j++) c += L[i * this.size + j] * v[j];
      }
      out[i] = (this.slope(i, values[i]) * c) / values[i];
    }
    return out;
  }
}
