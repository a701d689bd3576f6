/**
 * Proposals on the basis the `propose` block asks for: "typical" (proposeRegimens: the scenario's
 * own subject, with a loading dose and the time to the window) or "population" (every candidate
 * on the same virtual subjects, ranked by joint attainment). The command line, the API and the
 * report all come through here, so they answer alike.
 */
import { normaliseScenario, parseScenario } from '../scenario/normalize.ts';
import type { Outcome } from '../scenario/problems.ts';
import { proposeForPopulation, type PopulationProposalLimits } from './population-proposals.ts';
import { proposeRegimens, type ProposeResult } from './propose.ts';
import { readPropose } from './settings.ts';

export function proposeByBasis(input: unknown, limits: PopulationProposalLimits): Outcome<ProposeResult> {
  const parsed = parseScenario(input);
  if (!parsed.ok) return parsed;
  if (parsed.value.propose?.basis !== 'population') return proposeRegimens(input);
  const model = normaliseScenario(parsed.value);
  if (!model.ok) return model;
  const settings = readPropose(parsed.value, model.value);
  if (!settings.ok) return settings;
  return proposeForPopulation(parsed.value, model.value, settings.value, limits);
}
