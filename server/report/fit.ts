/**
 * The report's section on the individual's own parameters, drawn when the scenario has a
 * `fit`: fitScenario (models/fitting/fit.ts) run in the report's thread, then the estimates
 * with standard errors and RSE, their correlations, the objective and convergence in plain
 * words, what the levels cannot identify, each level observed / predicted / residual (with its
 * clock time when the scenario has a clock), the individual's predicted curve with its 90% band
 * from the parameter uncertainty beside the typical curve, and the goodness-of-fit plots — with
 * the caution that the estimates are model outputs for review.
 */
import type { Model } from '../../models/building/model.ts';
import { BAND_DRAWS } from '../../models/fitting/band.ts';
import { fitScenario } from '../../models/fitting/fit.ts';
import { STRONG_CORRELATION, type FitResult } from '../../models/fitting/result.ts';
import type { Outcome } from '../../models/scenario/problems.ts';
import { simulateModel } from '../../models/simulate.ts';
import { timeAndClock } from './clock-time.ts';
import { bullet, drawSectionCaution } from './section-text.ts';
import { font, heading, keyValues, palette, paragraph, type } from './document.ts';
import { fmt, unitText } from './format.ts';
import { drawFitPlots, fitCurveSpec } from './fit-plots.ts';
import { drawConcentrationFigure } from './plot.ts';
import { drawTable, type Cell } from './table.ts';

export const FIT_REPORT_CAUTION = 'Individual estimates are model outputs for review by a clinician; not dosing advice.';

/** The fit the scenario asks for, or null when it has no `fit`. */
export function runReportFit(scenario: unknown, hasFit: boolean): Outcome<FitResult> | null {
  return hasFit ? fitScenario(scenario) : null;
}

const weightingWords: Record<string, string> = {
  none: 'equal weights',
  '1/y': 'weights 1/observed',
  '1/y2': 'weights 1/observed²',
  residual: 'weights 1/SD² from population.residual',
};

function rse(v: number | null): string {
  return v === null || !Number.isFinite(v) ? '—' : `${(100 * v).toFixed(1)}%`;
}

function estimatesTable(doc: PDFKit.PDFDocument, r: FitResult): void {
  drawTable(doc, {
    caption: 'Estimates',
    columns: [
      { header: 'Quantity', width: 0.75 },
      { header: 'Estimate', width: 0.85, align: 'right' },
      { header: 'Unit', width: 0.5 },
      { header: 'Standard error', width: 0.85, align: 'right' },
      { header: 'RSE', width: 0.6, align: 'right' },
      { header: 'Start (typical)', width: 0.85, align: 'right' },
      { header: 'Bounds kept to', width: 1.4, align: 'right' },
      { header: 'Scenario path', width: 1.9 },
    ],
    rows: Object.entries(r.estimates).map(([name, e]) => [
      { text: name, bold: true },
      { text: fmt(e.value), bold: true },
      unitText(e.unit),
      fmt(e.standardError),
      rse(e.relativeStandardError),
      fmt(e.typical),
      `${fmt(e.bounds[0])} – ${fmt(e.bounds[1])}`,
      e.path,
    ]),
    footnote: 'Standard errors from the curvature of the objective at the optimum, taken to each quantity by the delta method; RSE = standard error / estimate. Start: the typical value with the subject\'s covariate relations, where the optimiser began.',
  });
}

function correlationTable(doc: PDFKit.PDFDocument, r: FitResult): void {
  if (!r.correlation) {
    paragraph(doc, 'No correlations: the curvature at the optimum is singular or leaves no degree of freedom.', { size: type.small, color: palette.warning });
    return;
  }
  const { names, matrix } = r.correlation;
  drawTable(doc, {
    caption: 'Correlations of the estimates',
    width: Math.min(1, 0.25 + 0.13 * names.length),
    columns: [{ header: '', width: 1 }, ...names.map((n) => ({ header: n, width: 0.8, align: 'right' as const }))],
    rows: names.map((n, i) => [
      { text: n, bold: true },
      ...matrix[i].map((v, j): Cell => ({ text: i === j ? '1' : v.toFixed(3), ...(i !== j && Math.abs(v) > STRONG_CORRELATION ? { color: palette.warning, bold: true } : {}) })),
    ]),
    footnote: `Beyond ±${STRONG_CORRELATION} (in red) two estimates move together: the levels tell them apart poorly.`,
  });
}

function levelsTable(doc: PDFKit.PDFDocument, r: FitResult, model: Model): void {
  const c = unitText(r.units.concentration);
  drawTable(doc, {
    caption: `Levels: observed, predicted, residual (${c}; time in ${r.units.time})`,
    columns: [
      { header: 'Level', width: model.clock ? 1.75 : 2.2 },
      // Wide enough with a clock for "2026-03-04 10:10 (+01:00)" on one line under the elapsed time.
      { header: model.clock ? 'Time and clock time' : 'Time', width: model.clock ? 1.95 : 1.2, align: 'right' },
      { header: 'Observed', width: 1.05, align: 'right' },
      { header: 'Predicted', width: 0.9, align: 'right' },
      { header: 'Residual', width: 0.9, align: 'right' },
      { header: 'Weighted residual', width: 0.9, align: 'right' },
    ],
    size: type.tiny + 0.3,
    zebra: true,
    rows: r.predictions.map((p) => [
      p.label ? `${p.path}\n${p.label}` : p.path,
      timeAndClock(p.time, model),
      p.censored ? `< ${fmt(p.limit)} (censored)` : p.used ? fmt(p.observed) : `< ${fmt(p.limit)}, left out`,
      fmt(p.predicted),
      fmt(p.residual),
      fmt(p.weightedResidual),
    ]),
    footnote: `Residual = observed − predicted. Weighted residual: ${r.settings.objective === 'map' ? '(observed − predicted)/SD, SD from the residual error model at the prediction' : '√weight × (observed − predicted)'}; about ±2 at most when the error model holds.`,
  });
}

