/**
 * The scenario's `fit` section read into a plan: each quantity to estimate resolved by name or
 * path to its slot, typical value and spread; the objective and weighting with their defaults;
 * the residual error and the prior's correlations. Every problem names its JSON path.
 */
import type { Model } from '../building/model.ts';
import type { Observation } from '../levels/observation.ts';
import { correlationFactor } from '../population/correlation.ts';
import { varyingQuantities } from '../population/varying.ts';
import type { Problem } from '../scenario/problems.ts';
import type { FitSettings, Scenario } from '../scenario/schema.ts';
import { readShare } from '../scenario/shares.ts';
import { convertQuantity } from '../scenario/units.ts';
import { logitNormalSpread, logNormalSpread } from '../subject/variability.ts';
import { isAdjusted, quantitySlots, writtenTypical, type QuantitySlot } from './quantities.ts';
import { readResidualError, type ResidualError } from './residual-error.ts';

export type Objective = NonNullable<FitSettings['objective']>;
export type Weighting = NonNullable<FitSettings['weighting']>;

export interface EstimatedQuantity {
  slot: QuantitySlot;
  /** The name, else the path: the key of `estimates` in the result. */
  label: string;
  /** The written typical value, in the scenario's units (a fraction for bioavailability). */
  typical: number;
  /** MAP: the SD of the normal deviate (of the log, or of the logit for a fraction), as the population applies it; null without a cv. */
  spread: number | null;
}

export interface FitPlan {
  estimated: EstimatedQuantity[];
  objective: Objective;
  weighting: Weighting;
  residual: ResidualError | null;
  /** The levels fitted: every observation with a value that is not below its limit. */
  usable: Observation[];
  /** Levels below their limit counted as censored (fit.belowLimit "censored"): the probability of a level below the limit. */
  censored: Observation[];
  /** Levels left out (below the limit under "exclude", or without a value), each with its path. */
  excluded: Observation[];
  /**
   * MAP: the lower Cholesky factor of the correlations of every varying quantity, the estimated
   * ones first (in `estimated` order), then the others (`others`, by path). The deviations are
   * d = L·u with u zero beyond the estimated ones, so the others take their conditional mean given
   * the estimated ones, and the prior term is uᵀu = d₁ᵀR₁₁⁻¹d₁.
   */
  factor: Float64Array | null;
  others: string[];
}

type Read = { ok: true; value: FitPlan } | { ok: false; problems: Problem[] };

