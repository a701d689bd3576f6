/**
 * The report's virtual-population section, after the typical subject's sections: the
 * population's caution boxed, its settings, percentile bands per compartment with a volume,
 * the exposure percentiles per period, the probability of each target with its Monte Carlo
 * standard error, the regimen grid, and the engine's warnings. The population is run here,
 * in the report's own thread (a worker of the server, or the command line's), and a
 * population too large for a report is run with fewer subjects — said at the top of the
 * section, never silently.
 */
import type { Model } from '../../models/building/model.ts';
import { linearAxis, timeAxis, type Axis } from '../../models/result/axis-ticks.ts';
import { planPopulation, simulatePopulation } from '../../models/population/population.ts';
import type { FigureSummary, PopulationResult, WindowSummary } from '../../models/population/summary.ts';
import { parseScenario } from '../../models/scenario/normalize.ts';
import type { Problem } from '../../models/scenario/problems.ts';
import type { Scenario } from '../../models/scenario/schema.ts';
import { readShare } from '../../models/scenario/shares.ts';
import { contentLeft, contentWidth, ensureSpace, font, heading, keyValues, palette, paragraph, type } from './document.ts';
import { fmt, percent, unitText } from './format.ts';
import { drawTickMarks, thinned, type Frame } from './plot.ts';
import { doseMarks } from './regimen.ts';
import { drawSectionCaution } from './section-text.ts';
import { drawTable, type Cell, type TableSpec } from './table.ts';

// ---- Size ----

/** What a report may compute for a population: concentrations kept for the bands, and regimen runs. */
export interface PopulationCap {
  /** Largest subjects × output times × compartments with a volume. */
  gridValues: number;
  /** Largest regimens × subjects of the regimen grid. */
  regimenRuns: number;
}

/** The report's limit: about 40 MB of kept concentrations, and a grid a worker runs in well under a minute. */
export const reportPopulationCap: PopulationCap = { gridValues: 5_000_000, regimenRuns: 20_000 };

export interface SubjectsUsed {
  requested: number;
  used: number;
  /** Why fewer subjects are used than requested, in words; empty when all are used. */
  reasons: string[];
}

const whole = (n: number) => n.toLocaleString('en-GB').replace(/,/g, ' ');

/** The subjects a report runs: as many as requested, unless a cap holds fewer. Pure. */
export function subjectsWithinCap(requested: number, times: number, banded: number, regimens: number, cap: PopulationCap): SubjectsUsed {
  let used = requested;
  const reasons: string[] = [];
  const perSubject = times * banded;
  if (requested * perSubject > cap.gridValues) {
    used = Math.min(used, Math.floor(cap.gridValues / perSubject));
    reasons.push(
      `${whole(requested)} subjects × ${whole(times)} output times × ${banded} compartment${banded === 1 ? '' : 's'} with a volume make ${whole(requested * perSubject)} concentrations, more than this report's limit of ${whole(cap.gridValues)}`,
    );
  }
  if (regimens > 0 && requested * regimens > cap.regimenRuns) {
    used = Math.min(used, Math.floor(cap.regimenRuns / regimens));
    reasons.push(`${regimens} regimens × ${whole(requested)} subjects make ${whole(requested * regimens)} regimen runs, more than this report's limit of ${whole(cap.regimenRuns)}`);
  }
  return { requested, used, reasons };
}

// ---- Running ----

/** A varying quantity as the scenario gives it. */
export interface VaryingWords {
  quantity: string;
  path: string;
  cv: string;
  kind: string;
}

export interface PopulationRun {
  /** Null when not even one subject fits the cap. */
  result: PopulationResult | null;
  size: SubjectsUsed;
  varying: VaryingWords[];
}

export type PopulationOutcome = { ok: true; value: PopulationRun } | { ok: false; status: 400 | 422; problems: Problem[] };