/** The caption of the predicted-curve figure: what the band is (and is not), what is dashed, what the points are. */
function curveCaption(r: FitResult, figure: string, typicalDrawn: boolean): string {
  const ids = r.curves.map((c) => c.compartment).join(', ');
  const banded = r.curves.some((c) => c.lower && c.upper);
  const band = banded
    ? `with the shaded 90% band: at each time, the 5th to the 95th percentile of the curves of ${BAND_DRAWS} parameter sets drawn from the estimates' uncertainty (a normal distribution on the log (or logit) scales of the fit, with the covariance from the curvature at the optimum). The band is the parameter uncertainty only, not the residual error of a measurement, so a new level may well fall outside it.`
    : 'without a band: the curvature at the optimum is singular (or the drawn parameter sets could not be simulated), so the parameter uncertainty cannot be drawn.';
  const dashed = typicalDrawn ? ` Dashed: the curve at the typical values as entered (${r.settings.objective === 'map' ? 'the centre of the prior' : 'where the fit started'}).` : '';
  return `Figure ${figure}. The individual's predicted concentration in ${ids} from the estimates, ${band}${dashed} Points: the measured levels; a level below the limit is drawn hollow at its limit. A simulation for review, not dosing advice.`;
}

/** Draws the section; `number` is its section number, `figure` the first of its two figure numbers. */
export function drawFitSection(doc: PDFKit.PDFDocument, outcome: Outcome<FitResult>, model: Model, number: string, figure: string): void {
  const title = `${number}  Individual parameters from the measured levels`;
  heading(doc, title, 1, 160);
  doc.outline.addItem(title);
  drawSectionCaution(doc, 'Caution — individual estimates', [FIT_REPORT_CAUTION, 'The simulation sections simulate the typical values as entered; this section estimates the values that best explain this subject\'s levels.']);
  if (!outcome.ok) {
    paragraph(doc, 'The fit could not be run:', { color: palette.warning });
    for (const p of outcome.problems) bullet(doc, `${p.path}: ${p.message}`, palette.warning);
    return;
  }
  const r = outcome.value;
  const objective = r.settings.objective === 'map' ? 'maximum a posteriori: the levels weighed with the population (its typical values, covariate relations, cv and correlations) as the prior' : `weighted least squares, ${weightingWords[r.settings.weighting] ?? r.settings.weighting}`;
  const used = r.predictions.filter((p) => p.used).length;
  keyValues(
    doc,
    [
      ['Estimated', r.settings.estimate.join(', ')],
      ['Objective', objective],
      ['Levels', `${used} used of ${r.predictions.length}${r.predictions.some((p) => p.censored) ? ' (censored levels counted by the probability of a level below the limit)' : ''}`],
      ['Method', 'Levenberg–Marquardt within bounds on log (or logit) scales, from the typical values; other starts only when the first does not converge'],
    ],
    96,
    type.small + 0.4,
  );
  estimatesTable(doc, r);
  correlationTable(doc, r);

  heading(doc, 'Convergence', 2, 50);
  // The message itself begins "Converged after …" when it did; only a failure needs the warning before it.
  paragraph(doc, r.converged ? r.message : `Did not converge: treat the estimates as unreliable. ${r.message}`, { size: type.small, ...(r.converged ? {} : { color: palette.warning, face: font.bold }) });
  paragraph(doc, `Objective at the optimum (sum of squared weighted residuals${r.settings.objective === 'map' ? ', the prior\'s included' : ''}): ${fmt(r.objective)}. Condition number of the curvature: ${r.conditionNumber.toExponential(2)}.`, { size: type.small });
  if (r.identifiability.length > 0) {
    paragraph(doc, 'What the levels cannot identify', { size: type.small, face: font.bold, color: palette.warning, after: 1 });
    for (const w of r.identifiability) bullet(doc, `${w}`, palette.warning);
  } else paragraph(doc, 'Identifiability: every estimated quantity is identified by the levels.', { size: type.small });

  heading(doc, 'Levels against the fitted model', 2, 100);
  levelsTable(doc, r, model);
  if (r.curves.length > 0) {
    // The typical run of the same model, for comparison; the figure goes without it if it fails.
    const typical = simulateModel(model);
    const spec = fitCurveSpec(r, model, typical.ok ? typical.value : null);
    drawConcentrationFigure(doc, spec, curveCaption(r, figure, spec.series.some((s) => s.dashed)));
  }
  const drawn = r.predictions.filter((p) => p.used && p.observed !== null).length;
  drawFitPlots(
    doc,
    r.predictions,
    r.units,
    model.start,
    model.end,
    `Figure ${r.curves.length > 0 ? Number(figure) + 1 : figure}. Goodness of fit: ${drawn} level${drawn === 1 ? '' : 's'} observed against the fitted model's prediction, with the line of identity (dashed: a perfect fit lies on it), and the weighted residuals against time, with the zero line. Levels below the limit are not drawn.`,
  );
  for (const n of r.notes) bullet(doc, `Note: ${n}.`, palette.muted);
}
