/**
 * The printable concentration report: one scenario (and optionally a reference scenario to
 * compare with) in, a PDF out — or the same problems /api/simulate would answer, never a
 * broken document. Sections: caution and identity, model (diagram, parameters, derived
 * quantities), regimen, plots, exposure figures, warnings, method and its independent
 * check, and the per-interval figures (which may run over many pages).
 */
import { readFileSync } from 'node:fs';
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import type { Model } from '../../models/building/model.ts';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import type { Problem } from '../../models/scenario/problems.ts';
import { simulateModel, type SimulationResult } from '../../models/simulate.ts';
import type { SteadyStateFigures } from '../../models/figures/steady-state.ts';
import type { WindowFigures } from '../../models/figures/exposure.ts';
import { independentCheck, verdict, type CheckOutcome } from './check.ts';
import { drawDiagram } from './diagram.ts';
import { plainDoseWords } from '../../models/result/dose-words.ts';
import { createReportDocument, documentBytes, font, gap, heading, keyValues, palette, paragraph, type } from './document.ts';
import { clock, duration, fmt, percent, reportFileName, unitText, withUnit } from './format.ts';
import { drawCautionBox, drawTitleBlock, stampPages } from './furniture.ts';
import { centralRule, modelParameters, steadyVolumeRule, type ModelParameters } from './parameters.ts';
import { drawConcentrationFigure, windowLabel, type PlotSeries } from './plot.ts';
import { drawMeasuredLevels, measuredPoints } from './observations.ts';
import { doseMarks, regimenRows } from './regimen.ts';
import { clockTimeAt, timeAndClock } from './clock-time.ts';
import { drawSubjectTables } from './subject.ts';
import { drawTable, type Cell } from './table.ts';
import { drawPopulationSection, reportPopulationCap, runReportPopulation, type PopulationCap, type PopulationRun } from './population.ts';
import type { ReportRequest } from './request.ts';
import { drawLevelSections, runLevelSections, type LevelSections } from './levels.ts';

import type { StoredVersion } from '../jobs.ts';

export { readReportRequest, type ReportRequest } from './request.ts';

export const tidemarkVersion: string = (JSON.parse(readFileSync(new URL('../../package.json', import.meta.url), 'utf8')) as { version: string }).version;

export interface ReportOptions {
  /** Time of the run printed in the header; defaults to now. */
  now?: Date;
  /** Largest number of reported times accepted (the server's limit); unlimited when absent. */
  maxOutputPoints?: number;
  /** Limits on the virtual population a report runs (tests lower them); reportPopulationCap when absent. */
  populationCap?: Partial<PopulationCap>;
  /** The stored version the report is issued for (the server's store), printed in the title block. */
  stored?: StoredVersion;
}

export type ReportOutcome =
  | { ok: true; bytes: Uint8Array; fileName: string; fingerprint: string; pages: number }
  | { ok: false; status: 400 | 422; problems: Problem[] };

function prefixed(problems: Problem[], prefix: string): Problem[] {
  return problems.map((p) => ({ path: p.path ? `${prefix}.${p.path}` : prefix, message: p.message }));
}

interface Run {
  model: Model;
  result: SimulationResult;
}

function run(scenario: unknown, options: ReportOptions, prefix: string | null): { ok: true; value: Run } | { ok: false; status: 400 | 422; problems: Problem[] } {
  const wrap = (list: Problem[]) => (prefix ? prefixed(list, prefix) : list);
  const model = normaliseScenario(scenario);
  if (!model.ok) return { ok: false, status: 400, problems: wrap(model.problems) };
  const points = model.value.outputTimes.length;
  if (options.maxOutputPoints !== undefined && points > options.maxOutputPoints) {
    return {
      ok: false,
      status: 400,
      problems: wrap([{ path: 'output.step', message: `asks for ${points} reported times; this server answers at most ${options.maxOutputPoints} (use the command line for larger runs)` }]),
    };
  }
  const result = simulateModel(model.value);
  if (!result.ok) return { ok: false, status: 422, problems: wrap(result.problems) };
  return { ok: true, value: { model: model.value, result: result.value } };
}