/** The value at a JSON path such as "transfers[0].cl" inside the parsed scenario. */
function atPath(root: unknown, path: string): unknown {
  let node: unknown = root;
  for (const key of path.split(/[.[\]]/).filter(Boolean)) {
    if (typeof node !== 'object' || node === null) return undefined;
    node = /^\d+$/.test(key) && Array.isArray(node) ? node[Number(key)] : (node as Record<string, unknown>)[key];
  }
  return node;
}

/** Each varying quantity's cv and how it varies, read back from the scenario (defaults as the reader applies them). */
export function varyingWords(scenario: Scenario, varying: { quantity: string; path: string }[]): VaryingWords[] {
  return varying.map((v) => {
    const q = atPath(scenario, v.path) as { cv?: number | string; variation?: string } | undefined;
    const share = q?.cv === undefined ? null : readShare(q.cv, `${v.path}.cv`, { fail: () => undefined }, 'a coefficient of variation', 5);
    // Fractions (bioavailability) vary logit-normally unless told otherwise, as models/scenario/normalize.ts reads them.
    const kind = q?.variation ?? (v.path.endsWith('.bioavailability') ? 'logit-normal' : 'log-normal');
    return { quantity: v.quantity, path: v.path, cv: share === null ? '—' : `${fmt(100 * share)}%`, kind };
  });
}

/** Runs the scenario's population for the report; null when the scenario has no population section. */
export function runReportPopulation(scenario: unknown, cap: PopulationCap = reportPopulationCap): PopulationOutcome | null {
  const parsed = parseScenario(scenario);
  if (!parsed.ok) return { ok: false, status: 400, problems: parsed.problems };
  if (!parsed.value.population) return null;
  const plan = planPopulation(scenario);
  if (!plan.ok) return { ok: false, status: 400, problems: plan.problems };
  const p = plan.value;
  const size = subjectsWithinCap(p.subjects, p.template.outputTimes.length, p.layout.banded.length, p.regimens.length, cap);
  const varying = varyingWords(
    parsed.value,
    p.varying.map((v) => ({ quantity: v.name ?? v.path, path: v.path })),
  );
  if (size.used < 1) return { ok: true, value: { result: null, size, varying } };
  const run = simulatePopulation(scenario, { subjects: size.used });
  if (!run.ok) return { ok: false, status: 422, problems: run.problems };
  return { ok: true, value: { result: run.value, size, varying } };
}

// ---- Words ----

/** "5" → "5th", "50" → "50th", "2.5" → "2.5th", "1" → "1st". */
export function ordinal(key: string): string {
  const n = Number(key);
  if (!Number.isInteger(n)) return `${key}th`;
  const teen = n % 100 >= 11 && n % 100 <= 13;
  const suffix = teen ? 'th' : n % 10 === 1 ? 'st' : n % 10 === 2 ? 'nd' : n % 10 === 3 ? 'rd' : 'th';
  return `${n}${suffix}`;
}

/** The percentile drawn as the line: the 50th when asked for, else the middle one listed. */
function middleKey(keys: string[]): string {
  return keys.includes('50') ? '50' : keys[Math.floor((keys.length - 1) / 2)];
}

const figureNames: [name: string, label: (u: PopulationResult['units']) => string][] = [
  ['cmax', (u) => `Cmax (${unitText(u.concentration)})`],
  ['tmax', (u) => `Tmax in the interval (${u.time})`],
  ['cmin', (u) => `Cmin (${unitText(u.concentration)})`],
  ['trough', (u) => `Trough (${unitText(u.concentration)})`],
  ['auc', (u) => `AUC over the interval (${unitText(u.auc)})`],
  ['cavg', (u) => `Cavg (${unitText(u.concentration)})`],
  ['auc24', (u) => `AUC per 24 h (${unitText(u.auc)})`],
];

function isSummary(x: FigureSummary | WindowSummary[] | undefined): x is FigureSummary {
  return x !== undefined && !Array.isArray(x);
}

