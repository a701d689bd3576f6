/**
 * Output settings: the simulated span and step, the unit system, target windows, and the
 * solver settings folded away (auto unless someone wants a particular method).
 */
import { h } from './dom.ts';
import { button, compartmentField, numberField, quantityField, selectField } from './fields.ts';
import type { FormHooks } from './form-hooks.ts';
import { timeValue, type UnitSet } from './quantity.ts';
import type { ScenarioDoc, ScenarioStore } from './store.ts';
import { UndoOffer } from './undo.ts';

/** Past this many reported times the page asks before running (a step typed in the wrong unit). */
export const manyPointsLimit = 20_000;

/**
 * How many times the output grid of a scenario holds: (end − start)/step + 1, the step read
 * in its own unit. Null when the form cannot tell (no step: the server picks 500 points; a
 * value it cannot read here: the server judges it).
 */
export function reportedTimesOf(doc: ScenarioDoc, units: UnitSet): number | null {
  const out = doc.output;
  if (!out) return null;
  const end = timeValue(out.end, units);
  const start = out.start === undefined ? 0 : timeValue(out.start, units);
  const step = timeValue(out.step, units);
  if (end === null || start === null || step === null || !(step > 0) || !(end > start)) return null;
  return Math.floor((end - start) / step + 1e-9) + 1;
}

/** The warning for a grid past the limit, or null. */
export function manyPointsWarning(doc: ScenarioDoc, units: UnitSet): string | null {
  const n = reportedTimesOf(doc, units);
  if (n === null || n <= manyPointsLimit) return null;
  return `This step gives ${n.toLocaleString('en')} reported times (more than ${manyPointsLimit.toLocaleString('en')}); check the step's unit — ${units.time} is the scenario's time unit.`;
}

const methodChoices: [string, string][] = [
  ['auto', 'auto — exact for linear models, adaptive otherwise'],
  ['exact', 'exact (matrix exponential; linear models only)'],
  ['dopri5', 'Dormand–Prince 5(4), adaptive'],
  ['dop853', 'Dormand–Prince 8(5,3), adaptive'],
  ['rosenbrock', 'Rosenbrock RODAS4, adaptive (stiff)'],
  ['euler', 'Euler, fixed step'],
  ['heun', 'Heun, fixed step'],
  ['rk4', 'classical Runge–Kutta 4, fixed step'],
  ['abm2', 'Adams–Bashforth–Moulton 2, fixed step'],
];

const unitSystemChoices = {
  amount: ['mg', 'ug', 'ng', 'g'],
  volume: ['L', 'mL', 'dL'],
  time: ['h', 'min', 'day', 'week'],
};

export class OutputForm {
  /** Whether the solver section was open, kept across re-renders. */
  private solverOpen = false;

  constructor(
    private readonly store: ScenarioStore,
    private readonly root: HTMLElement,
    private readonly hooks: FormHooks,
  ) {
    // The warning under the output step follows every change of the span, step or units.
    store.subscribe(() => this.refreshPointsWarning());
    this.undo = new UndoOffer(store, root, hooks, 'output');
  }

  private readonly undo: UndoOffer;

  private pointsWarning: HTMLElement | null = null;

  private refreshPointsWarning(): void {
    const el = this.pointsWarning;
    if (!el) return;
    const text = manyPointsWarning(this.store.scenario, this.store.units);
    el.textContent = text ?? '';
    el.hidden = text === null;
  }

