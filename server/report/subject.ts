/**
 * The subject in the report: its covariates (given, and derived by their published formulas)
 * and the model quantities its covariate relations change, with the typical value, each
 * relation as a multiplier, and the value for this subject. Rows are built by pure functions
 * (tested through the printed report); `drawSubjectTables` lays them out.
 */
import type { Adjustment, Model } from '../../models/building/model.ts';
import type { SimulationResult } from '../../models/simulate.ts';
import type { Covariate } from '../../models/subject/subject.ts';
import { paragraph, palette, type } from './document.ts';
import { fmt, unitText } from './format.ts';
import { drawTable } from './table.ts';

/** The mark beside a value in the model's tables that depends on the subject. */
export const subjectMark = '†';

export const subjectCaption = 'Subject';
export const dependentCaption = 'Quantities that depend on the subject';

/** How the model's tables explain the mark. */
export const subjectMarkNote = `${subjectMark} in the Compartments and Routes tables of this section: depends on the subject — the value for this subject, from its typical value and covariate relations; see the table “${dependentCaption}” below.`;

/** Plain names of the covariates the format knows; a covariate of the subject's own keeps its name. */
const covariateWords: Record<string, string> = {
  weight: 'Weight',
  height: 'Height',
  age: 'Age',
  sex: 'Sex',
  serumCreatinine: 'Serum creatinine',
  bmi: 'Body-mass index',
  bsa: 'Body surface area',
  crcl: 'Creatinine clearance',
  ibw: 'Ideal body weight',
  lbw: 'Lean body weight',
};

/**
 * Where each derived covariate's formula was published (from memory of the papers; the
 * formulas themselves are in models/subject/ with the same references).
 */
const publications: Record<string, { formula?: string; journal: string }> = {
  bmi: { journal: 'Keys et al. 1972, J Chronic Dis 25:329–343' },
  bsa: { journal: 'Arch Intern Med 17:863–871' },
  crcl: { journal: 'Nephron 16:31–41' },
  ibw: { journal: 'Drug Intell Clin Pharm 8:650–655' },
  lbw: { formula: '9270 · weight / (6680 + 216 · BMI) for men, 9270 · weight / (8780 + 244 · BMI) for women', journal: 'Clin Pharmacokinet 44:1051–1065' },
};

export interface CovariateRow {
  name: string;
  value: string;
  basis: string;
}

export interface DependentRow {
  quantity: string;
  typical: string;
  relations: string;
  value: string;
}

/** A covariate's unit as printed: "m^2" → "m²", "year" → "years", "ug" → "µg". */
function covariateUnit(unit: string): string {
  return unitText(unit.replace(/\^2\b/g, '²').replace(/\^3\b/g, '³').replace(/^year$/, 'years'));
}

function covariateValue(c: Covariate): string {
  if (typeof c.value === 'string') return c.value;
  return c.unit ? `${fmt(c.value)} ${covariateUnit(c.unit)}` : fmt(c.value);
}

export function covariateRows(covariates: Record<string, Covariate>): CovariateRow[] {
  return Object.entries(covariates).map(([key, c]) => {
    const words = covariateWords[key];
    // The key is what relations name ("on": "crcl"), so it is shown unless the words are the key.
    const name = !words ? key : words.toLowerCase() === key ? words : `${words} (${key})`;
    if (c.rule === null) return { name, value: covariateValue(c), basis: `given (subject.${key})` };
    const source = publications[key];
    // The rule names its source already ("Cockcroft & Gault 1976: …"); the journal completes it.
    const basis = source ? `${c.rule}${source.formula ? `: ${source.formula}` : ''} (${source.journal})` : c.rule;
    return { name, value: covariateValue(c), basis };
  });
}

const quantityPath = /^(compartments|transfers|doses)\[(\d+)\]\.(\w+)$/;

/** The unit a quantity at this path is read in (the scenario's unit system), or null for a fraction. */
export function quantityUnit(path: string, model: Model, result: SimulationResult): string | null {
  const u = model.units;
  const field = quantityPath.exec(path)?.[3];
  switch (field) {
    case 'volume':
      return u.volume;
    case 'k':
      return result.units.rateConstant;
    case 'cl':
      return `${u.volume}/${u.time}`;
    case 'vmax':
      return `${u.amount}/${u.time}`;
    case 'km':
      return result.units.concentration;
    case 'lag':
      return u.time;
    default:
      return null;
  }
}