/** Table rows of one period: every figure, then each window's share (in percent) — per compartment. */
function exposureRows(compartments: Record<string, Record<string, FigureSummary | WindowSummary[]>>, keys: string[], units: PopulationResult['units']): (string | Cell)[][] {
  const rows: (string | Cell)[][] = [];
  for (const [id, figures] of Object.entries(compartments)) {
    let first = true;
    const cell = () => {
      const c: Cell = { text: first ? id : '', bold: first };
      first = false;
      return c;
    };
    for (const [name, label] of figureNames) {
      const s = figures[name];
      if (!isSummary(s)) continue;
      rows.push([cell(), label(units), ...keys.map((k) => fmt(s.percentiles[k])), fmt(s.mean), whole(s.subjects)]);
    }
    const windows = figures.windows;
    if (Array.isArray(windows)) {
      for (const w of windows) {
        const s = w.share;
        const edges = w.label.startsWith('above') || w.label.startsWith('below') ? unitText(w.label) : `within ${unitText(w.label)}`;
        rows.push([cell(), `${edges[0].toUpperCase()}${edges.slice(1)} (% of the interval)`, ...keys.map((k) => percent(s.percentiles[k])), percent(s.mean), whole(s.subjects)]);
      }
    }
  }
  return rows;
}

// ---- Drawing ----

function sectionHeading(doc: PDFKit.PDFDocument, title: string, keep: number): void {
  heading(doc, title, 1, keep);
  doc.outline.addItem(title);
}

interface BandSpec {
  compartment: string;
  times: number[];
  lower: number[];
  middle: number[];
  upper: number[];
  /** Outer percentiles of the simulated observations (with residual error), or null. */
  observed: { lower: number[]; upper: number[] } | null;
  windows: { above: number | null; below: number | null }[];
  doses: number[];
  timeUnit: string;
  concentrationUnit: string;
}

function drawGridAndTicks(doc: PDFKit.PDFDocument, f: Frame, xAxis: Axis, yAxis: Axis, xOf: (t: number) => number, yOf: (c: number) => number): void {
  doc.save().lineWidth(0.35).strokeColor('#dde2e7');
  for (const t of yAxis.ticks) doc.moveTo(f.left, yOf(t.value)).lineTo(f.right, yOf(t.value)).stroke();
  for (const t of xAxis.ticks) doc.moveTo(xOf(t.value), f.top).lineTo(xOf(t.value), f.bottom).stroke();
  doc.restore();
  drawTickMarks(doc, f, xAxis, yAxis, xOf, yOf);
}

/** A path through the thinned points of one series (clipped by the caller). */
function trace(doc: PDFKit.PDFDocument, times: number[], values: number[], idx: number[], xOf: (t: number) => number, yOf: (c: number) => number, start: boolean): void {
  let pen = !start;
  for (const i of idx) {
    if (!Number.isFinite(values[i])) continue;
    if (pen) doc.lineTo(xOf(times[i]), yOf(values[i]));
    else doc.moveTo(xOf(times[i]), yOf(values[i]));
    pen = true;
  }
}

const bandFill = '#b9d3e8';
const observedColor = '#c2571a';