function looksLikePath(entry: string): boolean {
  return /[[.]/.test(entry);
}

function resolve(entry: string, at: string, slots: QuantitySlot[], problems: Problem[]): QuantitySlot | null {
  if (looksLikePath(entry)) {
    const slot = slots.find((q) => q.path === entry.replace(/\s+/g, ''));
    if (slot) return slot;
    problems.push({ path: at, message: `no model quantity at '${entry}' — quantities are at ${slots.map((q) => q.path).join(', ')}` });
    return null;
  }
  const slot = slots.find((q) => q.name === entry);
  if (slot) return slot;
  const names = slots.flatMap((q) => (q.name ? [q.name] : []));
  problems.push({
    path: at,
    message: names.length > 0
      ? `no quantity named '${entry}' — named quantities are ${names.join(', ')} (or give a JSON path such as ${slots[0]?.path ?? 'transfers[0].cl'})`
      : `no quantity named '${entry}' — no quantity has a name; give one a \`name\` or write its JSON path, such as ${slots[0]?.path ?? 'transfers[0].cl'}`,
  });
  return null;
}

function typicalOf(slot: QuantitySlot, model: Model, problems: Problem[]): number | null {
  const written = writtenTypical(slot.written);
  const at = isAdjusted(slot.written) ? `${slot.path}.typical` : slot.path;
  const fail = (path: string, message: string) => problems.push({ path, message });
  if (slot.dimension === null) {
    const f = readShare(written, at, { fail }, 'a bioavailability');
    if (f === null) return null;
    if (!(f > 0 && f < 1)) fail(at, `is ${f}; a fitted fraction needs a starting value strictly between 0 and 1`);
    return f > 0 && f < 1 ? f : null;
  }
  const c = convertQuantity(written, slot.dimension, model.units);
  if (!c.ok) {
    fail(at, c.message);
    return null;
  }
  if (!(c.value > 0)) {
    fail(at, `is ${c.value}; a fitted quantity is estimated on a log scale, so its starting value must be positive`);
    return null;
  }
  return c.value;
}

function spreadOf(slot: QuantitySlot, typical: number, problems: Problem[]): number | null {
  const q = slot.written;
  if (!isAdjusted(q) || q.cv === undefined) return null;
  const cv = readShare(q.cv, `${slot.path}.cv`, { fail: (path, message) => problems.push({ path, message }) }, 'a coefficient of variation', 5000);
  if (cv === null) return null;
  if (slot.dimension !== null) return logNormalSpread(cv);
  const s = logitNormalSpread(typical, cv);
  if (!s.ok) problems.push({ path: `${slot.path}.cv`, message: s.message });
  return s.ok ? s.spread : null;
}

/** The correlation matrix over the varying quantities in `order` (paths), from population.correlations by name. */
function priorFactor(s: Scenario, order: string[], problems: Problem[]): Float64Array {
  const n = order.length;
  const names = varyingQuantities(s);
  const byName = new Map(names.flatMap((v) => (v.name ? [[v.name, order.indexOf(v.path)] as const] : [])));
  const matrix = new Float64Array(n * n);
  for (let i = 0; i < n; i++) matrix[i * n + i] = 1;
  (s.population?.correlations ?? []).forEach((c, k) => {
    const i = byName.get(c.between[0]);
    const j = byName.get(c.between[1]);
    if (i === undefined || j === undefined || i < 0 || j < 0) {
      problems.push({ path: `population.correlations[${k}].between`, message: 'names a quantity without a cv (or no quantity); a correlation is between two varying quantities' });
      return;
    }
    matrix[i * n + j] = c.value;
    matrix[j * n + i] = c.value;
  });
  const labels = order.map((p) => names.find((v) => v.path === p)?.name ?? p);
  const f = correlationFactor(matrix, n, labels);
  if (!f.ok) {
    problems.push({ path: 'population.correlations', message: f.message });
    return new Float64Array(n * n);
  }
  return f.factor;
}

function defaultObjective(estimated: EstimatedQuantity[], residual: ResidualError | null): Objective {
  // MAP needs a prior for every estimated quantity (its cv) and the residual error to weigh the levels against it.
  return residual !== null && estimated.every((e) => e.spread !== null) ? 'map' : 'wls';
}

/**
 * Default weighting: the residual error model when the population gives one; otherwise 1/y²,
 * a constant coefficient of variation of the assay — proportional error is the usual
 * assumption for concentrations measured over orders of magnitude (common practice).
 */
function defaultWeighting(residual: ResidualError | null): Weighting {
  return residual !== null ? 'residual' : '1/y2';
}

export function readFitPlan(s: Scenario, model: Model, overrides: { objective?: Objective } = {}): Read {
  const problems: Problem[] = [];
  const fit = s.fit;
  if (!fit) return { ok: false, problems: [{ path: 'fit', message: 'the scenario has no `fit` section: say which quantities to estimate, e.g. { "estimate": ["CL", "V"] }' }] };
  const slots = quantitySlots(s);
  const estimated: EstimatedQuantity[] = [];
  const seen = new Map<string, number>();
  fit.estimate.forEach((entry, i) => {
    const at = `fit.estimate[${i}]`;
    const slot = resolve(entry, at, slots, problems);
    if (!slot) return;
    if (seen.has(slot.path)) {
      problems.push({ path: at, message: `'${entry}' is already estimated at fit.estimate[${seen.get(slot.path)}]` });
      return;
    }
    seen.set(slot.path, i);
    const typical = typicalOf(slot, model, problems);
    if (typical === null) return;
    estimated.push({ slot, label: slot.name ?? slot.path, typical, spread: spreadOf(slot, typical, problems) });
  });
  const residual = s.population?.residual ? readResidualError(s.population.residual, model.units, problems) : null;
  const objective = overrides.objective ?? fit.objective ?? defaultObjective(estimated, residual);
  const weighting = fit.weighting ?? defaultWeighting(residual);
  const objectivePath = overrides.objective ? 'objective (--objective)' : 'fit.objective';
  if (objective === 'map') {
    if (!s.population) problems.push({ path: objectivePath, message: 'map needs a `population` section: its cv on each estimated quantity is the prior, its residual error weighs the levels' });
    else if (!s.population.residual) problems.push({ path: 'population.residual', message: 'a map fit needs the residual error (additive, proportional or both) to weigh the levels against the prior' });
    if (fit.weighting !== undefined && fit.weighting !== 'residual') problems.push({ path: 'fit.weighting', message: `a map fit weighs the levels by population.residual only (the prior is balanced against the levels by it); leave weighting out or write "residual", not "${fit.weighting}"` });
    fit.estimate.forEach((entry, i) => {
      const e = estimated.find((q) => q.slot.path === slots.find((x) => x.name === entry || x.path === entry.replace(/\s+/g, ''))?.path);
      if (e && e.spread === null) problems.push({ path: `fit.estimate[${i}]`, message: `'${entry}' has no cv, so a map fit has no prior for it; give it a cv (as an object with typical and cv) or use objective "wls"` });
    });
  } else if (weighting === 'residual' && residual === null) {
    problems.push({ path: 'fit.weighting', message: '"residual" weighting needs population.residual (additive, proportional or both)' });
  }
  const usable = model.observations.filter((o) => !o.belowLimit && o.concentration !== null);
  const censoring = fit.belowLimit === 'censored';
  const censored = censoring ? model.observations.filter((o) => o.belowLimit && o.limit !== null) : [];
  const excluded = model.observations.filter((o) => !usable.includes(o) && !censored.includes(o));
  if (censoring && residual === null) problems.push({ path: 'fit.belowLimit', message: '"censored" needs population.residual: the probability of a level below the limit depends on the error\'s SD' });
  else if (censoring && objective === 'wls' && weighting !== 'residual') problems.push({ path: 'fit.belowLimit', message: `"censored" weighs levels by population.residual; write weighting "residual", not "${weighting}", or exclude the levels below the limit` });
  if (model.observations.length === 0) problems.push({ path: 'observations', message: 'a fit needs measured levels; the scenario has none' });
  else if (usable.length === 0) problems.push({ path: 'observations', message: 'every level is below its limit or has no value; a fit needs at least one measured level' });
  else if (objective === 'wls' && estimated.length > usable.length + censored.length) {
    problems.push({ path: 'fit.estimate', message: `estimates ${estimated.length} quantities from ${usable.length + censored.length} usable level${usable.length + censored.length === 1 ? '' : 's'}; weighted least squares needs at least as many levels as quantities (one more for standard errors) — estimate fewer, or use map with a prior` });
  }
  if (objective === 'wls' && (weighting === '1/y' || weighting === '1/y2')) {
    usable.forEach((o) => {
      if (!((o.concentration as number) > 0)) problems.push({ path: o.path, message: `a level of 0 cannot be weighted by ${weighting}; use weighting "none" or "residual"` });
    });
  }
  let factor: Float64Array | null = null;
  let others: string[] = [];
  if (objective === 'map' && problems.length === 0) {
    const paths = estimated.map((e) => e.slot.path);
    others = varyingQuantities(s).map((v) => v.path).filter((p) => !paths.includes(p));
    factor = priorFactor(s, [...paths, ...others], problems);
  }
  if (problems.length > 0) return { ok: false, problems };
  return { ok: true, value: { estimated, objective, weighting, residual, usable, censored, excluded, factor, others } };
}
