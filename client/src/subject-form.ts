/**
 * The subject the scenario is for, folded away until used: weight, height, age, sex, serum
 * creatinine and covariates of the subject's own, each written to `subject.<name>` in the
 * store (clearing them all removes `subject`). Below, read-only, the covariates the last run
 * derived from them by their published formulas (`result.subject.covariates` with a rule).
 */
import { fmt } from '../../models/result/summary-text.ts';
import { derivedCovariates, givenCovariates, subjectOutcome } from './covariate-relations.ts';
import { fieldId, h } from './dom.ts';
import { button } from './fields.ts';
import { isNumberText } from './quantity.ts';
import type { ScenarioStore } from './store.ts';

type Rerender = (focusAfter?: string) => void;

/** The measured covariates with the units offered (the first is the default; the server converts). */
const measured: { name: 'weight' | 'height' | 'age' | 'serumCreatinine'; label: string; units: [string, string][] }[] = [
  { name: 'weight', label: 'Weight', units: [['kg', 'kg'], ['lb', 'lb'], ['g', 'g']] },
  { name: 'height', label: 'Height', units: [['cm', 'cm'], ['m', 'm'], ['inch', 'inch']] },
  { name: 'age', label: 'Age', units: [['year', 'year'], ['month', 'month'], ['week', 'week'], ['day', 'day']] },
  { name: 'serumCreatinine', label: 'Serum creatinine', units: [['mg/dL', 'mg/dL'], ['umol/L', 'µmol/L']] },
];

/** Long names of the derived covariates, for the read-only list. */
const derivedWords: Record<string, string> = {
  bmi: 'Body-mass index',
  bsa: 'Body surface area',
  crcl: 'Creatinine clearance',
  ibw: 'Ideal body weight',
  lbw: 'Lean body weight',
};

const numberThenUnit = /^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$/;

