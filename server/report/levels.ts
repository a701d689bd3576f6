/**
 * The report's sections on measured levels, after the typical subject's (and the population's):
 * non-compartmental analysis when the scenario has observations, the individual's fit when it
 * has `fit`, regimen proposals when it has `propose`. Each is computed in buildReport, in the
 * report's own thread; a fit or a search the scenario asks for but cannot run is refused with
 * its problems (as /api/fit and /api/propose would answer), while NCA — not asked for, only
 * offered — draws its problems in its section.
 */
import type { Model } from '../../models/building/model.ts';
import type { FitResult } from '../../models/fitting/result.ts';
import type { ScenarioNca } from '../../models/levels/nca-scenario.ts';
import type { ProposeResult } from '../../models/regimen/propose.ts';
import { parseScenario } from '../../models/scenario/normalize.ts';
import type { Outcome, Problem } from '../../models/scenario/problems.ts';
import { drawFitSection, runReportFit } from './fit.ts';
import { drawNcaSection, runReportNca } from './nca.ts';
import { drawProposalsSection, runReportProposals } from './proposals.ts';

export interface LevelSections {
  nca: Outcome<ScenarioNca> | null;
  fit: Outcome<FitResult> | null;
  proposals: Outcome<ProposeResult> | null;
}

export type LevelSectionsOutcome = { ok: true; value: LevelSections } | { ok: false; status: 400 | 422; problems: Problem[] };

export function runLevelSections(scenario: unknown, model: Model): LevelSectionsOutcome {
  const parsed = parseScenario(scenario);
  if (!parsed.ok) return { ok: false, status: 400, problems: parsed.problems };
  const fit = runReportFit(scenario, parsed.value.fit !== undefined);
  if (fit && !fit.ok) return { ok: false, status: 400, problems: fit.problems };
  const proposals = runReportProposals(scenario, parsed.value.propose !== undefined);
  if (proposals && !proposals.ok) return { ok: false, status: 400, problems: proposals.problems };
  return { ok: true, value: { nca: runReportNca(model, parsed.value.nca), fit, proposals } };
}

/** Draws the sections present, numbered from `firstSection`, figures from `firstFigure`. */
export function drawLevelSections(doc: PDFKit.PDFDocument, sections: LevelSections, model: Model, firstSection: number, firstFigure: number): void {
  let n = firstSection;
  if (sections.nca) drawNcaSection(doc, sections.nca, model, String(n++));
  if (sections.fit) drawFitSection(doc, sections.fit, model, String(n++), String(firstFigure));
  if (sections.proposals) drawProposalsSection(doc, sections.proposals, String(n++));
}
