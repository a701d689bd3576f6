/**
 * The model form: compartments (id, label, volume or none) and transfers between them or
 * out of the body (rate constant, clearance, or saturable Vmax/Km). Writes into the store.
 */
import { h } from './dom.ts';
import { button, compartmentField, quantityField, refreshCompartmentSelects, selectField, textField } from './fields.ts';
import type { CompartmentDoc, ScenarioStore, TransferDoc } from './store.ts';

export interface FormHooks {
  /** Re-render every form, keeping keyboard focus where it was. */
  rerender(focusAfter?: string): void;
  /** Say something in the polite status region. */
  announce(message: string): void;
  /** Forget field errors (their paths shift when rows are added or removed). */
  clearErrors(): void;
}

export type TransferKind = 'k' | 'cl' | 'mm';

/** Kind chosen in the picker before its value is typed (the stored row has no kinetics yet). */
const pendingKind = new WeakMap<object, TransferKind>();
/** The volume a compartment had before it was made a depot, to restore it when unticked. */
const formerVolume = new WeakMap<object, unknown>();

export function transferKind(t: TransferDoc): TransferKind {
  if (t.vmax !== undefined || t.km !== undefined) return 'mm';
  if (t.cl !== undefined) return 'cl';
  if (t.k !== undefined) return 'k';
  return pendingKind.get(t) ?? 'k';
}

export class ModelForm {
  constructor(
    private readonly store: ScenarioStore,
    private readonly root: HTMLElement,
    private readonly hooks: FormHooks,
  ) {}

  render(): void {
    this.renaming = null;
    const comps = this.store.compartments;
    const transfers = this.store.transfers;

    const compRows = h('div', { class: 'rows' });
    comps.forEach((c, i) => compRows.append(this.compartmentRow(c, i)));
    if (comps.length === 0) compRows.append(h('p', { class: 'empty' }, 'No compartments yet. Add one to start the model.'));

    const transferRows = h('div', { class: 'rows' });
    transfers.forEach((t, i) => transferRows.append(this.transferRow(t, i)));
    if (transfers.length === 0) transferRows.append(h('p', { class: 'empty' }, 'No transfers: drug stays where it is dosed. Add elimination or distribution.'));

    this.root.replaceChildren(
      h(
        'fieldset',
        { class: 'group' },
        h('legend', {}, 'Compartments'),
        compRows,
        h('div', { class: 'row-actions' }, button('Add compartment', { 'data-testid': 'add-compartment', 'data-focus-key': 'add-compartment' }, () => this.addCompartment())),
      ),
      h(
        'fieldset',
        { class: 'group' },
        h('legend', {}, 'Transfers'),
        transferRows,
        h('div', { class: 'row-actions' }, button('Add transfer', { 'data-testid': 'add-transfer', 'data-focus-key': 'add-transfer' }, () => this.addTransfer())),
      ),
    );
  }

  private compartmentRow(c: CompartmentDoc, i: number): HTMLElement {
    const p = `compartments[${i}]`;
    const depot = c.volume === undefined;
    const depotId = `depot-${i}`;
    const depotBox = h('input', { type: 'checkbox', id: depotId, 'data-focus-key': `depot-${i}`, checked: depot });
    depotBox.addEventListener('change', () => this.toggleDepot(i, depotBox.checked));
    const name = typeof c.id === 'string' && c.id ? c.id : `#${i + 1}`;
    return h(
      'div',
      { class: 'row compartment-row', role: 'group', 'aria-label': `Compartment ${i + 1}: ${name}` },
      textField(this.store, {
        path: `${p}.id`,
        label: 'Name',
        required: true,
        maxLength: 40,
        onInput: (value) => this.renameLive(i, value.trim()),
        onCommit: () => this.renameDone(i),
      }),
      textField(this.store, { path: `${p}.label`, label: 'Label', placeholder: 'e.g. Plasma', maxLength: 80 }),
      depot
        ? h('div', { class: 'field depot-note' }, h('span', { class: 'field-label-like' }, 'Volume'), h('p', { class: 'note' }, 'none — holds amount only'))
        : quantityField(this.store, { path: `${p}.volume`, label: 'Volume', dim: 'volume', required: true }),
      h('div', { class: 'field check' }, depotBox, h('label', { for: depotId }, 'No volume (depot)')),
      h('div', { class: 'field remove' }, button('Remove', { 'data-focus-key': `remove-compartment-${i}`, 'aria-label': `Remove compartment ${name}`, class: 'quiet' }, () => this.removeCompartment(i))),
    );
  }

