/**
 * The population form: how many virtual subjects, the seed, the percentiles, the targets a
 * subject attains or not, and the covariate distributions the subjects are drawn from. It
 * edits `population` in the store by JSON path like the other forms. Correlations, residual
 * error, the regimen grid and the periods are folded sections of their own
 * (population-extras.ts). The choice between covariate distributions and a covariate table, and
 * the table itself, are population-table.ts's.
 */
import { fieldId, h } from './dom.ts';
import { button, compartmentField, numberField, quantityField, selectField, textField } from './fields.ts';
import type { FormHooks } from './model-form.ts';
import { PopulationExtras } from './population-extras.ts';
import { CovariateTableEditor, forgetCovariateTable } from './population-table.ts';
import { cvValue } from './population-variability.ts';
import { isNumberText } from './quantity.ts';
import type { ScenarioStore } from './store.ts';

const targetKinds = ['trough', 'peak', 'auc24', 'above', 'window'] as const;
type TargetKind = (typeof targetKinds)[number];
const targetKindWords: Record<TargetKind, string> = {
  trough: 'trough (before the next dose)',
  peak: 'peak (Cmax)',
  auc24: 'AUC per 24 h',
  above: 'time above a level',
  window: 'time within a window',
};

const distributions = ['normal', 'log-normal', 'uniform', 'categories'] as const;
type Distribution = (typeof distributions)[number];
/** The parameters each distribution reads (models/population/covariates.ts). */
const distributionFields: Record<Distribution, [key: string, label: string][]> = {
  normal: [['mean', 'Mean'], ['sd', 'SD'], ['min', 'Lowest'], ['max', 'Highest']],
  'log-normal': [['median', 'Median'], ['cv', 'cv'], ['min', 'Lowest'], ['max', 'Highest']],
  uniform: [['min', 'From'], ['max', 'To']],
  categories: [],
};

type Row = Record<string, unknown>;