function isObject(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/** "kg/m^2" → "kg/m²", "umol/L" → "µmol/L": units as people read them. */
export function unitWords(unit: string | null): string {
  if (!unit) return '';
  return unit.replace(/\^2\b/g, '²').replace(/^umol/, 'µmol');
}

export class SubjectForm {
  constructor(
    private readonly store: ScenarioStore,
    private readonly root: HTMLElement,
    private readonly rerender: Rerender,
  ) {}

  private get subject(): Record<string, unknown> {
    const s = this.store.get('subject');
    return isObject(s) ? s : {};
  }

  /** Writes one covariate; when none is left, `subject` goes. */
  private write(name: string, value: unknown): void {
    this.store.set(`subject.${name}`, value);
    if (Object.keys(this.subject).length === 0 && this.store.get('subject') !== undefined) this.store.set('subject', undefined);
  }

  render(): void {
    const s = this.subject;
    const own = Object.keys(s).filter((k) => !(givenCovariates as readonly string[]).includes(k));
    this.root.replaceChildren(
      h('p', { class: 'hint' }, 'The subject the run is for. Model quantities may depend on these through covariate relations ("depends on the subject" under each quantity).'),
      h('div', { class: 'row subject-row', role: 'group', 'aria-label': 'Subject' }, ...measured.map((m) => this.measuredField(m)), this.sexField()),
      h(
        'fieldset',
        { class: 'group own-covariates' },
        h('legend', {}, 'Covariates of its own'),
        ...own.map((name) => this.ownRow(name, s[name])),
        this.addRow(),
      ),
      this.derivedList(),
    );
  }

  private measuredField(m: (typeof measured)[number]): HTMLElement {
    const path = `subject.${m.name}`;
    const current = this.subject[m.name];
    const text = current === undefined ? '' : String(current);
    const parts = numberThenUnit.exec(text);
    const number = parts ? parts[1] : text;
    const written = parts ? parts[2] : '';
    const units = written !== '' && !m.units.some(([v]) => v === written) ? [[written, written] as [string, string], ...m.units] : m.units;
    const input = h('input', { type: 'text', id: fieldId(path), 'data-path': path, value: number, inputmode: 'decimal', autocomplete: 'off', class: 'num-input' });
    const select = h('select', { id: `${fieldId(path)}-unit`, 'data-unit-for': path, class: 'unit-select' });
    for (const [v, l] of units) select.append(h('option', { value: v }, l));
    select.value = written !== '' ? written : units[0][0];
    const write = () => {
      const t = input.value.trim();
      // Text that is not a number is kept as typed, so the server's message quotes it.
      this.write(m.name, t === '' ? undefined : isNumberText(t) ? `${t} ${select.value}` : t);
    };
    input.addEventListener('input', write);
    select.addEventListener('change', write);
    return h(
      'div',
      { class: 'field' },
      h('label', { for: fieldId(path) }, m.label),
      h('div', { class: 'control' }, input, h('label', { for: `${fieldId(path)}-unit`, class: 'visually-hidden' }, `Unit of ${m.label.toLowerCase()}`), select),
    );
  }

  private sexField(): HTMLElement {
    const path = 'subject.sex';
    const select = h('select', { id: fieldId(path), 'data-path': path });
    for (const [v, l] of [['', '—'], ['female', 'female'], ['male', 'male']]) select.append(h('option', { value: v }, l));
    const current = this.subject.sex;
    if (typeof current === 'string' && current !== 'female' && current !== 'male' && current !== '') select.append(h('option', { value: current }, `${current} (not read)`));
    select.value = typeof current === 'string' ? current : '';
    select.addEventListener('change', () => this.write('sex', select.value === '' ? undefined : select.value));
    return h('div', { class: 'field' }, h('label', { for: fieldId(path) }, 'Sex'), h('div', { class: 'control' }, select));
  }

  /** A covariate of the subject's own: its value (a number with its unit, or a category word) and Remove. */
  private ownRow(name: string, value: unknown): HTMLElement {
    const path = `subject.${name}`;
    const input = h('input', { type: 'text', id: fieldId(path), 'data-path': path, value: value === undefined ? '' : String(value), autocomplete: 'off', spellcheck: 'false', placeholder: 'e.g. 3.5 g/dL or smoker' });
    input.addEventListener('input', () => {
      const t = input.value.trim();
      this.write(name, t === '' ? '' : isNumberText(t) ? Number(t) : t);
    });
    const remove = button('Remove', { class: 'quiet small', 'data-focus-key': `remove-covariate:${name}`, 'aria-label': `Remove covariate ${name}` }, () => {
      this.write(name, undefined);
      this.rerender('key:new-covariate-name');
    });
    return h('div', { class: 'row own-covariate' }, h('div', { class: 'field' }, h('label', { for: fieldId(path) }, name), h('div', { class: 'control' }, input)), h('div', { class: 'field remove' }, remove));
  }

  private addRow(): HTMLElement {
    const nameId = 'f-subject-new-name';
    const valueId = 'f-subject-new-value';
    const name = h('input', { type: 'text', id: nameId, 'data-focus-key': 'new-covariate-name', autocomplete: 'off', spellcheck: 'false', placeholder: 'e.g. albumin', maxlength: '40' });
    const value = h('input', { type: 'text', id: valueId, 'data-focus-key': 'new-covariate-value', autocomplete: 'off', spellcheck: 'false', placeholder: 'e.g. 3.5 g/dL or smoker' });
    const note = h('p', { class: 'hint', role: 'status' });
    const add = () => {
      const n = name.value.trim();
      const v = value.value.trim();
      const taken = [...givenCovariates, ...derivedCovariates] as readonly string[];
      if (!/^[A-Za-z][A-Za-z0-9_]{0,39}$/.test(n)) note.textContent = 'A name starts with a letter and uses only letters, digits or "_".';
      else if (taken.includes(n)) note.textContent = `'${n}' is ${(derivedCovariates as readonly string[]).includes(n) ? 'derived from the other covariates' : 'entered above'}.`;
      else if (v === '') note.textContent = 'Give its value: a number with its unit, or a category word.';
      else {
        this.write(n, isNumberText(v) ? Number(v) : v);
        this.rerender(`path:subject.${n}`);
      }
    };
    const addButton = button('Add covariate', { class: 'quiet', 'data-testid': 'add-covariate', 'data-focus-key': 'add-covariate' }, add);
    return h(
      'div',
      { class: 'row add-covariate' },
      h('div', { class: 'field' }, h('label', { for: nameId }, 'Name'), h('div', { class: 'control' }, name)),
      h('div', { class: 'field' }, h('label', { for: valueId }, 'Value'), h('div', { class: 'control' }, value)),
      h('div', { class: 'field remove' }, addButton),
      note,
    );
  }

  /** The last run's derived covariates, read-only, each with its rule and source. */
  private derivedList(): HTMLElement {
    const ran = subjectOutcome();
    const box = h('div', { class: 'derived-covariates', 'data-testid': 'derived-covariates' }, h('h4', {}, 'Derived by the last run'));
    const rows = ran ? Object.entries(ran.subject.covariates).filter(([, c]) => c.rule !== null) : [];
    if (rows.length === 0) {
      box.append(h('p', { class: 'hint' }, ran ? 'None: the derived covariates need weight and height (BMI, BSA), with sex (LBW, IBW), and age and serum creatinine (CrCl).' : 'Run the simulation to see the covariates derived from these (BMI, BSA, CrCl, IBW, LBW).'));
      return box;
    }
    const list = h('dl', { class: 'derived-list' });
    for (const [name, c] of rows) {
      const value = typeof c.value === 'number' ? fmt(c.value) : c.value;
      list.append(
        h('dt', {}, `${derivedWords[name] ?? name} `, h('code', {}, name)),
        h(
          'dd',
          { 'data-testid': `derived-${name}` },
          h('span', { class: 'derived-value', 'data-testid': `derived-value-${name}` }, value),
          ` ${unitWords(c.unit)}`,
          h('small', { class: 'derived-rule' }, c.rule ?? ''),
        ),
      );
    }
    box.append(list, h('p', { class: 'hint' }, 'Simulation for review, not dosing advice: these are the published formulas applied to the values above.'));
    return box;
  }
}