  render(): void {
    const s = this.store;
    const thresholds = s.thresholds;
    const windowRows = h('div', { class: 'rows' });
    thresholds.forEach((_, i) => {
      const p = `output.thresholds[${i}]`;
      windowRows.append(
        h(
          'div',
          { class: 'row window-row', role: 'group', 'aria-label': `Target window ${i + 1}` },
          compartmentField(s, { path: `${p}.compartment`, label: 'Compartment', withVolume: true }),
          quantityField(s, { path: `${p}.above`, label: 'Lower edge', dim: 'concentration', placeholder: 'none' }),
          quantityField(s, { path: `${p}.below`, label: 'Upper edge', dim: 'concentration', placeholder: 'none' }),
          h('div', { class: 'field remove' }, button('Remove', { 'data-focus-key': `remove-window-${i}`, class: 'quiet', 'aria-label': `Remove target window ${i + 1}` }, () => this.removeWindow(i))),
        ),
      );
    });
    if (thresholds.length === 0) windowRows.append(h('p', { class: 'empty' }, 'No target window. Add one to shade it on the plot and report time in window.'));

    const unitSelect = (key: 'amount' | 'volume' | 'time', label: string) =>
      selectField(s, {
        path: `units.${key}`,
        label,
        value: s.units[key],
        options: unitChoicesWith(unitSystemChoices[key], s.units[key]).map((u) => [u, u]),
        onChange: (v) => {
          s.set(`units.${key}`, v);
          // Plain numbers are read in the scenario's units: show the new unit beside them.
          this.hooks.rerender(`path:units.${key}`);
        },
      });

    const method = typeof s.scenario.solver?.method === 'string' ? s.scenario.solver.method : 'auto';
    const details = h(
      'details',
      { class: 'solver', open: this.solverOpen },
      h('summary', {}, `Solver settings (${method})`),
      h(
        'div',
        { class: 'row' },
        selectField(s, {
          path: 'solver.method',
          label: 'Method',
          value: method,
          options: methodChoices,
          onChange: (v) => {
            if (s.scenario.solver === undefined && v === 'auto') return;
            s.set('solver.method', v);
            this.hooks.rerender('path:solver.method');
          },
        }),
        numberField(s, { path: 'solver.rtol', label: 'Relative tolerance', placeholder: '1e-8', hint: 'Adaptive methods.' }),
        numberField(s, { path: 'solver.atol', label: 'Absolute tolerance', placeholder: '1e-10', hint: `In ${s.units.amount}; adaptive methods.` }),
        quantityField(s, { path: 'solver.step', label: 'Fixed step', dim: 'time', placeholder: 'none', hint: 'Needed by euler, heun, rk4 and abm2.' }),
      ),
    );
    details.addEventListener('toggle', () => {
      this.solverOpen = details.open;
    });

    this.root.replaceChildren(
      ...[this.undo.bar()].filter((x): x is HTMLElement => x !== null),
      h(
        'fieldset',
        { class: 'group' },
        h('legend', {}, 'Span and units'),
        h(
          'div',
          { class: 'row' },
          quantityField(s, { path: 'output.start', label: 'Start', dim: 'time', placeholder: '0' }),
          quantityField(s, { path: 'output.end', label: 'End time', dim: 'time', required: true }),
          quantityField(s, { path: 'output.step', label: 'Output step', dim: 'time', placeholder: '500 points' }),
        ),
        (this.pointsWarning = h('p', { class: 'field-warning', id: 'points-warning', 'data-testid': 'points-warning', role: 'status' })),
        h('div', { class: 'row' }, unitSelect('amount', 'Amount unit'), unitSelect('volume', 'Volume unit'), unitSelect('time', 'Time unit')),
        h('p', { class: 'hint' }, 'Plain numbers are read in these units, and results are reported in them.'),
      ),
      h(
        'fieldset',
        { class: 'group' },
        h('legend', {}, 'Target windows'),
        windowRows,
        h('div', { class: 'row-actions' }, button('Add target window', { 'data-focus-key': 'add-window' }, () => this.addWindow())),
      ),
      details,
    );
    this.refreshPointsWarning();
  }

  private addWindow(): void {
    const withVolume = this.store.compartments.find((c) => c.volume !== undefined && typeof c.id === 'string');
    if (!withVolume) {
      this.hooks.announce('A target window needs a compartment with a volume.');
      return;
    }
    const u = this.store.units;
    this.store.mutate(() => {
      this.store.thresholdList().push({ compartment: String(withVolume.id), above: `1 ${u.amount}/${u.volume}`, below: `10 ${u.amount}/${u.volume}` });
    });
    this.hooks.clearErrors();
    this.hooks.rerender(`path:output.thresholds[${this.store.thresholds.length - 1}].above`);
    this.hooks.announce('Added a target window; set its lower and upper concentrations.');
  }

  private removeWindow(i: number): void {
    const row = this.store.thresholds[i];
    if (!row) return;
    this.store.mutate((doc) => {
      doc.output?.thresholds?.splice(i, 1);
    });
    const edges = [row.above !== undefined ? `from ${String(row.above)}` : '', row.below !== undefined ? `to ${String(row.below)}` : ''].filter(Boolean).join(' ');
    const message = `Removed target window ${i + 1} (${String(row.compartment ?? '?')}${edges ? ` ${edges}` : ''}).`;
    this.undo.offer({
      message,
      focusAfter: `path:output.thresholds[${i}].above`,
      restore: () => {
        this.store.thresholdList().splice(Math.min(i, this.store.thresholds.length), 0, row);
      },
    });
    this.hooks.clearErrors();
    const left = this.store.thresholds.length;
    this.hooks.rerender(left === 0 ? 'key:add-window' : `key:remove-window-${Math.min(i, left - 1)}`);
    this.hooks.announce(`${message} Undo puts it back.`);
  }
}

function unitChoicesWith(list: string[], current: string): string[] {
  return list.includes(current) ? list : [current, ...list];
}