export function buildReport(request: ReportRequest, options: ReportOptions = {}): ReportOutcome {
  const main = run(request.scenario, options, null);
  if (!main.ok) return main;
  let reference: (Run & { fingerprint: string }) | null = null;
  if (request.reference !== undefined) {
    const ref = run(request.reference, options, 'reference');
    if (!ref.ok) return ref;
    reference = { ...ref.value, fingerprint: scenarioFingerprint(request.reference) };
  }
  const fingerprint = scenarioFingerprint(request.scenario);
  const { model, result } = main.value;
  const check = independentCheck(request.scenario as Record<string, unknown>, result, model.linear);
  // The population, when the scenario has one, runs here: in the report's own worker thread.
  const population = runReportPopulation(request.scenario, { ...reportPopulationCap, ...options.populationCap });
  if (population && !population.ok) return population;
  // Measured levels: NCA, the individual's fit and regimen proposals, each when the scenario has it.
  const levels = runLevelSections(request.scenario, model);
  if (!levels.ok) return levels;
  const now = options.now ?? new Date();
  const { bytes, pages } = renderReport({ model, result, fingerprint, reference, check, now, description: descriptionOf(request.scenario), population: population?.value ?? null, stored: options.stored ?? null, levels: levels.value });
  return { ok: true, bytes, fileName: reportFileName(model.title, fingerprint), fingerprint, pages };
}

function descriptionOf(scenario: unknown): string | null {
  const d = (scenario as { description?: unknown }).description;
  return typeof d === 'string' && d.trim() ? d.trim() : null;
}

interface Parts {
  model: Model;
  result: SimulationResult;
  fingerprint: string;
  reference: (Run & { fingerprint: string }) | null;
  check: CheckOutcome;
  now: Date;
  description: string | null;
  population: PopulationRun | null;
  stored: StoredVersion | null;
  levels: LevelSections;
}

function renderReport(parts: Parts): { bytes: Uint8Array; pages: number } {
  const { model, result, fingerprint, reference, check, now } = parts;
  const author = `Tidemark ${tidemarkVersion}`;
  const doc = createReportDocument({
    title: `${model.title} — concentration report`,
    subject: `Concentration–time simulation of the scenario “${model.title}”${parts.population?.result ? `, with a virtual population of ${parts.population.result.subjects} subjects` : ''}, for review; not dosing advice. Scenario fingerprint ${fingerprint}.`,
    author,
    keywords: `pharmacokinetics, compartment model, concentration, simulation, review, not dosing advice, fingerprint ${fingerprint}`,
    created: now,
  });
  const params = modelParameters(model, result);

  drawTitleBlock(doc, {
    title: model.title,
    description: parts.description,
    runAt: clock(now),
    version: author,
    fingerprint,
    reference: reference ? { title: reference.model.title, fingerprint: reference.fingerprint } : null,
    stored: parts.stored,
  });
  drawCautionBox(doc);

  modelSection(doc, model, result, params);
  regimenSection(doc, model, result);
  plotSection(doc, model, result, reference);
  exposureSection(doc, model, result, params, reference);
  warningsSection(doc, model, result, check);
  methodSection(doc, result, check);
  intervalSection(doc, model, result, params);
  if (parts.population) drawPopulationSection(doc, parts.population, model, '8', '3');
  drawLevelSections(doc, parts.levels, model, parts.population ? 9 : 8, parts.population ? 4 : 3);

  stampPages(doc, { title: model.title, fingerprint, version: tidemarkVersion });
  const pages = doc.bufferedPageRange().count;
  return { bytes: documentBytes(doc), pages };
}

function section(doc: PDFKit.PDFDocument, title: string, keep = 80): void {
  heading(doc, title, 1, keep);
  doc.outline.addItem(title);
}