/** One band panel: the shaded outer percentiles, the middle percentile as a line, observations dashed. */
function drawBandPanel(doc: PDFKit.PDFDocument, spec: BandSpec, title: string, y: number, height: number): void {
  const f: Frame = { left: contentLeft + 50, right: contentLeft + contentWidth - 10, top: y + 16, bottom: y + height - 30 };
  const n = spec.times.length;
  const start = spec.times[0];
  const end = spec.times[n - 1];
  let maxC = 0;
  for (const s of [spec.upper, spec.observed?.upper ?? []]) for (const v of s) if (Number.isFinite(v) && v > maxC) maxC = v;
  // A window edge near the data counts towards the range, so its line is seen.
  for (const w of spec.windows) for (const edge of [w.above, w.below]) if (edge !== null && edge <= maxC * 1.5) maxC = Math.max(maxC, edge * 1.05);
  const xAxis = timeAxis(start, end, spec.timeUnit);
  const yAxis = linearAxis(0, maxC > 0 ? maxC : 1, 6);
  const xOf = (t: number) => f.left + ((t - xAxis.min) / (xAxis.max - xAxis.min)) * (f.right - f.left);
  const yOf = (c: number) => f.bottom - ((c - yAxis.min) / (yAxis.max - yAxis.min)) * (f.bottom - f.top);

  doc.font(font.bold).fontSize(type.small).fillColor(palette.text).text(title, f.left, y + 2, { lineBreak: false });
  drawGridAndTicks(doc, f, xAxis, yAxis, xOf, yOf);

  doc.save();
  doc.rect(f.left, f.top, f.right - f.left, f.bottom - f.top).clip();
  const columns = Math.max(10, Math.round((f.right - f.left) / 0.5));
  // The band: along the upper percentile, back along the lower one.
  const up = thinned(spec.times, spec.upper, xAxis.min, xAxis.max, columns);
  const low = thinned(spec.times, spec.lower, xAxis.min, xAxis.max, columns).reverse();
  trace(doc, spec.times, spec.upper, up, xOf, yOf, true);
  trace(doc, spec.times, spec.lower, low, xOf, yOf, false);
  doc.closePath().fillColor(bandFill).fill();
  for (const w of spec.windows) {
    doc.save().lineWidth(0.7).strokeColor(palette.windowEdge).dash(1.5, { space: 1.5 });
    for (const edge of [w.above, w.below]) if (edge !== null && edge <= yAxis.max) doc.moveTo(f.left, yOf(edge)).lineTo(f.right, yOf(edge)).stroke();
    doc.undash().restore();
  }
  if (spec.observed) {
    for (const s of [spec.observed.lower, spec.observed.upper]) {
      trace(doc, spec.times, s, thinned(spec.times, s, xAxis.min, xAxis.max, columns), xOf, yOf, true);
      doc.lineWidth(0.6).strokeColor(observedColor).dash(2.2, { space: 1.8 }).stroke().undash();
    }
  }
  trace(doc, spec.times, spec.middle, thinned(spec.times, spec.middle, xAxis.min, xAxis.max, columns), xOf, yOf, true);
  doc.lineWidth(1.2).lineJoin('round').strokeColor(palette.accent).stroke();
  doc.restore();

  // Doses given: short ticks on the time axis.
  doc.save().lineWidth(0.5).strokeColor(palette.muted);
  for (const t of spec.doses) if (t >= xAxis.min && t <= xAxis.max) doc.moveTo(xOf(t), f.bottom).lineTo(xOf(t), f.bottom - 4).stroke();
  doc.restore();
  doc.save().lineWidth(0.7).strokeColor(palette.text).rect(f.left, f.top, f.right - f.left, f.bottom - f.top).stroke().restore();

  doc.font(font.regular).fontSize(type.tiny).fillColor(palette.text);
  const xTitle = xAxis.note?.startsWith('labels in days') ? `time (days) — ${xAxis.note.replace('labels in days, ', '')}` : `time (${spec.timeUnit})${xAxis.note ? ` — ${xAxis.note}` : ''}`;
  doc.text(xTitle, (f.left + f.right) / 2 - doc.widthOfString(xTitle) / 2, f.bottom + 15, { lineBreak: false });
}

const bandPanelHeight = 190;

function drawBandLegend(doc: PDFKit.PDFDocument, items: { label: string; draw: (x: number, y: number) => void }[], y: number): number {
  doc.font(font.regular).fontSize(type.small);
  const width = contentWidth - 60;
  let cx = 0;
  let cy = 0;
  const row = type.small * 1.6;
  for (const item of items) {
    const w = 22 + doc.widthOfString(item.label) + 14;
    if (cx + w > width && cx > 0) {
      cx = 0;
      cy += row;
    }
    item.draw(contentLeft + 50 + cx, y + cy + type.small * 0.55);
    doc.font(font.regular).fontSize(type.small).fillColor(palette.text).text(item.label, contentLeft + 50 + cx + 22, y + cy, { lineBreak: false });
    cx += w;
  }
  return cy + row;
}

