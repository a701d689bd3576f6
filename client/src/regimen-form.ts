/**
 * The regimen form: one card per dose line (compartment, amount, first time, bolus or
 * infusion, bioavailability, lag, repeats), and the loading-dose shortcut. Bioavailability and
 * lag may depend on the subject (covariate relations) and vary between subjects (a cv:
 * logit-normal for the bioavailability, which stays within 0 and 1; log-normal for the lag).
 */
import { h } from './dom.ts';
import { relationsControl } from './covariate-relations.ts';
import { button, compartmentField, numberField, quantityField, selectField, textField } from './fields.ts';
import type { FormHooks } from './model-form.ts';
import { variableField, variableQuantityField } from './population-variability.ts';
import { addTime, quantityLabel, scaleQuantity } from './quantity.ts';
import type { DoseDoc, ScenarioStore } from './store.ts';
import { UndoOffer } from './undo.ts';

export type DoseForm = 'bolus' | 'duration' | 'rate';
export type RepeatMode = 'count' | 'through' | 'end';

const pendingForm = new WeakMap<object, DoseForm>();
const pendingRepeat = new WeakMap<object, RepeatMode>();

export function doseForm(d: DoseDoc): DoseForm {
  if (d.rate !== undefined) return 'rate';
  if (d.duration !== undefined) return 'duration';
  return pendingForm.get(d) ?? 'bolus';
}

function repeatMode(d: DoseDoc): RepeatMode {
  if (d.count !== undefined) return 'count';
  if (d.through !== undefined) return 'through';
  return pendingRepeat.get(d) ?? 'count';
}

export class RegimenForm {
  constructor(
    private readonly store: ScenarioStore,
    private readonly root: HTMLElement,
    private readonly hooks: FormHooks,
  ) {
    this.undo = new UndoOffer(store, root, hooks, 'regimen');
  }

  private readonly undo: UndoOffer;

  render(): void {
    const doses = this.store.doses;
    const cards = h('div', { class: 'dose-cards' });
    doses.forEach((d, i) => cards.append(this.doseCard(d, i)));
    if (doses.length === 0) cards.append(h('p', { class: 'empty' }, 'No doses yet. Add a dose line; a repeated regimen is one line with an interval.'));
    this.root.replaceChildren(
      ...[this.undo.bar()].filter((x): x is HTMLElement => x !== null),
      cards,
      h(
        'div',
        { class: 'row-actions' },
        button('Add dose', { 'data-testid': 'add-dose', 'data-focus-key': 'add-dose' }, () => this.addDose()),
        button('Add loading dose', { 'data-testid': 'add-loading-dose', 'data-focus-key': 'add-loading-dose' }, () => this.addLoadingDose()),
      ),
    );
  }

  private doseCard(d: DoseDoc, i: number): HTMLElement {
    const p = `doses[${i}]`;
    const form = doseForm(d);
    const mode = repeatMode(d);
    const title = `Dose line ${i + 1}${typeof d.label === 'string' && d.label ? ` — ${d.label}` : ''}`;
    const infusionField =
      form === 'duration'
        ? quantityField(this.store, { path: `${p}.duration`, label: 'Infusion duration', dim: 'time', required: true })
        : form === 'rate'
          ? quantityField(this.store, { path: `${p}.rate`, label: 'Infusion rate', dim: 'amountRate', required: true })
          : null;
    const repeatField =
      mode === 'count'
        ? numberField(this.store, { path: `${p}.count`, label: 'Number of doses n', placeholder: 'e.g. 14' })
        : mode === 'through'
          ? quantityField(this.store, { path: `${p}.through`, label: 'Last dose at or before', dim: 'time' })
          : null;
    return h(
      'fieldset',
      { class: 'dose-card' },
      h('legend', {}, title),
      h(
        'div',
        { class: 'row' },
        compartmentField(this.store, { path: `${p}.into`, label: 'Into compartment' }),
        quantityField(this.store, { path: `${p}.amount`, label: 'Amount per dose', dim: 'amount', required: true }),
        quantityField(this.store, { path: `${p}.at`, label: 'First dose at', dim: 'time', placeholder: '0' }),
        selectField(this.store, {
          path: `dose-form-${i}`,
          errorPath: p,
          noPath: true,
          label: 'Given as',
          value: form,
          options: [
            ['bolus', 'bolus'],
            ['duration', 'infusion, duration'],
            ['rate', 'infusion, rate'],
          ],
          onChange: (v) => this.setForm(i, v as DoseForm),
        }),
        infusionField,
        this.bioavailabilityField(`${p}.bioavailability`),
        this.lagField(`${p}.lag`),
      ),
      h(
        'div',
        { class: 'row repeat-row' },
        quantityField(this.store, { path: `${p}.every`, label: 'Repeat every τ', dim: 'time', placeholder: 'single dose', hint: 'Leave blank for a single dose.' }),
        selectField(this.store, {
          path: `repeat-mode-${i}`,
          noPath: true,
          label: 'Repeat',
          value: mode,
          options: [
            ['count', 'for n doses'],
            ['through', 'through a time'],
            ['end', 'to the end of the span'],
          ],
          onChange: (v) => this.setRepeat(i, v as RepeatMode),
        }),
        repeatField,
        textField(this.store, { path: `${p}.label`, label: 'Label', placeholder: 'e.g. maintenance', maxLength: 80 }),
        h('div', { class: 'field remove' }, button('Remove', { 'data-focus-key': `remove-dose-${i}`, 'aria-label': `Remove dose line ${i + 1}`, class: 'quiet' }, () => this.removeDose(i))),
      ),
    );
  }