/** "1 piece", "3 pieces". */
function count(n: number, one: string, many = `${one}s`): string {
  return `${n} ${n === 1 ? one : many}`;
}

function note(doc: PDFKit.PDFDocument, text: string): void {
  paragraph(doc, text, { size: type.small, color: palette.muted, after: 4 });
}

// ---- 1. Model ----
function modelSection(doc: PDFKit.PDFDocument, model: Model, result: SimulationResult, params: ModelParameters): void {
  section(doc, '1  Model', 160);
  const kind = model.linear ? 'linear (every route first-order)' : 'saturable: at least one Michaelis–Menten route';
  paragraph(doc, `${model.compartments.length} compartment${model.compartments.length > 1 ? 's' : ''}, ${model.transfers.length} route${model.transfers.length === 1 ? '' : 's'}; ${kind}. Units: amount ${unitText(model.units.amount)}, volume ${unitText(model.units.volume)}, time ${model.units.time}, concentration ${unitText(result.units.concentration)}.`);
  drawDiagram(doc, model, params.roles, params.central);
  note(doc, 'Figure 1. Compartments (central one outlined in blue; dashed box: amount only, no volume) and routes with their parameters; arrows pointing down leave the body; dashed orange arrows are saturable (Michaelis–Menten) routes.');

  drawTable(doc, {
    caption: 'Compartments',
    columns: [
      { header: 'Compartment', width: 1.2 },
      { header: 'Label', width: 1.8 },
      { header: 'Volume', width: 1, align: 'right' },
      { header: 'Role', width: 1 },
    ],
    rows: params.compartments.map((c) => [{ text: c.id, bold: c.role === 'central' }, c.label, c.volume, c.role]),
  });
  drawTable(doc, {
    caption: 'Routes (transfers)',
    columns: [
      { header: 'Route', width: 1.5 },
      { header: 'Label', width: 1.65 },
      { header: 'As entered', width: 2 },
      { header: 'Rate constant k', width: 1.05, align: 'right' },
      { header: 'Clearance CL', width: 1.05, align: 'right' },
      { header: 'Note', width: 1.75 },
    ],
    rows: params.transfers.map((t) => [t.route, t.label, t.kinetics, t.rateConstant, t.clearance, t.note]),
  });
  drawTable(doc, {
    caption: 'Derived quantities',
    columns: [
      { header: 'Quantity', width: 2 },
      { header: 'Value', width: 2 },
      { header: 'How it is obtained', width: 3 },
    ],
    rows: params.derived.map((d) => [d.quantity, d.value, d.basis]),
    footnote: `${centralRule} ${steadyVolumeRule}`,
  });
  drawSubjectTables(doc, model, result);
}

// ---- 2. Regimen ----
function regimenSection(doc: PDFKit.PDFDocument, model: Model, result: SimulationResult): void {
  section(doc, '2  Regimen');
  const rows = regimenRows(model);
  if (rows.length === 0) {
    paragraph(doc, 'No doses: the curves show the model from an empty body.');
  } else {
    // With a clock, the clock times of each line's first and last dose sit beside the elapsed times.
    const clocked = model.clock !== null;
    drawTable(doc, {
      columns: [
        { header: '#', width: 0.35, align: 'right' },
        { header: 'Label', width: clocked ? 0.9 : 1.1 },
        { header: 'Regimen (one row per dose line)', width: clocked ? 2.75 : 4.7 },
        // Wide enough for "first 2026-03-04 08:00:30 (+05:30)" (a time with seconds) on one line.
        ...(clocked ? [{ header: 'Clock time of the doses', width: 2.8 }] : []),
        { header: 'Doses in span', width: clocked ? 0.75 : 0.7, align: 'right' },
        { header: 'Total', width: clocked ? 1.65 : 1.7, align: 'right' },
      ],
      rows: rows.map((r) => [r.line, r.label, r.description, ...(clocked ? [r.clock ?? '—'] : []), r.doses, r.total]),
    });
  }
  const ss = result.metrics.steadyState;
  note(
    doc,
    `Simulated span ${fmt(model.start)}–${fmt(model.end)} ${model.units.time}${model.clock ? `, from ${clockTimeAt(model.start, model)} to ${clockTimeAt(model.end, model)};` : ','} ${model.administrations.length} administration${model.administrations.length === 1 ? '' : 's'} in all, ${result.times.length} reported times. F is the bioavailable fraction; a lag delays arrival after the dose is given.${
      ss ? ` The steady-state figures use the repeating line${ss.lines.length > 1 ? 's' : ''} ${ss.lines.map((l) => l + 1).join(', ')} with a dosing cycle τ = ${duration(ss.period, model.units.time)}.` : ''
    }`,
  );
}

