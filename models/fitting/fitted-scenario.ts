/**
 * The fitted scenario: the scenario as the user wrote it, with each estimate written in as its
 * quantity's typical value (the subject's value divided by its covariate relations, which are
 * kept) and its cv dropped — for map the individual's values, no longer a population's — so
 * it can be saved and simulated further. The `fit` section is removed (its quantities no longer
 * vary, so a map fit of the copy would have no prior), so are the population's correlations
 * that name an estimated quantity, and the description says what was done.
 */
import type { ModelQuantity, Scenario } from '../scenario/schema.ts';
import type { Parameters } from './parameters.ts';
import { writtenWith } from './predictor.ts';
import { splitPath } from './quantities.ts';
import type { FitEstimate } from './result.ts';
import type { FitPlan } from './settings.ts';

function shown(value: number, unit: string): number | string {
  const v = Number(value.toPrecision(8));
  return unit === 'fraction' ? v : `${v} ${unit}`;
}

export function fittedScenario(s: Scenario, input: unknown, plan: FitPlan, params: Parameters, estimates: Record<string, FitEstimate>): unknown {
  const copy = JSON.parse(JSON.stringify(input)) as Record<string, unknown>;
  plan.estimated.forEach((e, i) => {
    const { list, index, field } = splitPath(e.slot.path);
    const rows = copy[list] as Record<string, unknown>[];
    const estimate = estimates[e.label];
    const raw = rows[index][field] as ModelQuantity;
    rows[index][field] = writtenWith(raw, shown(params.written(i, estimate.value), estimate.unit));
  });
  delete copy.fit;
  // A correlation needs both quantities to vary; the estimated ones no longer do.
  const names = new Set(plan.estimated.flatMap((e) => (e.slot.name ? [e.slot.name] : [])));
  const population = copy.population as { correlations?: { between: [string, string] }[] } | undefined;
  if (population?.correlations) population.correlations = population.correlations.filter((c) => !c.between.some((n) => names.has(n)));
  const how = plan.objective === 'map' ? 'maximum a posteriori (the population as the prior)' : `weighted least squares (weights ${plan.weighting})`;
  const note = `Fitted by ${how} to ${plan.usable.length} measured level${plan.usable.length === 1 ? '' : 's'}: ${plan.estimated.map((e) => e.label).join(', ')} written in as this subject's values, their between-subject variability removed. Model outputs for review by a clinician, not dosing advice.`;
  const before = typeof s.description === 'string' ? `${s.description} ` : '';
  copy.description = (before + note).slice(-2000);
  return copy;
}
