/**
 * Parameters.relativeDirection, which the identifiability message weighs the weakest direction
 * by: a direction v in the optimiser's coordinates as relative changes of the values, checked
 * against central differences of the values themselves, (value(x + hv) − value(x − hv))/(2h·value)
 * (Nocedal & Wright §8.1: error O(h²), ~1e-10 at h = 1e-5 here). Both coordinate systems: wls
 * (log and logit scales) and map (whitened, d = L·u, with a correlation and a varying quantity
 * left out of the fit, so L is wider than the estimated block). Built on samples/orvanix-fit.json
 * (invented) with a cv on bioavailability.
 */
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { Parameters } from '../../models/fitting/parameters.ts';
import { readFitPlan } from '../../models/fitting/settings.ts';
import { buildModel, parseScenario } from '../../models/scenario/normalize.ts';

type Sample = { doses: Record<string, unknown>[]; fit: Record<string, unknown> };
const sample = JSON.parse(readFileSync(resolve(import.meta.dirname, '../../samples/orvanix-fit.json'), 'utf8')) as Sample;

function parametersFor(objective: 'wls' | 'map'): Parameters {
  const s = structuredClone(sample);
  s.doses[0].bioavailability = { typical: 0.8, cv: '20%', name: 'F' };
  // CL and V correlated (0.3), so in map d_V = 0.3·u_CL + 0.95·u_V; ka stays out of the fit, so
  // the factor is 4 × 4 for 3 unknowns.
  s.fit = { estimate: ['CL', 'V', 'F'], objective };
  const parsed = parseScenario(s);
  if (!parsed.ok) throw new Error(JSON.stringify(parsed.problems));
  const built = buildModel(parsed.value);
  if (!built.ok) throw new Error(JSON.stringify(built.problems));
  const plan = readFitPlan(parsed.value, built.value);
  if (!plan.ok) throw new Error(JSON.stringify(plan.problems));
  return new Parameters(plan.value, Float64Array.from(plan.value.estimated, (e) => e.typical));
}

function valuesAt(params: Parameters, x: Float64Array): number[] {
  if (params.map) params.setEffects(x);
  return Array.from(x, (_, i) => params.value(i, x));
}

describe('a direction as relative changes of the values', () => {
  for (const objective of ['wls', 'map'] as const) {
    it(`${objective}: agrees with central differences of the values to 1e-8`, () => {
      const params = parametersFor(objective);
      const x = Float64Array.from([0.3, -0.7, 0.4]);
      const v = Float64Array.from([0.6, -0.5, 0.62]);
      const h = 1e-5;
      const at = (sign: number) => valuesAt(params, x.map((xi, i) => xi + sign * h * v[i]));
      const [plus, minus, here] = [at(1), at(-1), valuesAt(params, x)];
      const relative = params.relativeDirection(v, here);
      here.forEach((value, i) => {
        const byDifference = (plus[i] - minus[i]) / (2 * h * value);
        expect(Math.abs(relative[i] - byDifference)).toBeLessThan(1e-8);
      });
      // The logit scale at work: F's relative change is (1 − F) of its coordinate's step (wls),
      // not the step itself as for CL and V on their log scales.
      if (objective === 'wls') {
        expect(relative[0]).toBeCloseTo(v[0], 12);
        expect(relative[2]).toBeCloseTo((1 - here[2]) * v[2], 12);
      }
    });
  }
});