// ---- 3. Plots ----
function plotSection(doc: PDFKit.PDFDocument, model: Model, result: SimulationResult, reference: Run | null): void {
  section(doc, '3  Concentration over time', 260);
  const withConcentration = result.compartments.filter((s) => s.concentration !== null);
  const colourOf = (id: string) => palette.series[Math.max(0, withConcentration.findIndex((s) => s.id === id)) % palette.series.length];
  const series: PlotSeries[] = withConcentration.map((s) => ({
    label: reference ? `${s.id} — this scenario` : `${s.id}${s.label && s.label !== s.id ? ` (${s.label})` : ''}`,
    times: result.times,
    values: s.concentration as Float64Array,
    color: colourOf(s.id),
  }));
  const notes: string[] = [];
  if (reference) {
    const same = reference.result.units.concentration === result.units.concentration && reference.result.units.time === result.units.time;
    if (!same) {
      notes.push(`The reference is not drawn: its units (${reference.result.units.concentration}, ${reference.result.units.time}) differ from this scenario's.`);
    } else {
      for (const s of reference.result.compartments) {
        if (!s.concentration || !withConcentration.some((c) => c.id === s.id)) continue;
        series.push({ label: `${s.id} — reference (dashed)`, times: reference.result.times, values: s.concentration, color: colourOf(s.id), dashed: true });
      }
      if (reference.model.end < model.end) notes.push(`The reference ends at ${fmt(reference.model.end)} ${model.units.time}.`);
    }
  }
  const th = model.thresholds[0];
  const window = th ? { above: th.above, below: th.below, label: windowLabel(th.above, th.below, result.units.concentration, model.compartments[th.compartment].id) } : null;
  if (model.thresholds.length > 1) notes.push('Only the first target window is shaded; all are listed in section 4.');
  const caption = `Figure 2. Concentration against time in ${withConcentration.map((s) => s.id).join(', ') || 'no compartment'}, on a linear and a logarithmic scale (values below the lowest decade are not shown on the logarithmic scale). ${notes.join(' ')}`.trim();
  if (series.length === 0) {
    paragraph(doc, 'No compartment has a volume, so there is no concentration to plot; the amounts are in the CSV export.');
    return;
  }
  drawConcentrationFigure(
    doc,
    { series, points: measuredPoints(result, colourOf), window, doses: doseMarks(model), start: model.start, end: model.end, timeUnit: model.units.time, concentrationUnit: result.units.concentration },
    caption,
  );
  drawMeasuredLevels(doc, result);
}

// ---- 4. Exposure ----
function windowEdges(w: WindowFigures, unit: string): string {
  return w.above !== null && w.below !== null ? `${fmt(w.above)}–${fmt(w.below)} ${unitText(unit)}` : w.above !== null ? `above ${fmt(w.above)} ${unitText(unit)}` : `below ${fmt(w.below)} ${unitText(unit)}`;
}