function bandFigure(doc: PDFKit.PDFDocument, result: PopulationResult, model: Model, figureNumber: string): void {
  const keys = result.percentiles;
  const lo = keys[0];
  const hi = keys[keys.length - 1];
  const mid = middleKey(keys);
  const ids = Object.keys(result.bands);
  if (ids.length === 0) {
    paragraph(doc, 'No compartment has a volume, so there are no concentration bands.');
    return;
  }
  const doses = [...new Set(doseMarks(model).map((d) => d.given))];
  const items: { label: string; draw: (x: number, y: number) => void }[] = [];
  // With a single percentile there is no band, only its line.
  if (lo !== hi) items.push({ label: `${ordinal(lo)}–${ordinal(hi)} percentile of the model population`, draw: (x, y) => void doc.save().rect(x, y - 3.5, 18, 7).fillColor(bandFill).fill().restore() });
  items.push(
    { label: `${ordinal(mid)} percentile${mid === '50' ? ' (median)' : ''}`, draw: (x: number, y: number) => void doc.save().lineWidth(1.4).strokeColor(palette.accent).moveTo(x, y).lineTo(x + 18, y).stroke().restore() },
  );
  if (result.observationBands && lo !== hi) {
    items.push({
      label: `${ordinal(lo)}–${ordinal(hi)} percentile of simulated observations (with residual error)`,
      draw: (x, y) => void doc.save().lineWidth(0.8).strokeColor(observedColor).dash(2.2, { space: 1.8 }).moveTo(x, y).lineTo(x + 18, y).stroke().undash().restore(),
    });
  }
  if (model.thresholds.length > 0) items.push({ label: 'target window edges (output.thresholds)', draw: (x, y) => void doc.save().lineWidth(0.8).strokeColor(palette.windowEdge).dash(1.5, { space: 1.5 }).moveTo(x, y).lineTo(x + 18, y).stroke().undash().restore() });
  if (doses.length > 0) items.push({ label: 'dose given (tick on the time axis)', draw: (x, y) => void doc.save().lineWidth(0.8).strokeColor(palette.muted).moveTo(x + 9, y + 3).lineTo(x + 9, y - 3).stroke().restore() });

  ids.forEach((id, k) => {
    const index = model.compartments.findIndex((c) => c.id === id);
    const label = model.compartments[index]?.label;
    const spec: BandSpec = {
      compartment: id,
      times: result.times,
      lower: result.bands[id][lo],
      middle: result.bands[id][mid],
      upper: result.bands[id][hi],
      observed: result.observationBands && lo !== hi ? { lower: result.observationBands[id][lo], upper: result.observationBands[id][hi] } : null,
      windows: model.thresholds.filter((t) => t.compartment === index),
      doses,
      timeUnit: result.units.time,
      concentrationUnit: result.units.concentration,
    };
    // The legend goes above the first panel, and again above a panel that starts a page.
    doc.font(font.regular).fontSize(type.small);
    const legendGuess = type.small * 1.6 * 3;
    const before = doc.bufferedPageRange().count;
    ensureSpace(doc, (k === 0 ? legendGuess : 0) + bandPanelHeight + 4);
    let y = doc.y;
    if (k === 0 || doc.bufferedPageRange().count !== before) y += drawBandLegend(doc, items, y) + 2;
    drawBandPanel(doc, spec, `${id}${label && label !== id ? ` (${label})` : ''} — concentration (${unitText(spec.concentrationUnit)})`, y, bandPanelHeight);
    doc.y = y + bandPanelHeight + 2;
  });
  paragraph(
    doc,
    lo === hi
      ? `Figure ${figureNumber}. The ${ordinal(mid)} percentile of the concentrations of ${whole(result.subjects)} virtual subjects at each output time (only one percentile was asked for, so there is no band).`
      : `Figure ${figureNumber}. Concentration bands of ${whole(result.subjects)} virtual subjects over time: the shaded band spans the ${ordinal(lo)} to the ${ordinal(hi)} percentile at each output time, the line is the ${ordinal(mid)} percentile. Percentiles are taken time by time, so no single subject follows a band edge.${
          result.observationBands ? ' The dashed lines add the residual error of a single measured sample.' : ''
        }`,
    { size: type.small, color: palette.muted, face: font.italic },
  );
}

