/**
 * Covariate relations on a model quantity: a small "depends on the subject" control under the
 * quantity's field, folded until used, that lists the quantity's relations (covariate, kind,
 * coefficient, reference or factors per category) and adds or removes them. The first relation
 * turns the plain quantity into { typical, covariates: [...] } (keeping `cv`, `name` and
 * `variation` when the quantity already varies between subjects); removing the last one turns
 * it back into the plain value unless it still varies. After a run the field also says what the
 * relations made of the typical value for this subject (`result.subject.adjustments`, by path).
 */
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { fieldId, h } from './dom.ts';
import { button } from './fields.ts';
import { isNumberText, scenarioUnitOf, type Dim, type UnitSet } from './quantity.ts';
import type { ScenarioStore } from './store.ts';

type Rerender = (focusAfter?: string) => void;
export type SubjectOutcome = NonNullable<SimulationResultJson['subject']>;
export type Adjustment = SubjectOutcome['adjustments'][number];
export type RelationKind = 'power' | 'linear' | 'exponential' | 'factors';

const kindWords: [RelationKind, string][] = [
  ['power', 'power'],
  ['linear', 'linear'],
  ['exponential', 'exponential'],
  ['factors', 'per category'],
];

/** The given covariates the page offers, and the ones the published formulas derive from them. */
export const givenCovariates = ['weight', 'height', 'age', 'sex', 'serumCreatinine'] as const;
export const derivedCovariates = ['bmi', 'bsa', 'crcl', 'ibw', 'lbw'] as const;

/** Units a reference may be written in, per covariate (the server converts; the first is the one it reads in). */
const referenceUnits: Record<string, string[]> = {
  weight: ['kg', 'g', 'lb'],
  height: ['cm', 'm', 'inch'],
  age: ['year', 'month', 'week', 'day'],
  serumCreatinine: ['mg/dL', 'umol/L'],
  crcl: ['mL/min', 'L/h'],
  bsa: ['m^2'],
  bmi: ['kg/m^2'],
  ibw: ['kg'],
  lbw: ['kg'],
};

// ---- the last run's subject, read by the fields and the diagram ----

let outcome: { subject: SubjectOutcome; units: UnitSet } | null = null;

/** Keeps the subject part of the last successful run (null when it had no subject). */
export function setSubjectOutcome(subject: SubjectOutcome | null, units: UnitSet): void {
  outcome = subject ? { subject, units } : null;
}

export function subjectOutcome(): { subject: SubjectOutcome; units: UnitSet } | null {
  return outcome;
}

/** The last run's adjustment of the quantity at a JSON path, if the relations changed it. */
export function adjustmentAt(path: string): Adjustment | null {
  return outcome?.subject.adjustments.find((a) => a.path === path) ?? null;
}

/** "4.87 L/h": an adjusted value in the scenario's unit of its dimension (the engine reports scenario units); a fraction (dim null, a bioavailability) has none. */
export function adjustedText(value: number, dim: Dim | null, units: UnitSet): string {
  return dim === null ? fmt(value) : `${fmt(value)} ${scenarioUnitOf(dim, units)}`;
}

/** Only the covariate relations' part of an adjustment (the words of a cv are about the population). */
function relationWords(a: Adjustment): string[] {
  return a.relations.filter((w) => w.startsWith('×'));
}

// ---- reading and writing the quantity ----