function exposureSection(doc: PDFKit.PDFDocument, model: Model, result: SimulationResult, params: ModelParameters, reference: Run | null): void {
  const u = result.units;
  section(doc, '4  Exposure', 120);
  paragraph(doc, `Concentrations in ${unitText(u.concentration)}, times in ${u.time}, AUC in ${unitText(u.auc)}.`, { size: type.small });
  const withVolume = result.metrics.compartments.filter((c) => result.compartments.find((s) => s.id === c.compartment)?.concentration);
  if (withVolume.length === 0) {
    paragraph(doc, 'No compartment has a volume, so there are no concentration figures; the amounts are in the CSV export.');
    return;
  }
  drawTable(doc, {
    caption: 'Over the whole span',
    columns: [
      { header: 'Compartment', width: 1.3 },
      { header: 'Cmax', width: 1, align: 'right' },
      { header: model.clock ? 'at Tmax (clock time)' : 'at Tmax', width: model.clock ? 2.2 : 1, align: 'right' },
      { header: `AUC ${fmt(model.start)}–${fmt(model.end)} ${model.units.time}`, width: 1.3, align: 'right' },
      { header: 'C at the end', width: 1, align: 'right' },
      { header: 'Dosing intervals', width: 1, align: 'right' },
    ],
    rows: withVolume.map((c) => [{ text: c.compartment, bold: model.compartments.findIndex((m) => m.id === c.compartment) === params.central }, fmt(c.overall.cmax), timeAndClock(c.overall.tmax, model), fmt(c.overall.auc), fmt(c.overall.cEnd), String(c.intervals.length)]),
  });

  // Time in and out of the target windows.
  const windowRows: (string | Cell)[][] = [];
  for (const c of result.metrics.compartments) {
    for (const w of c.overall.windows) {
      const inside = w.timeInWindow ?? w.timeAbove ?? w.timeBelow;
      windowRows.push([c.compartment, windowEdges(w, u.concentration), 'whole span', fmt(inside), fmt(w.timeUnderWindow), fmt(w.timeOverWindow), { text: percent(w.fractionInWindow), bold: true }]);
    }
  }
  const ss = result.metrics.steadyState;
  if (ss?.reached) {
    for (const c of ss.compartments) {
      for (const w of c.windows) {
        const inside = w.timeInWindow ?? w.timeAbove ?? w.timeBelow;
        windowRows.push([c.compartment, windowEdges(w, u.concentration), `one cycle at steady state`, fmt(inside), fmt(w.timeUnderWindow), fmt(w.timeOverWindow), { text: percent(w.fractionInWindow), bold: true }]);
      }
    }
  }
  if (windowRows.length > 0) {
    drawTable(doc, {
      caption: 'Time in and out of the target window',
      columns: [
        { header: 'Compartment', width: 1.1 },
        { header: 'Window', width: 1.3 },
        { header: 'Period', width: 1.8 },
        { header: `Inside (${u.time})`, width: 0.95, align: 'right' },
        { header: `Under (${u.time})`, width: 0.95, align: 'right' },
        { header: `Over (${u.time})`, width: 0.95, align: 'right' },
        { header: 'Share inside', width: 0.95, align: 'right' },
      ],
      rows: windowRows,
    });
  } else {
    note(doc, 'No target window was set (output.thresholds), so no time in or out of a window is reported.');
  }
  steadyStateTable(doc, model, result, ss);
  if (reference) referenceTable(doc, result, reference);
}

