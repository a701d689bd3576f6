/**
 * The report's non-compartmental section, drawn when the scenario has measured levels: per
 * subject and compartment every figure the levels support with its unit and its rule, the
 * levels the terminal line was fitted through, the flags (never hidden), the levels left out
 * with why, and the summary over subjects. The figures come from ncaOfModel
 * (models/levels/nca-scenario.ts), the same as `tidemark nca` and POST /api/nca.
 */
import type { Model } from '../../models/building/model.ts';
import { clockLabel } from '../../models/levels/clock.ts';
import { ncaFigureInfo, ncaFigureNames, ncaLabel, type NcaFigureName, type NcaRoute } from '../../models/levels/nca.ts';
import { NCA_CAUTION, ncaOfModel, type ScenarioNca, type ScenarioNcaProfile } from '../../models/levels/nca-scenario.ts';
import type { NcaSummary } from '../../models/levels/nca-summary.ts';
import type { Outcome } from '../../models/scenario/problems.ts';
import type { NcaSettingsLine } from '../../models/scenario/schema.ts';
import { unitsPerHour } from '../../models/scenario/instants.ts';
import { unitOf } from '../nca-cli.ts';
import { font, heading, palette, paragraph, type } from './document.ts';
import { fmt, percent, unitText } from './format.ts';
import { bullet } from './section-text.ts';
import { drawTable, type Cell } from './table.ts';

/** The NCA of the scenario's levels (with its `nca` section: the rule, fixed terminal lines); null without levels. Problems are drawn in the section, not refused: NCA is not asked for. */
export function runReportNca(model: Model, section?: NcaSettingsLine): Outcome<ScenarioNca> | null {
  if (model.observations.length === 0) return null;
  return ncaOfModel(model, section ? { section } : {});
}

const ruleWords = { 'linear-up-log-down': 'linear trapezoids while levels rise or stay, log-linear ones while they fall (linear-up/log-down)', linear: 'linear trapezoids throughout' } as const;

function figureUnit(name: NcaFigureName, units: ScenarioNca['units']): string {
  const d = ncaFigureInfo[name].dimension;
  return d === 'percent' ? '%' : d === 'none' ? '' : unitText(unitOf(d, units));
}

function value(name: NcaFigureName, v: number | null): string {
  if (v === null) return '—';
  return name === 'terminalAdjustedR2' ? v.toFixed(4) : fmt(v);
}

/** "Subject P-017, central" or "central" when the levels name no subject. */
function profileTitle(p: ScenarioNcaProfile): string {
  const who = p.subject !== null ? `Subject ${p.subject.replace(/[\u0000-\u001f\u007f]/g, ' ')}, ` : '';
  return `${who}${p.compartment}`;
}

/** The figures of one profile shown: every figure with a value, and every empty one a flag speaks of. */
function shownFigures(p: ScenarioNcaProfile): NcaFigureName[] {
  const flagged = new Set(p.result.flags.map((f) => f.figure));
  return ncaFigureNames.filter((n) => p.result.figures[n] !== null || flagged.has(n));
}

function doseWords(p: ScenarioNcaProfile, model: Model): string {
  const u = model.units;
  if (!p.dose) return 'No dose in the scenario: areas start at time 0; no CL, Vz or MRT.';
  const route = p.dose.route === 'infusion' ? `an infusion over ${fmt(p.dose.duration ?? 0)} ${u.time}` : p.dose.route === 'extravascular' ? 'extravascular (CL/F and Vz/F: F is not known to NCA)' : 'an intravascular bolus';
  const when = `dose ${p.doseNumber ?? 1} at ${fmt(p.dose.time)} ${u.time}${model.clock ? ` (${clockLabel(p.dose.time / unitsPerHour(model.units), model.clock)})` : ''}`;
  const steady = p.interval !== null ? `; steady-state figures over τ = ${fmt(p.interval)} ${u.time} after it` : '';
  return `Figures follow ${when}: ${fmt(p.dose.amount)} ${unitText(u.amount)} nominal, ${route}${steady}. Times of figures (Tmax, Tlast) are counted from that dose.`;
}

/** "fixed by the user from 96 h (2026-03-08 08:00 (+01:00); nca.terminal[0])": the start as written in time and on the clock. */
function fixedWords(fixed: NonNullable<ScenarioNcaProfile['terminalFixed']>, model: Model): string {
  const clock = model.clock ? `${clockLabel(fixed.from / unitsPerHour(model.units), model.clock)}; ` : '';
  return `fixed by the user from ${fmt(fixed.from)} ${model.units.time} (${clock}${fixed.path})`;
}