  private transferRow(t: TransferDoc, i: number): HTMLElement {
    const p = `transfers[${i}]`;
    const kind = transferKind(t);
    const params: HTMLElement[] = [];
    if (kind === 'k') params.push(quantityField(this.store, { path: `${p}.k`, label: 'Rate constant k', dim: 'rateConstant', required: true }));
    if (kind === 'cl') params.push(quantityField(this.store, { path: `${p}.cl`, label: 'Clearance CL', dim: 'clearance', required: true }));
    if (kind === 'mm') {
      params.push(quantityField(this.store, { path: `${p}.vmax`, label: 'Vmax', dim: 'amountRate', required: true }));
      params.push(quantityField(this.store, { path: `${p}.km`, label: 'Km', dim: 'concentration', required: true }));
    }
    const from = typeof t.from === 'string' ? t.from : '?';
    const to = typeof t.to === 'string' ? t.to : 'out';
    return h(
      'div',
      { class: 'row transfer-row', role: 'group', 'aria-label': `Transfer ${i + 1}: ${from} to ${to}` },
      compartmentField(this.store, { path: `${p}.from`, label: 'From' }),
      compartmentField(this.store, { path: `${p}.to`, label: 'To', absentLabel: 'out of the body' }),
      selectField(this.store, {
        path: `transfer-kind-${i}`,
        errorPath: p,
        noPath: true,
        label: 'Kinetics',
        value: kind,
        options: [
          ['k', 'rate constant k'],
          ['cl', 'clearance CL'],
          ['mm', 'saturable Vmax, Km'],
        ],
        onChange: (v) => this.setKind(i, v as TransferKind),
      }),
      ...params,
      textField(this.store, { path: `${p}.label`, label: 'Label', placeholder: 'e.g. absorption', maxLength: 80 }),
      h('div', { class: 'field remove' }, button('Remove', { 'data-focus-key': `remove-transfer-${i}`, 'aria-label': `Remove transfer ${i + 1}`, class: 'quiet' }, () => this.removeTransfer(i))),
    );
  }

  /**
   * Renaming: the name box writes on every keystroke, and the transfers, doses and windows
   * that named the compartment when typing began follow it, so the model stays connected.
   */
  private renaming: { index: number; from: string; refs: { row: Record<string, unknown>; key: string }[] } | null = null;

  private renameLive(i: number, next: string): void {
    const c = this.store.compartments[i];
    if (!c) return;
    if (!this.renaming || this.renaming.index !== i) {
      const old = typeof c.id === 'string' ? c.id : '';
      const shared = this.store.compartments.some((o, j) => j !== i && o.id === old);
      const refs: { row: Record<string, unknown>; key: string }[] = [];
      if (old !== '' && !shared) {
        for (const t of this.store.transfers) {
          if (t.from === old) refs.push({ row: t, key: 'from' });
          if (t.to === old) refs.push({ row: t, key: 'to' });
        }
        for (const d of this.store.doses) if (d.into === old) refs.push({ row: d, key: 'into' });
        for (const th of this.store.thresholds) if (th.compartment === old) refs.push({ row: th, key: 'compartment' });
      }
      this.renaming = { index: i, from: old, refs };
    }
    for (const r of this.renaming.refs) r.row[r.key] = next;
    this.store.set(`compartments[${i}].id`, next);
    refreshCompartmentSelects(this.store, document);
  }