function steadyStateTable(doc: PDFKit.PDFDocument, model: Model, result: SimulationResult, ss: SteadyStateFigures | null): void {
  const u = result.units;
  heading(doc, 'Steady state of the regimen continued', 2, 50);
  if (!ss) {
    paragraph(doc, 'No dose line repeats, so there is no steady state to report.');
    return;
  }
  paragraph(doc, `${ss.reached ? 'Computed' : 'Not computed'}: ${plainDoseWords(ss.message, doseLabels(model))}. These figures describe the maintenance regimen continued without end, whether or not the simulated span gets there.`, { size: type.small });
  // Said here, beside the figures, and not only among the warnings: the course ends first.
  for (const w of result.diagnostics.warnings.filter((x) => x.includes('is not at steady state'))) paragraph(doc, w, { size: type.small });
  if (!ss.reached) return;
  const withVolume = ss.compartments.filter((c) => result.compartments.find((s) => s.id === c.compartment)?.concentration);
  const reached = (time: number | null, cycles: number | null) => (time === null ? '—' : `${fmt(time)} (${cycles} cycle${cycles === 1 ? '' : 's'})`);
  const figures: [string, (c: (typeof withVolume)[number]) => string][] = [
    [`Cmax,ss (${unitText(u.concentration)})`, (c) => fmt(c.cmax)],
    [`Tmax in the cycle (${u.time})`, (c) => fmt(c.tmax)],
    [`Trough (${unitText(u.concentration)})`, (c) => fmt(c.trough)],
    [`Cavg (${unitText(u.concentration)})`, (c) => fmt(c.cavg)],
    [`AUCτ (${unitText(u.auc)})`, (c) => fmt(c.auc)],
    ['Fluctuation (Cmax − Cmin)/Cavg (%)', (c) => fmt(c.fluctuation === null ? null : 100 * c.fluctuation)],
    ['Accumulation AUCτ,ss / AUC of the first cycle', (c) => fmt(c.accumulationRatio)],
    [`90% of AUCτ reached after (${u.time})`, (c) => reached(c.timeTo90, c.cyclesTo90)],
    [`95% of AUCτ reached after (${u.time})`, (c) => reached(c.timeTo95, c.cyclesTo95)],
  ];
  const footnote = `One dosing cycle τ = ${duration(ss.period, model.units.time)} at steady state; Tmax is counted from the start of the cycle. Fluctuation in percent of Cavg. Time to 90% (95%): ${ss.approachDefinition}. Method: ${ss.method === 'closed-form' ? 'closed form from the cycle propagator' : 'dosing cycles iterated'}, ${ss.cycles} cycles, residual ${fmt(ss.residual, 2)}.`;
  // One column per compartment, four at most per table; the note goes with the last table.
  for (let first = 0; first < withVolume.length; first += 4) {
    const group = withVolume.slice(first, first + 4);
    drawTable(doc, {
      width: Math.min(1, 0.5 + 0.125 * group.length),
      columns: [{ header: 'At steady state, one cycle', width: 2.6 }, ...group.map((c) => ({ header: c.compartment, width: 1.1, align: 'right' as const }))],
      rows: figures.map(([name, value]) => [name, ...group.map(value)]),
      footnote: first + 4 >= withVolume.length ? footnote : undefined,
    });
  }
}

/** Dose-line labels by line index, for the engine's "doses[N]" in messages. */
function doseLabels(model: Model): (string | null)[] {
  const labels: (string | null)[] = [];
  for (const l of model.doseLines) labels[l.line] = l.label;
  return labels;
}

function referenceTable(doc: PDFKit.PDFDocument, result: SimulationResult, reference: Run): void {
  heading(doc, `Compared with the reference “${reference.model.title}”`, 2, 50);
  const rows: string[][] = [];
  for (const c of result.metrics.compartments) {
    const r = reference.result.metrics.compartments.find((x) => x.compartment === c.compartment);
    if (!r || !result.compartments.find((s) => s.id === c.compartment)?.concentration) continue;
    const ratio = (a: number, b: number) => (b > 0 ? fmt(a / b, 3) : '—');
    rows.push([c.compartment, 'Cmax', fmt(c.overall.cmax), fmt(r.overall.cmax), ratio(c.overall.cmax, r.overall.cmax)]);
    rows.push([c.compartment, 'AUC over the span', fmt(c.overall.auc), fmt(r.overall.auc), ratio(c.overall.auc, r.overall.auc)]);
    const w1 = c.overall.windows[0];
    const w2 = r.overall.windows[0];
    if (w1 && w2) rows.push([c.compartment, 'share of span inside the window', percent(w1.fractionInWindow), percent(w2.fractionInWindow), '—']);
  }
  if (rows.length === 0) {
    paragraph(doc, 'The reference has no compartment with a volume in common with this scenario.');
    return;
  }
  drawTable(doc, {
    columns: [
      { header: 'Compartment', width: 1.2 },
      { header: 'Figure', width: 2 },
      { header: 'This scenario', width: 1.2, align: 'right' },
      { header: 'Reference', width: 1.2, align: 'right' },
      { header: 'Ratio', width: 0.8, align: 'right' },
    ],
    rows,
  });
  if (reference.result.units.concentration !== result.units.concentration || reference.result.units.time !== result.units.time) {
    note(doc, 'The reference uses other units; its figures are in its own units.');
  }
}