/** The height keyValues will take for these rows, measured as it measures them. */
function keyValuesHeight(doc: PDFKit.PDFDocument, rows: [string, string][], labelWidth: number, size: number): number {
  doc.font(font.regular).fontSize(size);
  return rows.reduce((h, [label, value]) => h + Math.max(doc.heightOfString(value, { width: contentWidth - labelWidth }), doc.heightOfString(label, { width: labelWidth - 6 })) + 1.5, 0);
}

/**
 * Keeps a short table whole: a new page first when it does not fit in what is left of this
 * one. Rows are measured as table.ts measures them (its padding 3.5 and 2.2 points).
 */
function keepTableWhole(doc: PDFKit.PDFDocument, spec: TableSpec): void {
  const size = spec.size ?? type.small;
  const total = spec.columns.reduce((sum, c) => sum + c.width, 0);
  const widths = spec.columns.map((c) => (c.width / total) * contentWidth * (spec.width ?? 1) - 7);
  const rowHeight = (cells: (string | Cell)[], bold: boolean) =>
    cells.reduce<number>((h, raw, i) => {
      const cell = typeof raw === 'string' ? { text: raw } : raw;
      doc.font(bold || cell.bold ? font.bold : font.regular).fontSize(size);
      return Math.max(h, doc.heightOfString(cell.text || ' ', { width: widths[i], lineGap: 0 }) + 4.4);
    }, 0);
  let height = (spec.caption ? size * 1.5 + 3 : 0) + rowHeight(spec.columns.map((c) => c.header), true) + 10;
  for (const row of spec.rows) height += rowHeight(row, false);
  if (spec.footnote) {
    doc.font(font.regular).fontSize(type.small);
    height += doc.heightOfString(spec.footnote, { width: contentWidth, lineGap: 1 }) + 10;
  }
  if (height < 500) ensureSpace(doc, height);
}

/** A table kept on one page when it is short enough. */
function wholeTable(doc: PDFKit.PDFDocument, spec: TableSpec): void {
  keepTableWhole(doc, spec);
  drawTable(doc, spec);
}

function settingsRows(run: PopulationRun, result: PopulationResult): [string, string][] {
  const s = result.settings;
  const u = result.units;
  const rows: [string, string][] = [];
  const n = run.size.used === run.size.requested ? `${whole(result.subjects)}` : `${whole(result.subjects)} used of ${whole(run.size.requested)} requested (see above)`;
  rows.push(['Virtual subjects N', n]);
  rows.push(['Seed', `${result.seed} (subject i's random numbers depend only on the seed and i)`]);
  const covariates = s.covariates.length > 0 ? s.covariates : ["none drawn: every subject has the scenario's subject covariates"];
  covariates.forEach((c, i) => rows.push([i === 0 ? 'Covariates' : '', unitText(c)]));
  const varying = run.varying.length > 0 ? run.varying.map((v) => `${v.quantity === v.path ? v.path : `${v.quantity} (${v.path})`}: cv ${v.cv}, ${v.kind}`) : ['none: no model quantity has a cv, so subjects differ only by their covariates'];
  varying.forEach((v, i) => rows.push([i === 0 ? 'Varying quantities' : '', v]));
  rows.push(['Correlations', s.correlations.length > 0 ? s.correlations.map((c) => `${c.between[0]}–${c.between[1]} ${fmt(c.value)}`).join('; ') : 'none (the varying quantities vary independently)']);
  rows.push([
    'Residual error',
    s.residual ? `additive ${fmt(s.residual.additive)} ${unitText(u.concentration)}, proportional ${fmt(100 * s.residual.proportional)}%: an observation is C·(1 + p·e₁) + a·e₂, e₁ and e₂ standard normal` : 'none',
  ]);
  rows.push(['Percentiles', result.percentiles.map(ordinal).join(', ')]);
  rows.push(['Method', `${result.diagnostics.methods.join(', ')}; largest mass-balance error of any subject ${fmt(result.diagnostics.worstMassBalance, 2)} relative`]);
  return rows;
}

