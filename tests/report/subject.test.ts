// The subject in the printed report, read back with pdftotext: the given covariates, the
// derived creatinine clearance against Cockcroft–Gault computed here from the subject's
// numbers, the quantities its covariate relations change (typical value, relations in words,
// value for this subject), the marks in the model's tables, and no subject tables without one.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { fmt } from '../../models/result/summary-text.ts';
import { buildReport } from '../../server/report/report.ts';
import { escapeRegExp, pdfPages, readSample, removeTempFiles, squeeze } from './helpers.ts';

const now = new Date(Date.UTC(2031, 4, 17, 9, 30));
const brennock = readSample('brennock-oral-bid');

const person = { weight: 72, height: 165, age: 54, serumCreatinine: 0.9 };
const withSubject = {
  ...brennock,
  subject: { weight: `${person.weight} kg`, height: `${person.height} cm`, age: `${person.age} year`, sex: 'female', serumCreatinine: `${person.serumCreatinine} mg/dL` },
  compartments: [
    { id: 'gut', label: 'Gut depot' },
    { id: 'central', label: 'Plasma', volume: { typical: '42 L', covariates: [{ on: 'weight', power: 1, reference: '70 kg' }], name: 'V' } },
  ],
  transfers: [
    { from: 'gut', to: 'central', k: '0.9 1/h', label: 'absorption' },
    { from: 'central', cl: { typical: '4.2 L/h', covariates: [{ on: 'crcl', power: 0.75, reference: '100 mL/min' }], cv: '30%', name: 'CL' }, label: 'renal and hepatic clearance' },
  ],
};

// Cockcroft & Gault 1976, Nephron 16:31: CrCl = (140 − age)·weight/(72·Scr) mL/min, × 0.85 for women.
const crcl = (0.85 * (140 - person.age) * person.weight) / (72 * person.serumCreatinine);
// The relations as the README defines them: (covariate / reference)^power times the typical value.
const volume = 42 * (person.weight / 70) ** 1;
const clearance = 4.2 * (crcl / 100) ** 0.75;

function reportText(scenario: unknown): string {
  const outcome = buildReport({ scenario }, { now });
  if (!outcome.ok) throw new Error(`no report: ${JSON.stringify(outcome.problems)}`);
  return squeeze(pdfPages(outcome.bytes).join('\n'));
}

/** The line of the text that starts (after spaces) with `start`. */
function lineOf(text: string, start: string): string {
  const line = text.split('\n').find((l) => l.trimStart().startsWith(start));
  expect(line, start).toBeDefined();
  return line as string;
}

let text: string;
let plain: string;

beforeAll(() => {
  text = reportText(withSubject);
  plain = reportText(brennock);
}, 120_000);
afterAll(removeTempFiles);

describe('the Subject table', () => {
  it('lists each given covariate with its value and unit', () => {
    expect(text).toMatch(/^ ?Subject$/m);
    expect(lineOf(text, 'Weight ')).toContain('72 kg given (subject.weight)');
    expect(lineOf(text, 'Height ')).toContain('165 cm given (subject.height)');
    expect(lineOf(text, 'Age ')).toContain('54 years given (subject.age)');
    expect(lineOf(text, 'Serum creatinine')).toContain('0.9 mg/dL given (subject.serumCreatinine)');
    expect(lineOf(text, 'Sex ')).toContain('female given (subject.sex)');
  });

  it('gives the derived creatinine clearance by Cockcroft–Gault, with its rule and published source', () => {
    // crcl computed above from the subject's own numbers; the report prints 4 significant digits (fmt).
    const line = lineOf(text, 'Creatinine clearance (crcl)');
    expect(line).toContain(`${fmt(crcl)} mL/min Cockcroft & Gault 1976: (140 − age) · weight / (72 · serum creatinine)`);
    expect(text.replace(/\s+/g, ' ')).toContain('× 0.85 for women (Nephron 16:31–41)');
    // Du Bois & Du Bois 1916: BSA = 0.007184 · W^0.425 · H^0.725 m².
    const bsa = 0.007184 * person.weight ** 0.425 * person.height ** 0.725;
    expect(lineOf(text, 'Body surface area (bsa)')).toContain(`${fmt(bsa)} m² Du Bois & Du Bois 1916`);
  });
});

describe('the quantities that depend on the subject', () => {
  it('gives each quantity its name, path, typical value, relations in words and value for this subject', () => {
    expect(text).toContain('Quantities that depend on the subject');
    expect(lineOf(text, 'V: volume of central (Plasma)')).toContain(`42 L × (weight / 70 kg)^1 ${fmt(volume)} L`);
    expect(text).toMatch(/^ ?compartments\[1\]\.volume$/m);
    expect(lineOf(text, 'CL: clearance CL of central → out of the body')).toContain(`4.2 L/h × (crcl / 100 mL/min)^0.75 ${fmt(clearance)} L/h`);
    expect(text).toMatch(/^ ?transfers\[1\]\.cl$/m);
    expect(lineOf(text, '(renal and hepatic clearance)')).toContain('cv 30% (log-normal)');
  });

  it('says that between-subject variability leaves this subject\'s values alone', () => {
    expect(text.replace(/\s+/g, ' ')).toContain('so a cv does not change this subject\'s values');
  });

  it('shows the subject\'s values in the model tables, marked with a dagger and its note', () => {
    expect(lineOf(text, 'central ')).toMatch(new RegExp(`${escapeRegExp(fmt(volume))} L † central`));
    expect(text).toContain(`first-order, CL ${fmt(clearance)} L/h †`);
    // the diagram draws the same numbers
    expect(text).toContain(`V ${fmt(volume)} L`);
    expect(text.replace(/\s+/g, ' ')).toContain('† in the Compartments and Routes tables of this section: depends on the subject');
    // the unmarked absorption route keeps its entered value
    expect(text).toMatch(/first-order, k 0\.9 1\/h(?! †)/);
  });
});

describe('a scenario without a subject', () => {
  it('gets no subject table and no marks', () => {
    expect(plain).toContain('Derived quantities');
    expect(plain).not.toContain('Quantities that depend on the subject');
    expect(plain).not.toMatch(/^ ?Subject$/m);
    expect(plain).not.toContain('How it is obtained (formula and its published source)');
    expect(plain).not.toContain('†');
  });
});