// ---- 5. Warnings ----
function warningsSection(doc: PDFKit.PDFDocument, model: Model, result: SimulationResult, check: CheckOutcome): void {
  section(doc, '5  Warnings', 40);
  const list = result.diagnostics.warnings.map((w) => plainDoseWords(w, doseLabels(model)));
  if (!check.ok) list.push(`the independent check could not be completed: ${check.problems.join('; ')}`);
  else if (check.maxRelativeToCmax > 1e-2) list.push(`the independent check differs by ${percent(check.maxRelativeToCmax)} of Cmax (section 6)`);
  if (list.length === 0) {
    paragraph(doc, 'None. The engine raised no warning and the independent check agrees (section 6).');
    return;
  }
  for (const w of list) paragraph(doc, `• ${w}`, { color: palette.warning, indent: 4 });
}

// ---- 6. Method and check ----
function methodSection(doc: PDFKit.PDFDocument, result: SimulationResult, check: CheckOutcome): void {
  const d = result.diagnostics;
  const u = result.units;
  section(doc, '6  Numerical method and check', 160);
  const method =
    d.path === 'exact'
      ? 'exact solution: matrix exponential of the linear rate matrix over each piece between dose events (no truncation error; round-off only)'
      : d.path === 'fixed'
        ? `${d.methodsUsed.join(', ')} with the fixed step ${withUnit(d.step, u.time)}`
        : `adaptive Runge–Kutta: ${d.methodsUsed.join(' → ')}`;
  const rows: [string, string][] = [
    ['Method', method],
    ['Requested', `method "${d.requestedMethod}"`],
    ['Tolerances', d.path === 'adaptive' ? `rtol ${fmt(d.rtol)}, atol ${fmt(d.atol)} ${unitText(u.amount)}` : d.path === 'exact' ? 'none needed (exact path)' : 'none (fixed step)'],
    ['Steps', d.path === 'exact' ? `${count(d.propagators, 'matrix exponential')} over ${count(d.segments, 'piece')}` : `${d.acceptedSteps} accepted, ${d.rejectedSteps} rejected, over ${count(d.segments, 'piece')}`],
    ['Evaluations', `${count(d.derivativeEvaluations, 'right-hand side')}, ${count(d.jacobianEvaluations, 'Jacobian')}, ${count(d.factorizations, 'LU factorisation')}, ${count(d.stiffSwitches, 'stiffness switch', 'stiffness switches')}`],
    [
      'Mass balance',
      `dosed ${withUnit(d.massBalance.dosed, u.amount)} = in the body ${withUnit(d.massBalance.remaining, u.amount)} + eliminated ${withUnit(d.massBalance.eliminated, u.amount)} (relative error ${fmt(d.massBalance.relativeError, 2)})`,
    ],
  ];
  keyValues(doc, rows, 96, type.small + 0.4);
  heading(doc, 'Independent check', 2, 90);
  const c = check.result?.diagnostics;
  const checkRows: [string, string][] = [
    ['Second solution', `${check.settings.why}: method "${check.settings.method}"${check.settings.method === 'exact' ? '' : `, rtol ${fmt(check.settings.rtol)}, atol ${fmt(check.settings.atol)}`}`],
  ];
  if (c) {
    checkRows.push([
      'Its work',
      c.path === 'exact' ? count(c.propagators, 'matrix exponential') : `${c.methodsUsed.join(' → ')}: ${count(c.acceptedSteps, 'step')} accepted, ${c.rejectedSteps} rejected, ${count(c.derivativeEvaluations, 'right-hand side')}`,
    ]);
  }
  if (check.ok) {
    const at = check.at ? ` (in ${check.at.compartment} at t = ${fmt(check.at.time)} ${u.time})` : ' (no compartment has a volume)';
    checkRows.push(
      ['Largest difference', `${withUnit(check.maxAbsolute, u.concentration)} in concentration over all ${result.times.length} reported times${at}`],
      ['Relative to Cmax', `${fmt(check.maxRelativeToCmax, 2)} (largest over compartments of |Δc| / Cmax of the compartment)`],
      ['AUC difference', `${fmt(check.aucRelative, 2)} relative`],
      ['Amounts', `largest difference ${fmt(check.amountRelative, 2)} of the compartment's largest amount (all compartments, depots included)`],
    );
  } else checkRows.push(['Outcome', `not completed: ${check.problems.join('; ')}`]);
  keyValues(doc, checkRows, 96, type.small + 0.4);
  gap(doc, 2);
  paragraph(doc, verdict(check), { face: font.bold, size: type.small + 0.4 });
}