function exposureTables(doc: PDFKit.PDFDocument, result: PopulationResult): void {
  const keys = result.percentiles;
  const columns = [
    { header: 'Compartment', width: 1.1 },
    { header: 'Figure', width: 2.6 },
    ...keys.map((k) => ({ header: ordinal(k), width: 0.85, align: 'right' as const })),
    { header: 'Mean', width: 0.85, align: 'right' as const },
    { header: 'Subjects', width: 0.75, align: 'right' as const },
  ];
  const headline = result.headlinePeriod;
  const period = (name: string) => result.periods.find((p) => p.period === name);
  const undeterminedNote = (name: string) => {
    const n = period(name)?.undetermined ?? 0;
    return n > 0 ? ` ${whole(n)} subjects without a value are left out (Subjects column).` : '';
  };
  if (headline) {
    drawTable(doc, {
      caption: `Exposure, ${headline} (headline period)`,
      columns,
      rows: exposureRows(result.exposure, keys, result.units),
      footnote: `Percentiles and mean over the virtual subjects; one dosing interval${headline === 'steady state' ? ' of the regimen continued to steady state' : ''}.${undeterminedNote(headline)}`,
    });
  }
  for (const p of result.periods) {
    if (p.period === headline) continue;
    drawTable(doc, {
      caption: `Exposure, ${p.period}`,
      columns,
      rows: exposureRows(p.compartments, keys, result.units),
      footnote: undeterminedNote(p.period).trim() || undefined,
    });
  }
}

function attainmentTable(doc: PDFKit.PDFDocument, result: PopulationResult): void {
  if (result.attainment.length === 0) {
    paragraph(doc, 'No targets were set (population.targets), so no probability of target attainment is reported.', { size: type.small });
    return;
  }
  wholeTable(doc, {
    caption: 'Probability of target attainment',
    columns: [
      { header: '#', width: 0.3, align: 'right' },
      { header: 'Target', width: 3.3 },
      { header: 'Probability', width: 0.95, align: 'right' },
      { header: 'Monte Carlo standard error', width: 1.25, align: 'right' },
      { header: 'Attained / subjects', width: 1.05, align: 'right' },
      { header: 'Not determined', width: 1.05, align: 'right' },
    ],
    rows: result.attainment.map((a, k) => [String(k + 1), unitText(a.target), { text: percent(a.probability), bold: true }, percent(a.standardError), `${whole(a.attained)} / ${whole(a.subjects)}`, whole(a.undetermined)]),
    footnote:
      'Probability: the share of virtual subjects whose figure meets the target. Monte Carlo standard error √(p(1 − p)/N), in percentage points: the uncertainty from the number of subjects alone, not from the model. Undetermined subjects (no steady state) count as not attaining.',
  });
}