function isObject(v: unknown): v is Row {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function targetKindOf(t: Row): TargetKind {
  return targetKinds.find((k) => t[k] !== undefined) ?? 'trough';
}

/** A quantity in its own unit, typed as text ("75 kg"); a plain number is stored as a number. */
function typedQuantity(store: ScenarioStore, path: string, label: string, placeholder: string): HTMLElement {
  return textField(store, {
    path,
    label,
    placeholder,
    onInput: (text) => {
      const t = text.trim();
      store.set(path, t === '' ? undefined : isNumberText(t) ? Number(t) : t);
    },
  });
}

/** "female: 0.5, male: 0.5" ↔ { female: 0.5, male: 0.5 }. */
export function sharesText(shares: unknown): string {
  return isObject(shares) ? Object.entries(shares).map(([k, v]) => `${k}: ${String(v)}`).join(', ') : '';
}
export function readShares(text: string): Record<string, number | string> {
  const out: Record<string, number | string> = {};
  for (const part of text.split(',')) {
    const [k, v] = part.split(':').map((x) => x.trim());
    if (!k) continue;
    out[k] = v !== undefined && isNumberText(v) ? Number(v) : (v ?? '');
  }
  return out;
}

export class PopulationForm {
  constructor(
    private readonly store: ScenarioStore,
    private readonly root: HTMLElement,
    private readonly hooks: FormHooks,
  ) {}

  private get population(): Row | null {
    const p = this.store.scenario.population;
    return isObject(p) ? p : null;
  }

  render(): void {
    const p = this.population;
    if (!p) {
      this.root.replaceChildren(
        h('p', { class: 'hint' }, 'Run the model over many virtual subjects: quantities that vary between subjects (tick “varies between subjects” in the model), covariates drawn from distributions, and targets whose attainment is counted.'),
        h('div', { class: 'row-actions' }, button('Add a population', { 'data-testid': 'add-population', 'data-focus-key': 'add-population' }, () => this.add())),
      );
      return;
    }
    this.root.replaceChildren(
      h(
        'fieldset',
        { class: 'group' },
        h('legend', {}, 'Subjects'),
        h(
          'div',
          { class: 'row' },
          numberField(this.store, { path: 'population.subjects', label: 'Subjects', required: true, hint: 'How many virtual subjects (this server runs up to 5000).' }),
          numberField(this.store, { path: 'population.seed', label: 'Seed', hint: 'The same seed draws the same subjects.' }),
          this.percentilesField(),
        ),
      ),
      this.targetsGroup(),
      ...this.covariatesGroup(),
      ...new PopulationExtras(this.store, this.hooks).render(),
      h('div', { class: 'row-actions' }, button('Remove the population', { class: 'quiet', 'data-focus-key': 'remove-population' }, () => this.remove())),
    );
  }

  private percentilesField(): HTMLElement {
    const path = 'population.percentiles';
    return textField(this.store, {
      path,
      label: 'Percentiles',
      placeholder: '5, 50, 95',
      hint: 'The outer two shade the band; 50 is the median line.',
      onInput: (text) => {
        const parts = text.split(/[,\s]+/).filter((x) => x !== '');
        this.store.set(path, parts.length === 0 ? undefined : parts.map((x) => (isNumberText(x) ? Number(x) : x)));
      },
    });
  }

  // ---- targets ----
  private targetsGroup(): HTMLElement {
    const targets = this.store.get('population.targets');
    const list = Array.isArray(targets) ? (targets as unknown[]) : [];
    const rows = h('div', { class: 'rows' });
    list.forEach((t, i) => rows.append(this.targetRow(isObject(t) ? t : {}, i)));
    if (list.length === 0) rows.append(h('p', { class: 'empty' }, 'No targets. Add one to count the share of subjects attaining it.'));
    return h(
      'fieldset',
      { class: 'group' },
      h('legend', {}, 'Targets'),
      rows,
      h('div', { class: 'row-actions' }, button('Add target', { 'data-testid': 'add-population-target', 'data-focus-key': 'add-population-target' }, () => this.addTarget())),
    );
  }

  private targetRow(t: Row, i: number): HTMLElement {
    const p = `population.targets[${i}]`;
    const kind = targetKindOf(t);
    const values: HTMLElement[] = [];
    if (kind === 'trough' || kind === 'peak') {
      values.push(quantityField(this.store, { path: `${p}.${kind}.atLeast`, label: 'At least', dim: 'concentration' }));
      values.push(quantityField(this.store, { path: `${p}.${kind}.atMost`, label: 'At most', dim: 'concentration' }));
    } else if (kind === 'auc24') {
      values.push(typedQuantity(this.store, `${p}.auc24.atLeast`, 'At least', 'e.g. 400 mg*h/L'));
      values.push(typedQuantity(this.store, `${p}.auc24.atMost`, 'At most', 'e.g. 800 mg*h/L'));
    } else if (kind === 'above') {
      values.push(quantityField(this.store, { path: `${p}.above`, label: 'Level', dim: 'concentration', required: true }));
    } else {
      values.push(quantityField(this.store, { path: `${p}.window.from`, label: 'From', dim: 'concentration', required: true }));
      values.push(quantityField(this.store, { path: `${p}.window.to`, label: 'To', dim: 'concentration', required: true }));
    }
    if (kind === 'above' || kind === 'window') {
      values.push(numberField(this.store, { path: `${p}.forAtLeast`, label: 'For at least', percent: true, placeholder: 'e.g. 40%', required: true }));
    }
    return h(
      'div',
      { class: 'row population-target-row', role: 'group', 'aria-label': `Target ${i + 1}` },
      selectField(this.store, {
        path: `population-target-kind-${i}`,
        errorPath: p,
        noPath: true,
        label: 'Figure',
        value: kind,
        options: targetKinds.map((k) => [k, targetKindWords[k]]),
        onChange: (v) => this.setTargetKind(i, v as TargetKind),
      }),
      ...values,
      this.whenField(`${p}.when`),
      compartmentField(this.store, { path: `${p}.compartment`, label: 'Compartment', absentLabel: 'the first with a volume', withVolume: true }),
      h('div', { class: 'field remove' }, button('Remove', { class: 'quiet', 'data-focus-key': `remove-population-target-${i}`, 'aria-label': `Remove target ${i + 1}` }, () => this.removeTarget(i))),
    );
  }

  /** When a figure is read: words from a list, or an interval number typed. */
  private whenField(path: string): HTMLElement {
    const listId = `${fieldId(path)}-choices`;
    const field = textField(this.store, {
      path,
      label: 'When',
      placeholder: 'steady state',
      onInput: (text) => {
        const t = text.trim();
        this.store.set(path, t === '' ? undefined : /^\d+$/.test(t) ? Number(t) : t);
      },
    });
    field.querySelector('input')?.setAttribute('list', listId);
    field.append(h('datalist', { id: listId }, ...['steady state', 'first interval', 'last interval'].map((w) => h('option', { value: w }))));
    return field;
  }

  private setTargetKind(i: number, kind: TargetKind): void {
    const p = `population.targets[${i}]`;
    const t = this.store.get(p);
    if (!isObject(t)) return;
    const level = t.above ?? (isObject(t.window) ? t.window.from : undefined) ?? (isObject(t.trough) ? t.trough.atLeast : undefined) ?? (isObject(t.peak) ? t.peak.atMost : undefined);
    for (const k of [...targetKinds, 'forAtLeast']) if (t[k] !== undefined) this.store.set(`${p}.${k}`, undefined);
    if (kind === 'trough') this.store.set(`${p}.trough`, { atLeast: level ?? '' });
    else if (kind === 'peak') this.store.set(`${p}.peak`, { atMost: level ?? '' });
    else if (kind === 'auc24') this.store.set(`${p}.auc24`, { atLeast: '' });
    else if (kind === 'above') {
      this.store.set(`${p}.above`, level ?? '');
      this.store.set(`${p}.forAtLeast`, 0.5);
    } else {
      this.store.set(`${p}.window`, { from: level ?? '', to: '' });
      this.store.set(`${p}.forAtLeast`, 0.5);
    }
    this.hooks.clearErrors();
    this.hooks.rerender(`key:population-target-kind-${i}`);
    this.hooks.announce(`Target ${i + 1} is now ${targetKindWords[kind]}.`);
  }

  private addTarget(): void {
    this.store.mutate((doc) => {
      const p = doc.population as Row;
      if (!Array.isArray(p.targets)) p.targets = [];
      (p.targets as Row[]).push({ trough: { atLeast: `1 ${this.store.units.amount}/${this.store.units.volume}` }, when: 'steady state' });
    });
    const n = (this.store.get('population.targets') as unknown[]).length;
    this.hooks.clearErrors();
    this.hooks.rerender(`key:population-target-kind-${n - 1}`);
    this.hooks.announce(`Added target ${n}: a trough at steady state.`);
  }

  private removeTarget(i: number): void {
    this.store.mutate((doc) => {
      const list = (doc.population as Row).targets;
      if (Array.isArray(list)) list.splice(i, 1);
    });
    this.hooks.clearErrors();
    this.hooks.rerender('key:add-population-target');
    this.hooks.announce(`Removed target ${i + 1}.`);
  }

  // ---- covariates ----
  /** Where the covariates come from, the distributions (when drawn), and the folded covariate table. */
  private covariatesGroup(): HTMLElement[] {
    const table = new CovariateTableEditor(this.store, this.hooks);
    const source = table.source;
    const parts: (HTMLElement | null)[] = [h('legend', {}, 'Covariates'), table.sourceSwitch()];
    if (source === 'table') {
      parts.push(h('p', { class: 'empty' }, 'None drawn: every covariate comes from the covariate table below (and the scenario subject’s for those it lacks).'), table.asideNote('distributions'));
    } else {
      const covariates = this.store.get('population.covariates');
      const entries = isObject(covariates) ? Object.entries(covariates) : [];
      const rows = h('div', { class: 'rows' });
      entries.forEach(([name, d], i) => rows.append(this.covariateRow(name, isObject(d) ? d : {}, i)));
      if (entries.length === 0) rows.append(h('p', { class: 'empty' }, source === 'both' ? 'No covariate drawn besides the table’s.' : 'No covariate distributions: every subject has the scenario subject’s weight, age and the rest.'));
      parts.push(
        rows,
        h('div', { class: 'row-actions' }, button('Add covariate', { 'data-testid': 'add-population-covariate', 'data-focus-key': 'add-population-covariate' }, () => this.addCovariate())),
      );
    }
    return [h('fieldset', { class: 'group' }, ...parts.filter((x): x is HTMLElement => x !== null)), table.section()];
  }

  private covariateRow(name: string, d: Row, i: number): HTMLElement {
    const p = `population.covariates.${name}`;
    const kind = (distributions as readonly string[]).includes(String(d.distribution)) ? (d.distribution as Distribution) : 'normal';
    const nameId = `population-covariate-name-${i}`;
    const nameInput = h('input', { type: 'text', id: nameId, value: name, 'data-focus-key': nameId, autocomplete: 'off', spellcheck: 'false', maxlength: '40' });
    nameInput.addEventListener('change', () => this.renameCovariate(name, nameInput.value.trim(), i));
    const params: HTMLElement[] = distributionFields[kind].map(([key, label]) =>
      key === 'cv'
        ? textField(this.store, { path: `${p}.cv`, label, placeholder: 'e.g. 25%', onInput: (text) => this.store.set(`${p}.cv`, cvValue(text)) })
        : typedQuantity(this.store, `${p}.${key}`, label, key === 'sd' ? 'e.g. 14 kg' : 'e.g. 75 kg'),
    );
    if (kind === 'categories') {
      params.push(
        textField(this.store, {
          path: `${p}.shares`,
          label: 'Shares',
          placeholder: 'female: 0.5, male: 0.5',
          wide: true,
          onInput: (text) => this.store.set(`${p}.shares`, readShares(text)),
        }),
      );
      const input = params[params.length - 1].querySelector('input');
      if (input) input.value = sharesText(d.shares);
    }
    return h(
      'div',
      { class: 'row population-covariate-row', role: 'group', 'aria-label': `Covariate ${name}` },
      h('div', { class: 'field' }, h('label', { for: nameId }, 'Covariate'), h('div', { class: 'control' }, nameInput)),
      selectField(this.store, {
        path: `${p}.distribution`,
        label: 'Distribution',
        options: distributions.map((k) => [k, k]),
        onChange: (v) => {
          this.store.set(`${p}.distribution`, v);
          this.hooks.rerender(`path:${p}.distribution`);
        },
      }),
      ...params,
      h('div', { class: 'field remove' }, button('Remove', { class: 'quiet', 'data-focus-key': `remove-population-covariate-${i}`, 'aria-label': `Remove covariate ${name}` }, () => this.removeCovariate(name))),
    );
  }

  /** Renames a covariate keeping its place in the list (object keys keep insertion order). */
  private renameCovariate(from: string, to: string, i: number): void {
    if (to === '' || to === from) return;
    const current = this.store.get('population.covariates');
    if (!isObject(current)) return;
    if (to in current) {
      this.hooks.announce(`There is already a covariate named ${to}; choose another name.`);
      return;
    }
    const next: Row = {};
    for (const [k, v] of Object.entries(current)) next[k === from ? to : k] = v;
    this.store.mutate((doc) => {
      (doc.population as Row).covariates = next;
    });
    this.hooks.clearErrors();
    this.hooks.rerender(`key:population-covariate-name-${i}`);
    this.hooks.announce(`Renamed covariate ${from} to ${to}.`);
  }

  private addCovariate(): void {
    const current = this.store.get('population.covariates');
    const taken = isObject(current) ? Object.keys(current) : [];
    const name = ['weight', 'age', 'height', 'serumCreatinine'].find((n) => !taken.includes(n)) ?? `covariate${taken.length + 1}`;
    const defaults: Record<string, Row> = {
      weight: { distribution: 'normal', mean: '75 kg', sd: '14 kg', min: '40 kg', max: '150 kg' },
      age: { distribution: 'uniform', min: '18 year', max: '85 year' },
      height: { distribution: 'normal', mean: '170 cm', sd: '9 cm' },
      serumCreatinine: { distribution: 'log-normal', median: '0.9 mg/dL', cv: '25%' },
    };
    this.store.mutate((doc) => {
      const p = doc.population as Row;
      if (!isObject(p.covariates)) p.covariates = {};
      (p.covariates as Row)[name] = defaults[name] ?? { distribution: 'normal', mean: '', sd: '' };
    });
    this.hooks.clearErrors();
    this.hooks.rerender(`key:add-population-covariate`);
    this.hooks.announce(`Added covariate ${name}; check its distribution.`);
  }

  private removeCovariate(name: string): void {
    this.store.mutate((doc) => {
      const c = (doc.population as Row).covariates;
      if (isObject(c)) delete c[name];
    });
    this.hooks.clearErrors();
    this.hooks.rerender('key:add-population-covariate');
    this.hooks.announce(`Removed covariate ${name}.`);
  }

  private add(): void {
    this.store.mutate((doc) => {
      doc.population = { subjects: 200, seed: 1, percentiles: [5, 50, 95], targets: [] };
    });
    this.hooks.clearErrors();
    this.hooks.rerender('path:population.subjects');
    this.hooks.announce('Added a population of 200 virtual subjects. Tick “varies between subjects” on model quantities to make them differ.');
  }

  private remove(): void {
    this.store.mutate((doc) => {
      delete doc.population;
    });
    forgetCovariateTable();
    this.hooks.clearErrors();
    this.hooks.rerender('key:add-population');
    this.hooks.announce('Removed the population section; the single typical-subject run is unchanged.');
  }
}