function profileTable(doc: PDFKit.PDFDocument, p: ScenarioNcaProfile, nca: ScenarioNca, model: Model): void {
  const route: NcaRoute | null = p.dose?.route ?? null;
  const r = p.result;
  heading(doc, profileTitle(p), 2, 120);
  paragraph(doc, doseWords(p, model), { size: type.small });
  const flagged = new Set(r.flags.map((f) => f.figure));
  drawTable(doc, {
    columns: [
      { header: 'Figure', width: 1.15 },
      { header: 'Value', width: 0.85, align: 'right' },
      { header: 'Unit', width: 0.75 },
      { header: 'Rule', width: 5 },
    ],
    size: type.tiny + 0.3,
    rows: shownFigures(p).map((name) => {
      const mark = flagged.has(name);
      const cell: Cell = { text: `${value(name, r.figures[name])}${mark ? ' !' : ''}`, bold: mark, ...(mark ? { color: palette.warning } : {}) };
      return [ncaLabel(name, route), cell, figureUnit(name, nca.units), ncaFigureInfo[name].rule];
    }),
    footnote: '! : a flag below concerns this figure. — : the levels cannot give it (the flag says why).',
  });
  if (r.terminal) {
    const t = r.terminal;
    const levels = t.indices.map((i) => p.paths[i]);
    paragraph(
      doc,
      `Terminal line through ${t.times.length} levels at ${t.times.map((x) => fmt(x)).join(', ')} ${nca.units.time} after the dose (${levels.join(', ')}), ${t.chosenBy === 'fixed' && p.terminalFixed ? `${fixedWords(p.terminalFixed, model)}: the levels at or after it that come after Cmax` : t.chosenBy === 'two levels only' ? 'the only two levels after Cmax, fewer than the three the rule asks for (flagged)' : 'chosen by the best adjusted R² among the last levels after Cmax'}; R² ${t.r2.toFixed(4)}${t.adjustedR2 !== null ? `, adjusted R² ${t.adjustedR2.toFixed(4)}` : ''}.`,
      { size: type.small },
    );
  } else if (p.terminalFixed) paragraph(doc, `No terminal line: ${fixedWords(p.terminalFixed, model)}, the levels left after Cmax do not allow one (see the flags).`, { size: type.small });
  else paragraph(doc, 'No terminal line: the levels after Cmax do not allow one (see the flags).', { size: type.small });
  if (r.flags.length > 0) {
    paragraph(doc, 'Flags', { size: type.small, face: font.bold, color: palette.warning, after: 1 });
    for (const f of r.flags) bullet(doc, `${f.figure === 'levels' ? 'levels' : ncaLabel(f.figure, route)}: ${f.message}`, palette.warning);
  } else paragraph(doc, 'Flags: none.', { size: type.small });
  for (const l of p.leftOut) bullet(doc, `Left out: ${l.path} — ${l.reason}.`, palette.muted);
}

function summaryTable(doc: PDFKit.PDFDocument, compartment: string, summary: NcaSummary, nca: ScenarioNca): void {
  const rows: string[][] = [];
  for (const name of ncaFigureNames) {
    const s = summary.figures[name];
    if (!s || s.n === 0) continue;
    const median = ncaFigureInfo[name].summary === 'median';
    rows.push([
      ncaLabel(name, nca.route),
      figureUnit(name, nca.units),
      String(s.n),
      median ? '—' : fmt(s.geometricMean),
      median ? '—' : percent(s.geometricCv),
      fmt(s.mean),
      fmt(s.sd),
      fmt(s.median),
      `${fmt(s.min)}–${fmt(s.max)}`,
    ]);
  }
  drawTable(doc, {
    caption: `Summary over ${summary.subjects} subjects — ${compartment}`,
    columns: [
      { header: 'Figure', width: 1.2 },
      { header: 'Unit', width: 0.8 },
      { header: 'n', width: 0.35, align: 'right' },
      { header: 'Geometric mean', width: 0.95, align: 'right' },
      { header: 'Geometric CV', width: 0.85, align: 'right' },
      { header: 'Mean', width: 0.8, align: 'right' },
      { header: 'SD', width: 0.75, align: 'right' },
      { header: 'Median', width: 0.8, align: 'right' },
      { header: 'Range', width: 1.3, align: 'right' },
    ],
    size: type.tiny + 0.3,
    zebra: true,
    rows,
    footnote: 'Geometric mean exp(mean ln x) and geometric CV √(exp(s²) − 1), s² the sample variance of ln x, for positive figures (between-subject exposure is close to log-normal); Tmax and Tlast by median and range (they are read off the sampling grid). A figure is summarised over the subjects that have it (n).',
  });
}

/** Draws the section; `number` is its section number. */
export function drawNcaSection(doc: PDFKit.PDFDocument, outcome: Outcome<ScenarioNca>, model: Model, number: string): void {
  const title = `${number}  Non-compartmental analysis of the measured levels`;
  heading(doc, title, 1, 120);
  doc.outline.addItem(title);
  if (!outcome.ok) {
    paragraph(doc, 'The non-compartmental figures cannot be computed from these levels:', { color: palette.warning });
    for (const p of outcome.problems) bullet(doc, `${p.path}: ${p.message}`, palette.warning);
    return;
  }
  const nca = outcome.value;
  paragraph(
    doc,
    `The figures are read off the measured levels alone, with no model: areas by ${ruleWords[nca.rule]}; levels below the limit are excluded from every figure. Concentrations in ${unitText(nca.units.concentration)}, times in ${nca.units.time}, the dose in ${unitText(nca.units.amount)}. ${NCA_CAUTION}`,
    { size: type.small },
  );
  const notes = nca.notes.filter((n) => n !== NCA_CAUTION);
  for (const n of notes) bullet(doc, `${n[0].toUpperCase()}${n.slice(1)}.`);
  for (const p of nca.profiles) profileTable(doc, p, nca, model);
  for (const s of nca.summaries) {
    if (s.summary.subjects < 2) continue;
    heading(doc, `Over subjects — ${s.compartment}`, 2, 120);
    summaryTable(doc, s.compartment, s.summary, nca);
  }
  if (nca.summaries.every((s) => s.summary.subjects < 2)) paragraph(doc, 'One profile per compartment: no summary over subjects.', { size: type.small, color: palette.muted });
}