// ---- 7. Per-interval figures ----
function intervalSection(doc: PDFKit.PDFDocument, model: Model, result: SimulationResult, params: ModelParameters): void {
  const u = result.units;
  const centralId = params.central === null ? null : model.compartments[params.central].id;
  const figures = result.metrics.compartments.find((c) => c.compartment === centralId);
  section(doc, '7  Figures per dosing interval', 100);
  if (!figures || figures.intervals.length === 0) {
    paragraph(doc, 'There are no dosing intervals to list.');
    return;
  }
  const windowed = figures.intervals.some((iv) => iv.windows.length > 0);
  paragraph(
    doc,
    `Central compartment ${centralId}; an interval runs from one dose to the next (the last to the end of the span). Concentrations in ${unitText(u.concentration)}, times in ${u.time}, AUC in ${unitText(u.auc)}.${
      result.metrics.compartments.length > 1 ? ' Other compartments are summarised in section 4.' : ''
    }`,
    { size: type.small },
  );
  const columns = [
    { header: '#', width: 0.5, align: 'right' as const },
    // With a clock, the start's clock time goes under it: the column is widened to hold it on one line.
    { header: model.clock ? 'Start and clock time' : 'Start', width: model.clock ? 2.8 : 0.85, align: 'right' as const },
    { header: 'End', width: 0.85, align: 'right' as const },
    { header: 'Cmax', width: 0.9, align: 'right' as const },
    { header: 'Tmax', width: 0.9, align: 'right' as const },
    { header: 'Trough', width: 0.9, align: 'right' as const },
    { header: 'AUC', width: 0.95, align: 'right' as const },
    { header: 'Cavg', width: 0.9, align: 'right' as const },
    { header: 'Fluct. %', width: 0.8, align: 'right' as const },
  ];
  if (windowed) columns.push({ header: 'In window', width: 0.95, align: 'right' as const });
  drawTable(doc, {
    caption: `Per-interval figures — ${centralId}`,
    columns,
    zebra: true,
    size: type.tiny + 0.3,
    rows: figures.intervals.map((iv) => {
      const row = [String(iv.index + 1), timeAndClock(iv.start, model), fmt(iv.end), fmt(iv.cmax), fmt(iv.tmax), fmt(iv.trough), fmt(iv.auc), fmt(iv.cavg), fmt(iv.fluctuation === null ? null : 100 * iv.fluctuation)];
      if (windowed) row.push(percent(iv.windows[0]?.fractionInWindow));
      return row;
    }),
    footnote: `Trough: the concentration just before the next dose (— for the last interval). Fluct.: fluctuation (Cmax − Cmin)/Cavg in percent. In window: share of the interval inside the first target window.`,
  });
}

