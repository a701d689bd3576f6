/**
 * The population settings beyond subjects, targets and covariates, each folded until used:
 * correlations between the variabilities of named quantities, the residual error of simulated
 * observations, the regimen grid (one dose line's amounts × intervals × durations) and the
 * periods whose figures are summarised. Every control writes `population.…` by JSON path, so
 * the server's problems land beside it; removing a list's last entry removes the list (and an
 * emptied residual or regimen grid goes with it), leaving the engine's defaults in force.
 */
import '../population-extras.css';
import { fieldId, h } from './dom.ts';
import { button, numberField, quantityField, selectField, textField } from './fields.ts';
import type { FormHooks } from './model-form.ts';
import { isNumberText, type Dim } from './quantity.ts';
import type { ScenarioStore } from './store.ts';

type Row = Record<string, unknown>;

function isObject(v: unknown): v is Row {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/** Sections the user unfolded before using them (they stay open across re-renders). */
const unfolded = new Set<string>();

/** A folded group: open when the scenario uses it, or when the user opened it. */
function section(key: string, title: string, used: boolean, ...body: (HTMLElement | null)[]): HTMLElement {
  const details = h('details', { class: 'population-extra', 'data-testid': `population-extra-${key}` });
  details.open = used || unfolded.has(key);
  details.addEventListener('toggle', () => {
    if (details.open) unfolded.add(key);
    else unfolded.delete(key);
  });
  details.append(h('summary', { 'data-focus-key': `population-extra:${key}` }, title), ...body.filter((x): x is HTMLElement => x !== null));
  return details;
}

/** A share typed as "10%" or "10" (a percentage: the field says %); text that is not a number stays as typed for the server to name. */
export function percentValue(text: string): string | undefined {
  const t = text.trim();
  if (t === '') return undefined;
  return isNumberText(t) ? `${t}%` : t;
}

/** The names of the quantities that vary between subjects (a `cv` and a `name`), in scenario order. */
export function varyingNames(doc: unknown): string[] {
  const names: string[] = [];
  const walk = (v: unknown): void => {
    if (Array.isArray(v)) v.forEach(walk);
    else if (isObject(v)) {
      if (v.typical !== undefined && v.cv !== undefined && typeof v.name === 'string' && v.name !== '' && !names.includes(v.name)) names.push(v.name);
      for (const [k, x] of Object.entries(v)) if (k !== 'population') walk(x);
    }
  };
  walk(doc);
  return names;
}

const periodWords = ['steady state', 'first interval', 'last interval'] as const;

const gridLists = [
  { key: 'amounts', label: 'Amount', dim: 'amount', add: 'Add amount', from: 'amount' },
  { key: 'intervals', label: 'Interval', dim: 'time', add: 'Add interval', from: 'every' },
  { key: 'durations', label: 'Infusion duration', dim: 'time', add: 'Add duration', from: 'duration' },
] as const satisfies readonly { key: string; label: string; dim: Dim; add: string; from: string }[];
type GridKey = (typeof gridLists)[number]['key'];

export class PopulationExtras {
  constructor(
    private readonly store: ScenarioStore,
    private readonly hooks: FormHooks,
  ) {}

  render(): HTMLElement[] {
    return [this.correlations(), this.residual(), this.regimens(), this.periods()];
  }

  // ---- correlations ----
  private correlations(): HTMLElement {
    const list = this.store.get('population.correlations');
    const rows = Array.isArray(list) ? list : [];
    const names = varyingNames(this.store.scenario);
    const body = h('div', { class: 'rows' });
    rows.forEach((c, i) => body.append(this.correlationRow(isObject(c) ? c : {}, i, names)));
    const hint =
      names.length < 2
        ? 'Correlations join quantities that vary between subjects: tick “varies between subjects” on at least two and give each a name.'
        : `Between the variabilities of two named quantities (${names.join(', ')}), from −1 to 1; together they must form a positive definite matrix.`;
    return section(
      'correlations',
      `Correlations${rows.length ? ` (${rows.length})` : ''}`,
      rows.length > 0,
      h('p', { class: 'hint' }, hint),
      body,
      h('div', { class: 'row-actions' }, button('Add correlation', { 'data-testid': 'add-population-correlation', 'data-focus-key': 'add-population-correlation' }, () => this.addCorrelation())),
    );
  }

  private correlationRow(c: Row, i: number, names: string[]): HTMLElement {
    const p = `population.correlations[${i}]`;
    const options = names.map((n): [string, string] => [n, n]);
    const between = Array.isArray(c.between) ? c.between : [];
    return h(
      'div',
      { class: 'row population-correlation-row', role: 'group', 'aria-label': `Correlation ${i + 1}` },
      selectField(this.store, { path: `${p}.between[0]`, label: 'Between', options, value: typeof between[0] === 'string' ? between[0] : '' }),
      selectField(this.store, { path: `${p}.between[1]`, label: 'and', options, value: typeof between[1] === 'string' ? between[1] : '' }),
      numberField(this.store, { path: `${p}.value`, label: 'Correlation', placeholder: 'e.g. 0.3', required: true, hint: '−1 to 1' }),
      h('div', { class: 'field remove' }, button('Remove', { class: 'quiet', 'data-focus-key': `remove-population-correlation-${i}`, 'aria-label': `Remove correlation ${i + 1}` }, () => this.removeCorrelation(i))),
    );
  }

  private addCorrelation(): void {
    // Read now, not at the last render: a name may have been typed since.
    const names = varyingNames(this.store.scenario);
    if (names.length < 2) {
      this.hooks.announce('Name at least two quantities that vary between subjects before correlating them.');
      return;
    }
    const list = this.store.get('population.correlations');
    const taken = new Set((Array.isArray(list) ? list : []).filter(isObject).map((c) => (Array.isArray(c.between) ? [...c.between].sort().join('|') : '')));
    let pair: [string, string] | null = null;
    outer: for (let a = 0; a < names.length; a++)
      for (let b = a + 1; b < names.length; b++)
        if (!taken.has([names[a], names[b]].sort().join('|'))) {
          pair = [names[a], names[b]];
          break outer;
        }
    if (!pair) {
      this.hooks.announce('Every pair of named varying quantities already has its correlation.');
      return;
    }
    const [first, second] = pair;
    this.store.mutate((doc) => {
      const pop = doc.population as Row;
      if (!Array.isArray(pop.correlations)) pop.correlations = [];
      (pop.correlations as Row[]).push({ between: [first, second], value: 0 });
    });
    const n = (this.store.get('population.correlations') as unknown[]).length;
    unfolded.add('correlations');
    this.hooks.clearErrors();
    this.hooks.rerender(`path:population.correlations[${n - 1}].value`);
    this.hooks.announce(`Added correlation ${n} between ${first} and ${second}; type its value.`);
  }

  private removeCorrelation(i: number): void {
    this.store.mutate((doc) => {
      const pop = doc.population as Row;
      if (!Array.isArray(pop.correlations)) return;
      pop.correlations.splice(i, 1);
      if (pop.correlations.length === 0) delete pop.correlations;
    });
    unfolded.add('correlations');
    this.hooks.clearErrors();
    this.hooks.rerender('key:add-population-correlation');
    this.hooks.announce(`Removed correlation ${i + 1}.`);
  }

  // ---- residual error ----
  private residual(): HTMLElement {
    const path = 'population.residual';
    const used = isObject(this.store.get(path));
    const proportional = textField(this.store, {
      path: `${path}.proportional`,
      label: 'Proportional (%)',
      placeholder: 'e.g. 10%',
      hint: 'SD as a share of the concentration.',
      onInput: (text) => this.store.set(`${path}.proportional`, percentValue(text)),
    });
    const box = h(
      'div',
      { class: 'row' },
      quantityField(this.store, { path: `${path}.additive`, label: 'Additive', dim: 'concentration', placeholder: 'e.g. 0.5', hint: 'SD as a concentration.' }),
      proportional,
    );
    // Clearing both leaves no residual error at all (an empty object would say nothing).
    const prune = () => {
      const r = this.store.get(path);
      if (isObject(r) && Object.keys(r).length === 0) this.store.set(path, undefined);
    };
    box.addEventListener('input', prune);
    box.addEventListener('change', prune);
    return section(
      'residual',
      'Residual error',
      used,
      h('p', { class: 'hint' }, 'Measurement and model error around each subject’s concentration: observed = C·(1 + proportional·e₁) + additive·e₂. It adds bands of simulated observations; the concentration bands stay as they are.'),
      box,
    );
  }

  // ---- regimen grid ----
  private regimens(): HTMLElement {
    const path = 'population.regimens';
    const grid = this.store.get(path);
    const used = isObject(grid);
    const doses = this.store.doses;
    const parts: HTMLElement[] = [
      h('p', { class: 'hint' }, 'Every combination of the amounts, intervals and infusion durations of one dose line is given to the same subjects and compared by attainment.'),
    ];
    if (used) {
      const line = typeof grid.line === 'number' ? grid.line : 0;
      parts.push(
        h(
          'div',
          { class: 'row' },
          selectField(this.store, {
            path: `${path}.line`,
            label: 'Dose line',
            wide: true,
            value: String(line),
            options: doses.map((d, i): [string, string] => [String(i), `dose line ${i + 1}${typeof d.label === 'string' && d.label ? ` — ${d.label}` : ''}`]),
            onChange: (v) => this.store.set(`${path}.line`, isNumberText(v) ? Number(v) : v),
          }),
          textField(this.store, {
            path: `${path}.ceilingAtLeast`,
            label: 'Ceilings kept by at least (%)',
            placeholder: '90%',
            hint: 'A regimen counts as safe when this share keeps every upper bound.',
            onInput: (text) => this.store.set(`${path}.ceilingAtLeast`, percentValue(text)),
          }),
        ),
      );
    }
    for (const g of gridLists) parts.push(this.gridList(g.key, g.label, g.dim, g.add, used ? grid[g.key] : undefined));
    return section('regimens', `Regimens compared${used ? ` (${this.gridSize(grid)})` : ''}`, used, ...parts);
  }

  private gridSize(grid: Row): string {
    const counts = gridLists.map((g) => (Array.isArray(grid[g.key]) ? (grid[g.key] as unknown[]).length : 1));
    return `${counts.reduce((a, b) => a * b, 1)} regimens`;
  }

  private gridList(key: GridKey, label: string, dim: Dim, addLabel: string, list: unknown): HTMLElement {
    const items = Array.isArray(list) ? list : [];
    const box = h('div', { class: 'grid-list', role: 'group', 'aria-label': `${label}s` });
    items.forEach((_, j) => {
      const path = `population.regimens.${key}[${j}]`;
      const field = quantityField(this.store, { path, label: `${label} ${j + 1}`, dim, required: true });
      field.append(button('Remove', { class: 'quiet small', 'data-focus-key': `remove-regimen-${key}-${j}`, 'aria-label': `Remove ${label.toLowerCase()} ${j + 1}` }, () => this.removeGridEntry(key, j, label)));
      box.append(field);
    });
    box.append(h('div', { class: 'field grid-add' }, button(addLabel, { class: 'quiet', 'data-testid': `add-regimen-${key}`, 'data-focus-key': `add-regimen-${key}` }, () => this.addGridEntry(key, label))));
    return box;
  }

  /** A new entry starts as the last one, or as the dose line's own value, for the user to edit. */
  private addGridEntry(key: GridKey, label: string): void {
    const g = gridLists.find((x) => x.key === key)!;
    const grid = this.store.get('population.regimens');
    const line = isObject(grid) && typeof grid.line === 'number' ? grid.line : 0;
    const dose = this.store.doses[line] as Row | undefined;
    const existing = isObject(grid) && Array.isArray(grid[key]) ? (grid[key] as unknown[]) : [];
    const fallback = key === 'amounts' ? `100 ${this.store.units.amount}` : `${key === 'intervals' ? 12 : 1} ${this.store.units.time}`;
    const start = existing.length > 0 ? existing[existing.length - 1] : (dose?.[g.from] ?? fallback);
    this.store.mutate((doc) => {
      const pop = doc.population as Row;
      if (!isObject(pop.regimens)) pop.regimens = {};
      const r = pop.regimens as Row;
      if (!Array.isArray(r[key])) r[key] = [];
      (r[key] as unknown[]).push(start);
    });
    const n = existing.length + 1;
    unfolded.add('regimens');
    this.hooks.clearErrors();
    this.hooks.rerender(`path:population.regimens.${key}[${n - 1}]`);
    this.hooks.announce(`Added ${label.toLowerCase()} ${n} to the regimen grid; edit its value.`);
  }

  private removeGridEntry(key: GridKey, j: number, label: string): void {
    let gridGone = false;
    this.store.mutate((doc) => {
      const pop = doc.population as Row;
      const r = pop.regimens;
      if (!isObject(r) || !Array.isArray(r[key])) return;
      (r[key] as unknown[]).splice(j, 1);
      if ((r[key] as unknown[]).length === 0) delete r[key];
      // A grid with nothing left to vary is no grid.
      if (!gridLists.some((g) => r[g.key] !== undefined)) {
        delete pop.regimens;
        gridGone = true;
      }
    });
    unfolded.add('regimens');
    this.hooks.clearErrors();
    this.hooks.rerender(`key:add-regimen-${key}`);
    this.hooks.announce(`Removed ${label.toLowerCase()} ${j + 1}${gridGone ? '; the regimen grid is empty and was removed' : ''}.`);
  }

  // ---- periods ----
  /**
   * The periods are written in a fixed order, the words ticked then the interval numbers, so
   * each control knows its index in `population.periods` and a problem finds it.
   */
  private periods(): HTMLElement {
    const path = 'population.periods';
    const list = this.store.get(path);
    const current = Array.isArray(list) ? list : [];
    const words = periodWords.filter((w) => current.includes(w));
    const numbers = current.filter((x) => !(periodWords as readonly unknown[]).includes(x));
    const write = (nextWords: readonly string[], nextNumbers: unknown[]) => {
      const next = [...periodWords.filter((w) => nextWords.includes(w)), ...nextNumbers];
      this.store.set(path, next.length === 0 ? undefined : next);
    };
    const boxes = periodWords.map((w) => {
      const id = fieldId(`population-period-${w}`);
      const k = words.indexOf(w);
      const box = h('input', { type: 'checkbox', id, 'data-focus-key': `period:${w}`, 'data-testid': `population-period-${w.replace(/ /g, '-')}`, 'data-path': k >= 0 ? `${path}[${k}]` : null, checked: k >= 0 });
      box.addEventListener('change', () => {
        write(box.checked ? [...words, w] : words.filter((x) => x !== w), numbers);
        this.hooks.clearErrors();
        this.hooks.rerender(`key:period:${w}`);
      });
      return h('span', { class: 'period-choice' }, box, h('label', { for: id }, w));
    });
    const numberPath = `${path}[${words.length}]`;
    const numberBox = textField(this.store, {
      path: numberPath,
      label: 'Dosing interval number',
      placeholder: 'e.g. 3',
      hint: 'One or more, separated by commas (1 is the first interval).',
      onInput: (text) => {
        const parts = text.split(/[,\s]+/).filter((x) => x !== '');
        write(words, parts.map((x) => (/^\d+$/.test(x) ? Number(x) : x)));
      },
    });
    const input = numberBox.querySelector('input');
    if (input) input.value = numbers.map(String).join(', ');
    return section(
      'periods',
      'Periods summarised',
      current.length > 0,
      h('p', { class: 'hint' }, 'When exposure figures are read. With none chosen: steady state, the first interval and the periods the targets name.'),
      h('div', { class: 'row period-row' }, h('div', { class: 'field period-words', role: 'group', 'aria-label': 'Periods' }, ...boxes), numberBox),
    );
  }
}