/** The regimen grid: attainment per target, the joint and ceiling shares, and the row best under the rule. */
function regimenTables(doc: PDFKit.PDFDocument, regimens: NonNullable<PopulationResult['regimens']>, targets: number): void {
  const perTable = 5;
  const best = regimens.best;
  for (let first = 0; first < Math.max(1, targets); first += perTable) {
    const chunk = Array.from({ length: Math.min(perTable, targets - first) }, (_, j) => first + j);
    const last = first + perTable >= targets;
    wholeTable(doc, {
      caption: targets > perTable ? `Regimen grid, targets ${first + 1}–${first + chunk.length}` : 'Regimen grid',
      columns: [
        { header: 'Regimen', width: 2.6 },
        ...chunk.map((k) => ({ header: `Target ${k + 1}`, width: 0.8, align: 'right' as const })),
        { header: 'Every lower target (joint)', width: 1.05, align: 'right' },
        { header: 'Every ceiling kept', width: 1.05, align: 'right' },
      ],
      rows: regimens.rows.map((row, r) => {
        const mark = r === best;
        return [
          // The mark on a line of its own under the regimen, so it never breaks mid-phrase.
          { text: mark ? `${row.regimen}\nbest under the rule` : row.regimen, bold: mark },
          ...chunk.map((k) => ({ text: percent(row.attainment[k]?.probability), bold: mark })),
          // No lower target: no joint share (the ceilings rank the regimens, as the rule says).
          { text: row.joint ? `${percent(row.joint.probability)} ± ${(100 * row.joint.standardError).toFixed(1)}` : '—', bold: mark },
          { text: `${percent(row.ceiling.probability)} ± ${(100 * row.ceiling.standardError).toFixed(1)}`, bold: mark },
        ];
      }),
      footnote: last
        ? `Every regimen is run on the same virtual subjects. Target numbers as in the attainment table; ± is the Monte Carlo standard error in percentage points. The rule: ${regimens.rule}. ${
            best === null ? 'No regimen meets the rule, so none is marked.' : `Best under the rule: ${regimens.rows[best].regimen}.`
          } A ranking of simulated regimens for review, not a dose recommendation.`
        : undefined,
    });
  }
}

/**
 * The population section. `number` is its section number; the figure takes the next free
 * figure number.
 */
export function drawPopulationSection(doc: PDFKit.PDFDocument, run: PopulationRun, model: Model, number: string, figureNumber: string): void {
  sectionHeading(doc, `${number}  Virtual population`, 200);
  const result = run.result;
  const caution = result?.caution ?? 'Population figures describe a model population drawn from the distributions given, not a patient. This is a simulation for review, not dosing advice.';
  drawSectionCaution(doc, 'Caution — virtual population', [caution, 'Sections before this one describe the typical subject of the scenario; this section describes subjects drawn at random around it.']);
  if (run.size.reasons.length > 0) {
    const used = run.size.used < 1 ? 'so the population is not run in this report' : `so this section runs ${whole(run.size.used)} of the ${whole(run.size.requested)} subjects requested (subjects 1 to ${whole(run.size.used)} of the same seed)`;
    paragraph(doc, `Fewer subjects than requested: ${run.size.reasons.join('; and ')}; ${used}. Monte Carlo standard errors grow accordingly.`, {
      face: font.bold,
      color: palette.warning,
      size: type.body,
      after: 5,
    });
  }
  if (!result) return;

  const settings = settingsRows(run, result);
  // The settings stay on one page: a reader checks them together.
  heading(doc, 'Settings', 2, keyValuesHeight(doc, settings, 108, type.small + 0.4));
  keyValues(doc, settings, 108, type.small + 0.4);

  heading(doc, 'Concentration bands', 2, bandPanelHeight + 30);
  bandFigure(doc, result, model, figureNumber);

  heading(doc, 'Exposure percentiles', 2, 80);
  paragraph(doc, `Concentrations in ${unitText(result.units.concentration)}, times in ${result.units.time}, AUC in ${unitText(result.units.auc)}; shares of the interval in percent.`, { size: type.small });
  exposureTables(doc, result);

  heading(doc, 'Target attainment', 2, 80);
  attainmentTable(doc, result);
  if (result.regimens) regimenTables(doc, result.regimens, result.attainment.length);

  heading(doc, 'Population warnings', 2, 30);
  const warnings = result.diagnostics.warnings;
  if (warnings.length === 0) paragraph(doc, 'None: every virtual subject ran and every figure was determined.', { size: type.small });
  for (const w of warnings) paragraph(doc, `• ${w}`, { color: palette.warning, indent: 4 });
}