  /** F: a plain fraction, or { typical, covariates?, cv?, name? } (logit-normal between subjects). */
  private bioavailabilityField(path: string): HTMLElement {
    const rerender = (focusAfter?: string) => this.hooks.rerender(focusAfter);
    const field = variableField(
      this.store,
      path,
      (at) => numberField(this.store, { path: at, label: 'Bioavailability F', placeholder: '1', hint: '0 to 1 (or a percentage)', percent: true, required: at !== path }),
      rerender,
      'Between-subject coefficient of variation at the typical value: logit-normal, so F stays within 0 and 1',
    );
    field.append(relationsControl(this.store, path, null, rerender));
    return field;
  }

  private lagField(path: string): HTMLElement {
    const rerender = (focusAfter?: string) => this.hooks.rerender(focusAfter);
    const field = variableQuantityField(this.store, { path, label: 'Lag time', dim: 'time', placeholder: '0' }, rerender);
    field.append(relationsControl(this.store, path, 'time', rerender));
    return field;
  }

  private setForm(i: number, form: DoseForm): void {
    const d = this.store.doses[i];
    if (!d || doseForm(d) === form) return;
    const p = `doses[${i}]`;
    if (d.duration !== undefined) this.store.set(`${p}.duration`, undefined);
    if (d.rate !== undefined) this.store.set(`${p}.rate`, undefined);
    if (form === 'duration') this.store.set(`${p}.duration`, `1 ${this.store.units.time}`);
    pendingForm.set(d, form);
    this.hooks.rerender(`key:dose-form-${i}`);
  }

  private setRepeat(i: number, mode: RepeatMode): void {
    const d = this.store.doses[i];
    if (!d || repeatMode(d) === mode) return;
    const p = `doses[${i}]`;
    if (d.count !== undefined) this.store.set(`${p}.count`, undefined);
    if (d.through !== undefined) this.store.set(`${p}.through`, undefined);
    pendingRepeat.set(d, mode);
    this.hooks.rerender(`key:repeat-mode-${i}`);
  }

  private addDose(): void {
    const ids = this.store.compartmentIds();
    if (ids.length === 0) {
      this.hooks.announce('Add a compartment before adding a dose.');
      return;
    }
    // Dose the first compartment that nothing flows into (a depot or the central compartment).
    const fed = new Set(this.store.transfers.map((t) => t.to).filter((x): x is string => typeof x === 'string'));
    const into = ids.find((id) => !fed.has(id)) ?? ids[0];
    this.store.mutate(() => {
      this.store.list('doses').push({ into, amount: `100 ${this.store.units.amount}`, at: 0 });
    });
    this.hooks.clearErrors();
    this.hooks.rerender(`path:doses[${this.store.doses.length - 1}].amount`);
    this.hooks.announce(`Added dose line ${this.store.doses.length} into ${into}.`);
  }

  /**
   * Inserts a single larger dose in the slot of the first maintenance dose and moves the
   * maintenance series one interval later (one dose fewer when it has a count), so the
   * loading dose comes first. Its amount starts at twice the maintenance amount; the user edits it.
   */
  private addLoadingDose(): void {
    const doses = this.store.doses;
    if (doses.length === 0) {
      this.hooks.announce('Add the maintenance dose first; the loading dose is placed before it.');
      return;
    }
    let idx = doses.findIndex((d) => d.every !== undefined);
    if (idx < 0) idx = 0;
    const m = doses[idx];
    const loading: DoseDoc = { into: m.into, amount: scaleQuantity(m.amount, 2) ?? m.amount };
    if (m.at !== undefined) loading.at = m.at;
    if (m.duration !== undefined) loading.duration = m.duration;
    if (m.rate !== undefined) loading.rate = m.rate;
    if (m.bioavailability !== undefined) loading.bioavailability = m.bioavailability;
    if (m.lag !== undefined) loading.lag = m.lag;
    loading.label = 'loading';

    let shifted: string | number | null = null;
    if (m.every !== undefined) {
      shifted = addTime(m.at ?? 0, m.every, this.store.units);
      if (shifted !== null) {
        m.at = shifted;
        if (typeof m.count === 'number' && m.count > 1) m.count -= 1;
      }
    }
    this.store.mutate(() => {
      this.store.list('doses').splice(idx, 0, loading);
    });
    this.hooks.clearErrors();
    this.hooks.rerender(`path:doses[${idx}].amount`);
    const u = this.store.units;
    this.hooks.announce(
      `Inserted a loading dose of ${quantityLabel(loading.amount, 'amount', u)} as dose line ${idx + 1}` +
        (shifted !== null ? `; the maintenance doses now start at ${quantityLabel(shifted, 'time', u)}.` : ' at the same time as the first dose.') +
        ' Edit its amount.',
    );
  }

  private removeDose(i: number): void {
    const row = this.store.doses[i];
    if (!row) return;
    this.store.mutate((doc) => {
      doc.doses?.splice(i, 1);
    });
    const u = this.store.units;
    const message = `Removed dose line ${i + 1}${typeof row.label === 'string' && row.label ? ` — ${row.label}` : ''} (${quantityLabel(row.amount, 'amount', u)} into ${String(row.into ?? '?')}).`;
    this.undo.offer({
      message,
      focusAfter: `path:doses[${i}].amount`,
      restore: (doc) => {
        if (!Array.isArray(doc.doses)) doc.doses = [];
        doc.doses.splice(Math.min(i, doc.doses.length), 0, row);
      },
    });
    this.hooks.clearErrors();
    const left = this.store.doses.length;
    this.hooks.rerender(left === 0 ? 'key:add-dose' : `key:remove-dose-${Math.min(i, left - 1)}`);
    this.hooks.announce(`${message} Undo puts it back.`);
  }
}