  private renameDone(i: number): void {
    const r = this.renaming;
    this.renaming = null;
    const now = this.store.compartments[i]?.id;
    if (!r || r.index !== i || typeof now !== 'string' || now === r.from || r.from === '' || now === '') return;
    const n = r.refs.length;
    this.hooks.announce(`Renamed compartment ${r.from} to ${now}${n ? `; ${n} reference${n > 1 ? 's' : ''} updated` : ''}.`);
  }

  private toggleDepot(i: number, depot: boolean): void {
    const c = this.store.compartments[i];
    if (!c) return;
    if (depot) {
      if (c.volume !== undefined) formerVolume.set(c, c.volume);
      this.store.set(`compartments[${i}].volume`, undefined);
    } else {
      this.store.set(`compartments[${i}].volume`, formerVolume.get(c) ?? `10 ${this.store.units.volume}`);
    }
    this.hooks.rerender(`key:depot-${i}`);
  }

  private addCompartment(): void {
    const ids = new Set(this.store.compartmentIds());
    let id = ids.size === 0 ? 'central' : '';
    for (let n = ids.size + 1; id === '' || ids.has(id); n++) id = `cmt${n}`;
    this.store.mutate(() => {
      this.store.list('compartments').push({ id, volume: `10 ${this.store.units.volume}` });
    });
    this.hooks.clearErrors();
    this.hooks.rerender(`path:compartments[${this.store.compartments.length - 1}].id`);
    this.hooks.announce(`Added compartment ${id}.`);
  }

  private removeCompartment(i: number): void {
    const c = this.store.compartments[i];
    if (!c) return;
    const id = c.id;
    let dropped = 0;
    this.store.mutate((doc) => {
      doc.compartments?.splice(i, 1);
      if (Array.isArray(doc.transfers) && typeof id === 'string') {
        const before = doc.transfers.length;
        doc.transfers = doc.transfers.filter((t) => t.from !== id && t.to !== id);
        dropped = before - doc.transfers.length;
      }
    });
    this.hooks.clearErrors();
    const left = this.store.compartments.length;
    this.hooks.rerender(left === 0 ? 'key:add-compartment' : `key:remove-compartment-${Math.min(i, left - 1)}`);
    const stillDosed = this.store.doses.some((d) => d.into === id) || this.store.thresholds.some((t) => t.compartment === id);
    this.hooks.announce(
      `Removed compartment ${String(id)}${dropped ? ` and its ${dropped} transfer${dropped > 1 ? 's' : ''}` : ''}.` +
        (stillDosed ? ` Doses or windows still name ${String(id)}; choose another compartment for them.` : ''),
    );
  }

  private setKind(i: number, kind: TransferKind): void {
    const t = this.store.transfers[i];
    if (!t) return;
    if (transferKind(t) === kind) return;
    const p = `transfers[${i}]`;
    for (const key of ['k', 'cl', 'vmax', 'km'] as const) if (t[key] !== undefined) this.store.set(`${p}.${key}`, undefined);
    pendingKind.set(t, kind);
    this.hooks.rerender(`path:${p}`);
  }

  private addTransfer(): void {
    const comps = this.store.compartments;
    if (comps.length === 0) {
      this.hooks.announce('Add a compartment before adding a transfer.');
      return;
    }
    const withVolume = comps.find((c) => c.volume !== undefined) ?? comps[0];
    this.store.mutate(() => {
      this.store.list('transfers').push({ from: String(withVolume.id ?? ''), k: `0.1 1/${this.store.units.time}` });
    });
    this.hooks.clearErrors();
    this.hooks.rerender(`path:transfers[${this.store.transfers.length - 1}].from`);
    this.hooks.announce('Added a transfer; choose where it goes and its kinetics.');
  }

  private removeTransfer(i: number): void {
    this.store.mutate((doc) => {
      doc.transfers?.splice(i, 1);
    });
    this.hooks.clearErrors();
    const left = this.store.transfers.length;
    this.hooks.rerender(left === 0 ? 'key:add-transfer' : `key:remove-transfer-${Math.min(i, left - 1)}`);
    this.hooks.announce(`Removed transfer ${i + 1}.`);
  }
}