function isObject(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function relationsOf(value: unknown): Record<string, unknown>[] {
  if (!isObject(value) || !Array.isArray(value.covariates)) return [];
  return value.covariates.filter(isObject);
}

export function relationKind(r: Record<string, unknown>): RelationKind {
  for (const k of ['factors', 'power', 'linear', 'exponential'] as const) if (r[k] !== undefined) return k;
  return 'power';
}

/** Adds a relation; a plain quantity becomes { typical, covariates }. */
export function addRelation(store: ScenarioStore, path: string, relation: Record<string, unknown>): void {
  const value = store.get(path);
  if (isObject(value)) store.set(`${path}.covariates`, [...relationsOf(value), relation]);
  else store.set(path, { typical: value ?? '', covariates: [relation] });
}

/** Removes relation j; without relations the quantity is its plain typical value again, unless it varies between subjects. */
export function removeRelation(store: ScenarioStore, path: string, j: number): void {
  const value = store.get(path);
  if (!isObject(value)) return;
  const left = relationsOf(value).filter((_, k) => k !== j);
  if (left.length > 0) {
    store.set(`${path}.covariates`, left);
    return;
  }
  const { covariates: _gone, ...rest } = value;
  store.set(path, rest.cv !== undefined ? rest : rest.typical);
}

/** A coefficient as typed: a JSON number when it reads as one, else the text (the server names it). */
function numberOrText(text: string): number | string | undefined {
  const t = text.trim();
  if (t === '') return undefined;
  return isNumberText(t) ? Number(t) : t;
}

/** The covariates a relation may name: the subject's own and the derived ones (with their units, from the last run). */
export function covariateNames(store: ScenarioStore): string[] {
  const subject = store.get('subject');
  const own = isObject(subject) ? Object.keys(subject) : [];
  const ran = outcome ? Object.keys(outcome.subject.covariates) : [];
  return [...new Set([...givenCovariates, ...derivedCovariates, ...own, ...ran])];
}

/** Units offered for a reference of this covariate: its own table, or the unit its value was written in. */
function unitsFor(store: ScenarioStore, on: string): string[] {
  if (referenceUnits[on]) return referenceUnits[on];
  const written = store.get(`subject.${on}`);
  if (typeof written === 'string') {
    const m = /^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*(.+?)\s*$/.exec(written);
    if (m) return [m[1]];
  }
  const ranUnit = outcome?.subject.covariates[on]?.unit;
  return ranUnit ? [ranUnit] : [''];
}

/** Categories a per-category relation offers: sex's two, the subject's own word, and those already listed. */
function categoriesFor(store: ScenarioStore, on: string, factors: Record<string, unknown>): string[] {
  const list = on === 'sex' ? ['female', 'male'] : [];
  const word = store.get(`subject.${on}`);
  if (typeof word === 'string' && !/^\s*[-+]?(\d|\.\d)/.test(word)) list.push(word.trim());
  return [...new Set([...list, ...Object.keys(factors)])];
}

// ---- the control ----

/** Paths whose relations the user unfolded (they stay open across re-renders). */
const unfolded = new Set<string>();

/**
 * The "depends on the subject" control for the quantity at `path` (dimension `dim`, null for a fraction), to append
 * to its field: the relations, and after a run the value the relations gave this subject.
 */
export function relationsControl(store: ScenarioStore, path: string, dim: Dim | null, rerender: Rerender): HTMLElement {
  const relations = relationsOf(store.get(path));
  const details = h('details', { class: 'relations', 'data-testid': `relations-${path}` });
  details.open = relations.length > 0 || unfolded.has(path);
  details.addEventListener('toggle', () => {
    if (details.open) unfolded.add(path);
    else unfolded.delete(path);
  });
  const count = relations.length ? ` (${relations.length})` : '';
  details.append(h('summary', { 'data-focus-key': `relations:${path}` }, `depends on the subject${count}`));

  const listId = `${fieldId(path)}-covariates`;
  details.append(h('datalist', { id: listId }, ...covariateNames(store).map((n) => h('option', { value: n }))));
  relations.forEach((r, j) => details.append(relationRow(store, path, j, r, listId, rerender)));
  if (relations.length === 0) details.append(h('p', { class: 'hint' }, 'No covariate relations: the value is the same for every subject.'));
  details.append(
    button('Add relation', { class: 'quiet small', 'data-testid': `add-relation-${path}`, 'data-focus-key': `add-relation:${path}` }, () => {
      addRelation(store, path, { on: '', power: 1 });
      unfolded.add(path);
      rerender(`path:${path}.covariates[${relations.length}].on`);
    }),
  );

  const wrap = h('div', { class: 'relations-box' }, details);
  const note = relations.length > 0 ? adjustmentNote(path, dim) : null;
  if (note) wrap.append(note);
  return wrap;
}

/** "typical 6 L/h → 4.87 L/h for this subject", with the relations in words; null before a run that adjusted it. */
function adjustmentNote(path: string, dim: Dim | null): HTMLElement | null {
  const a = adjustmentAt(path);
  if (!a || !outcome) return null;
  const u = outcome.units;
  const words = relationWords(a);
  return h(
    'p',
    { class: 'adjustment-note', 'data-testid': `adjustment-${path}`, role: 'status' },
    h('span', { class: 'adjusted-mark', 'aria-hidden': 'true' }, '◆ '),
    `typical ${adjustedText(a.typical, dim, u)} → `,
    h('strong', { 'data-testid': `adjusted-value-${path}` }, adjustedText(a.value, dim, u)),
    ' for this subject',
    words.length ? h('span', { class: 'relation-words' }, ` (${words.join(' ')})`) : null,
  );
}

function relationRow(store: ScenarioStore, path: string, j: number, r: Record<string, unknown>, listId: string, rerender: Rerender): HTMLElement {
  const p = `${path}.covariates[${j}]`;
  const kind = relationKind(r);
  const on = typeof r.on === 'string' ? r.on : '';

  const onInput = h('input', {
    type: 'text',
    id: fieldId(`${p}.on`),
    'data-path': `${p}.on`,
    list: listId,
    value: on,
    autocomplete: 'off',
    spellcheck: 'false',
    placeholder: 'e.g. weight',
    class: 'covariate-name',
  });
  onInput.addEventListener('input', () => store.set(`${p}.on`, onInput.value.trim()));
  // The reference's units and the categories follow the covariate: redraw when it is settled.
  onInput.addEventListener('change', () => rerender());

  const kindSelect = h('select', { id: fieldId(`${p}-kind`), 'data-focus-key': `kind:${p}`, 'data-path': p });
  for (const [v, l] of kindWords) kindSelect.append(h('option', { value: v }, l));
  kindSelect.value = kind;
  kindSelect.addEventListener('change', () => {
    setKind(store, p, r, kindSelect.value as RelationKind);
    rerender(`key:kind:${p}`);
  });

  const parts: HTMLElement[] = [
    labelled(`${p}.on`, 'Covariate', onInput),
    labelled(`${p}-kind`, 'Kind', kindSelect),
  ];
  if (kind === 'factors') parts.push(factorsBox(store, p, on, isObject(r.factors) ? r.factors : {}, rerender));
  else {
    const coef = h('input', {
      type: 'text',
      id: fieldId(`${p}.${kind}`),
      'data-path': `${p}.${kind}`,
      value: r[kind] === undefined ? '' : String(r[kind]),
      inputmode: 'decimal',
      autocomplete: 'off',
      class: 'num-input',
      title: kind === 'power' ? 'typical × (covariate / reference)^coefficient' : kind === 'linear' ? 'typical × (1 + coefficient × (covariate − reference))' : 'typical × exp(coefficient × (covariate − reference))',
    });
    coef.addEventListener('input', () => store.set(`${p}.${kind}`, numberOrText(coef.value) ?? ''));
    parts.push(labelled(`${p}.${kind}`, 'Coefficient', coef), referenceField(store, p, on, r.reference));
  }
  parts.push(
    h(
      'div',
      { class: 'field remove' },
      button('Remove', { class: 'quiet small', 'data-focus-key': `remove-relation:${p}`, 'aria-label': `Remove relation ${j + 1}${on ? ` on ${on}` : ''}` }, () => {
        removeRelation(store, path, j);
        rerender(`key:relations:${path}`);
      }),
    ),
  );
  return h('div', { class: 'relation-row', role: 'group', 'aria-label': `Relation ${j + 1}${on ? ` on ${on}` : ''}` }, ...parts);
}

function labelled(path: string, text: string, control: HTMLElement, extra?: HTMLElement): HTMLElement {
  return h('div', { class: 'field' }, h('label', { for: fieldId(path) }, text), h('div', { class: 'control' }, control, extra ?? null));
}

/** Another kind: the coefficient moves with it; a category relation has factors and no reference. */
function setKind(store: ScenarioStore, p: string, r: Record<string, unknown>, next: RelationKind): void {
  const was = relationKind(r);
  if (was === next) return;
  const coefficient = was === 'factors' ? undefined : r[was];
  store.set(`${p}.${was}`, undefined);
  if (next === 'factors') {
    store.set(`${p}.reference`, undefined);
    store.set(`${p}.factors`, {});
  } else store.set(`${p}.${next}`, coefficient ?? (next === 'power' ? 1 : 0));
}

/** The reference: a number and a unit picker whose units follow the covariate. */
function referenceField(store: ScenarioStore, p: string, on: string, current: unknown): HTMLElement {
  const path = `${p}.reference`;
  const units = unitsFor(store, on);
  const text = current === undefined ? '' : String(current);
  const m = /^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$/.exec(text);
  const number = m ? m[1] : text;
  const written = m ? m[2] : '';
  const choices = written !== '' && !units.includes(written) ? [written, ...units] : units;
  const input = h('input', { type: 'text', id: fieldId(path), 'data-path': path, value: number, inputmode: 'decimal', autocomplete: 'off', class: 'num-input', placeholder: on === 'crcl' ? '100' : on === 'weight' ? '70' : '' });
  const select = h('select', { id: `${fieldId(path)}-unit`, 'data-unit-for': path, class: 'unit-select', 'aria-label': 'Unit of the reference' });
  for (const u of choices) select.append(h('option', { value: u }, u === '' ? '(no unit)' : u === 'umol/L' ? 'µmol/L' : u));
  select.value = written !== '' ? written : choices[0];
  const write = () => {
    const t = input.value.trim();
    if (t === '') store.set(path, undefined);
    else if (!isNumberText(t)) store.set(path, t);
    else store.set(path, select.value === '' ? Number(t) : `${t} ${select.value}`);
  };
  input.addEventListener('input', write);
  select.addEventListener('change', write);
  return labelled(path, 'Reference', input, select);
}

/** Factors per category: one box per known category (empty: not listed, factor 1), and a box to name another. */
function factorsBox(store: ScenarioStore, p: string, on: string, factors: Record<string, unknown>, rerender: Rerender): HTMLElement {
  const box = h('div', { class: 'factors', role: 'group', 'aria-label': 'Factor per category' });
  for (const cat of categoriesFor(store, on, factors)) {
    const path = `${p}.factors.${cat}`;
    const input = h('input', { type: 'text', id: fieldId(path), 'data-path': path, value: factors[cat] === undefined ? '' : String(factors[cat]), inputmode: 'decimal', autocomplete: 'off', class: 'num-input', placeholder: '1' });
    input.addEventListener('input', () => store.set(path, numberOrText(input.value)));
    box.append(labelled(path, `× for ${cat}`, input));
  }
  const nameId = fieldId(`${p}-new-category`);
  const name = h('input', { type: 'text', id: nameId, 'data-focus-key': `new-category:${p}`, autocomplete: 'off', placeholder: 'category', class: 'category-name' });
  const add = button('Add category', { class: 'quiet small' }, () => {
    const cat = name.value.trim();
    if (!/^[A-Za-z0-9_-]+$/.test(cat)) return;
    store.set(`${p}.factors.${cat}`, 1);
    rerender(`path:${p}.factors.${cat}`);
  });
  box.append(h('div', { class: 'field' }, h('label', { for: nameId }, 'Another category'), h('div', { class: 'control' }, name, add)));
  return box;
}