/** What the quantity is, in words: "clearance CL of central → out of the body (renal clearance)". */
export function quantityWords(path: string, model: Model): string {
  const m = quantityPath.exec(path);
  if (!m) return path;
  const [, list, index, field] = m;
  const i = Number(index);
  const label = (text: string | null, id: string) => (text && text !== id ? ` (${text})` : '');
  if (list === 'compartments') {
    const c = model.compartments[i];
    return c ? `volume of ${c.id}${label(c.label, c.id)}` : path;
  }
  if (list === 'transfers') {
    const t = model.transfers[i];
    if (!t) return path;
    const what: Record<string, string> = { k: 'rate constant k', cl: 'clearance CL', vmax: 'Vmax', km: 'Km' };
    const to = t.to === null ? 'out of the body' : model.compartments[t.to].id;
    return `${what[field] ?? field} of ${model.compartments[t.from].id} → ${to}${t.label ? ` (${t.label})` : ''}`;
  }
  const line = model.doseLines.find((l) => l.line === i);
  const what: Record<string, string> = { bioavailability: 'bioavailability F', lag: 'lag' };
  return `${what[field] ?? field} of dose line ${i + 1}${line?.label ? ` (${line.label})` : ''}`;
}

function quantityValue(value: number, unit: string | null): string {
  return unit === null ? fmt(value) : `${fmt(value)} ${unitText(unit)}`;
}

export function dependentRows(adjustments: Adjustment[], model: Model, result: SimulationResult): DependentRow[] {
  return adjustments.map((a) => {
    const unit = quantityUnit(a.path, model, result);
    const words = quantityWords(a.path, model);
    return {
      quantity: `${a.name ? `${a.name}: ` : ''}${words}\n${a.path}`,
      typical: quantityValue(a.typical, unit),
      relations: a.relations.join('\n'),
      value: quantityValue(a.value, unit),
    };
  });
}

/** A relation in words from a covariate (a cv is variability, not a covariate: it leaves the typical subject's value alone). */
function isCovariateRelation(words: string): boolean {
  return !words.startsWith('cv ');
}

/** The JSON paths of the quantities the subject's covariates changed, for the marks in the model's tables. */
export function adjustedPaths(model: Model): Set<string> {
  return new Set((model.subject?.adjustments ?? []).filter((a) => a.relations.some(isCovariateRelation)).map((a) => a.path));
}

/** The two tables, right after the model's parameters; nothing when the scenario has no subject. */
export function drawSubjectTables(doc: PDFKit.PDFDocument, model: Model, result: SimulationResult): void {
  const subject = result.subject;
  if (!subject) return;
  // The marks' note goes first, next to the tables that carry them.
  if ([...adjustedPaths(model)].some((path) => /^(compartments|transfers)\[/.test(path))) paragraph(doc, subjectMarkNote, { size: type.small, color: palette.muted, after: 4 });
  const covariates = covariateRows(subject.covariates);
  drawTable(doc, {
    caption: subjectCaption,
    columns: [
      { header: 'Covariate', width: 2.1 },
      { header: 'Value', width: 1.05, align: 'right' },
      { header: 'How it is obtained (formula and its published source)', width: 4.6 },
    ],
    rows: covariates.map((c) => [c.name, c.value, c.basis]),
    footnote:
      covariates.length === 0
        ? 'The scenario names a subject but gives no covariate.'
        : 'Given covariates in fixed units (weight kg, height cm, age years, serum creatinine mg/dL) whatever unit they were written in; derived ones by the formula named. Estimates for review, not dosing advice.',
  });
  if (subject.adjustments.length === 0) {
    paragraph(doc, 'No model quantity depends on the subject: none has covariate relations or a cv.', { size: type.small, color: palette.muted, after: 4 });
    return;
  }
  const rows = dependentRows(subject.adjustments, model, result);
  const varies = subject.adjustments.some((a) => !a.relations.every(isCovariateRelation));
  drawTable(doc, {
    caption: dependentCaption,
    columns: [
      { header: 'Quantity and its JSON path', width: 2.7 },
      { header: 'Typical value', width: 1, align: 'right' },
      { header: 'Relations (each a multiplier)', width: 2.3 },
      { header: 'For this subject', width: 1, align: 'right' },
    ],
    rows: rows.map((r) => [r.quantity, r.typical, r.relations, { text: r.value, bold: true }]),
    footnote: `Typical: the value at the relations' reference covariates. For this subject: the typical value times each multiplier, as used in every section of this report.${
      varies
        ? ' A cv is the quantity\'s between-subject variability in a population; this report\'s single run is for the typical subject (no departure of its own), so a cv does not change this subject\'s values.'
        : ''
    }`,
  });
}
