/**
 * The model form: compartments (id, label, volume or none) and transfers between them or
 * out of the body (rate constant, clearance, or saturable Vmax/Km). Writes into the store.
 */
import { fmt } from '../../models/result/summary-text.ts';
import { h } from './dom.ts';
import { button, compartmentField, type QuantityOptions, refreshCompartmentSelects, selectField, textField } from './fields.ts';
import { relationsControl } from './covariate-relations.ts';
import { variableQuantityField } from './population-variability.ts';
import { isNumberText, scenarioUnitOf, splitQuantity, unitSize, type Dim, type UnitSet } from './quantity.ts';
import type { CompartmentDoc, ScenarioStore, TransferDoc } from './store.ts';
import { UndoOffer } from './undo.ts';

import type { FormHooks } from './form-hooks.ts';

export type { FormHooks };

export type TransferKind = 'k' | 'cl' | 'mm';

/** Kind chosen in the picker before its value is typed (the stored row has no kinetics yet). */
const pendingKind = new WeakMap<object, TransferKind>();
/** The volume a compartment had before it was made a depot, to restore it when unticked. */
const formerVolume = new WeakMap<object, unknown>();
/** Values a transfer had under kinetics it no longer uses, to restore when switched back. */
const formerKinetics = new WeakMap<object, Partial<Record<'k' | 'cl' | 'vmax' | 'km', unknown>>>();

const kindWords: Record<TransferKind, string> = { k: 'rate constant', cl: 'clearance', mm: 'saturable (Vmax, Km)' };

/** A quantity in mg, L and h (a plain number read in the scenario's units); null when the page cannot read it. */
function inBase(q: unknown, dim: Dim, u: UnitSet): number | null {
  const parts = splitQuantity(q, dim, u);
  if (parts.unit === null || !isNumberText(parts.value)) return null;
  const size = unitSize(parts.unit === '' ? scenarioUnitOf(dim, u) : parts.unit, dim);
  return size === null ? null : Number(parts.value) * size;
}

/** A base value (mg, L, h) written in the scenario's unit of the dimension, 4 significant digits. */
function inScenarioUnit(base: number, dim: Dim, u: UnitSet): string | null {
  const unit = scenarioUnitOf(dim, u);
  const size = unitSize(unit, dim);
  return size === null || !Number.isFinite(base) ? null : `${Number((base / size).toPrecision(4))} ${unit}`;
}


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
  ) {
    this.undo = new UndoOffer(store, root, hooks, 'model');
  }

  private readonly undo: UndoOffer;

  /** A quantity field with its "varies between subjects" toggle (population runs) and its covariate relations. */
  private varying(opts: QuantityOptions): HTMLElement {
    const rerender = (focusAfter?: string) => this.hooks.rerender(focusAfter);
    const field = variableQuantityField(this.store, opts, rerender);
    field.append(relationsControl(this.store, opts.path, opts.dim, rerender));
    return field;
  }

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
      ...[this.undo.bar()].filter((x): x is HTMLElement => x !== null),
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
        : this.varying({ path: `${p}.volume`, label: 'Volume', dim: 'volume', required: true }),
      h('div', { class: 'field check' }, depotBox, h('label', { for: depotId }, 'No volume (depot)')),
      h('div', { class: 'field remove' }, button('Remove', { 'data-focus-key': `remove-compartment-${i}`, 'aria-label': `Remove compartment ${name}`, class: 'quiet' }, () => this.removeCompartment(i))),
    );
  }

  private transferRow(t: TransferDoc, i: number): HTMLElement {
    const p = `transfers[${i}]`;
    const kind = transferKind(t);
    const params: HTMLElement[] = [];
    if (kind === 'k') params.push(this.varying({ path: `${p}.k`, label: 'Rate constant k', dim: 'rateConstant', required: true }));
    if (kind === 'cl') params.push(this.varying({ path: `${p}.cl`, label: 'Clearance CL', dim: 'clearance', required: true }));
    if (kind === 'mm') {
      params.push(this.varying({ path: `${p}.vmax`, label: 'Vmax', dim: 'amountRate', required: true }));
      params.push(this.varying({ path: `${p}.km`, label: 'Km', dim: 'concentration', required: true }));
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
    // Plain words: the first is the central compartment, later ones peripheral1, peripheral2…
    let id = ids.has('central') ? '' : 'central';
    for (let n = 1; id === '' || ids.has(id); n++) id = `peripheral${n}`;
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
    // The transfers to or from it go with it; each is named, and Undo puts all back in place.
    const gone: { index: number; row: TransferDoc }[] = [];
    this.store.transfers.forEach((t, k) => {
      if (typeof id === 'string' && (t.from === id || t.to === id)) gone.push({ index: k, row: t });
    });
    const described = gone.map(({ row }) => `${String(row.from ?? '?')} → ${typeof row.to === 'string' ? row.to : 'out'}${typeof row.label === 'string' && row.label ? ` (${row.label})` : ''}`);
    this.store.mutate((doc) => {
      doc.compartments?.splice(i, 1);
      if (Array.isArray(doc.transfers) && gone.length) doc.transfers = doc.transfers.filter((t) => !gone.some((g) => g.row === t));
    });
    const stillDosed = this.store.doses.some((d) => d.into === id) || this.store.thresholds.some((t) => t.compartment === id);
    const message =
      `Removed compartment ${String(id)}${gone.length ? ` and its ${gone.length === 1 ? 'transfer' : `${gone.length} transfers`}: ${described.join('; ')}` : ''}.` +
      (stillDosed ? ` Doses or windows still name ${String(id)}; choose another compartment for them.` : '');
    this.undo.offer({
      message,
      focusAfter: `path:compartments[${i}].id`,
      restore: (doc) => {
        if (!Array.isArray(doc.compartments)) doc.compartments = [];
        doc.compartments.splice(Math.min(i, doc.compartments.length), 0, c);
        if (!Array.isArray(doc.transfers)) doc.transfers = [];
        for (const g of gone) doc.transfers.splice(Math.min(g.index, doc.transfers.length), 0, g.row);
      },
    });
    this.hooks.clearErrors();
    const left = this.store.compartments.length;
    this.hooks.rerender(left === 0 ? 'key:add-compartment' : `key:remove-compartment-${Math.min(i, left - 1)}`);
    this.hooks.announce(`${message} Undo puts ${gone.length ? 'them' : 'it'} back.`);
  }

  /**
   * Another kinetics for a transfer. Nothing typed is lost: a rate constant and a clearance
   * are converted into each other through the volume of the compartment the route leaves
   * (k = CL/V); values that cannot be carried over (a clearance on a switch to saturable) are
   * kept aside and come back when the route is switched back; the announcement says which.
   */
  private setKind(i: number, kind: TransferKind): void {
    const t = this.store.transfers[i];
    if (!t) return;
    const was = transferKind(t);
    if (was === kind) return;
    const p = `transfers[${i}]`;
    const u = this.store.units;
    const kept = { ...(formerKinetics.get(t) ?? {}) };
    const old: Partial<Record<'k' | 'cl' | 'vmax' | 'km', unknown>> = {};
    for (const key of ['k', 'cl', 'vmax', 'km'] as const) if (t[key] !== undefined) old[key] = t[key];
    for (const key of Object.keys(old) as (keyof typeof old)[]) kept[key] = old[key];
    const from = this.store.compartments.find((c) => c.id === t.from);
    const volume = from?.volume === undefined ? null : inBase(from.volume, 'volume', u);
    const next: Partial<Record<'k' | 'cl' | 'vmax' | 'km', unknown>> = {};
    let said = '';
    if (kind === 'cl' && old.k !== undefined && volume !== null && inBase(old.k, 'rateConstant', u) !== null) {
      const cl = inScenarioUnit((inBase(old.k, 'rateConstant', u) as number) * volume, 'clearance', u);
      if (cl) {
        next.cl = cl;
        said = `k ${String(old.k)} × V ${String(from?.volume)} = CL ${cl}`;
      }
    } else if (kind === 'k' && old.cl !== undefined && volume !== null && volume > 0 && inBase(old.cl, 'clearance', u) !== null) {
      const k = inScenarioUnit((inBase(old.cl, 'clearance', u) as number) / volume, 'rateConstant', u);
      if (k) {
        next.k = k;
        said = `CL ${String(old.cl)} / V ${String(from?.volume)} = k ${k}`;
      }
    }
    // Values kept from an earlier switch come back when nothing was converted.
    if (kind === 'mm') {
      if (kept.vmax !== undefined) next.vmax = kept.vmax;
      if (kept.km !== undefined) next.km = kept.km;
    } else if (next[kind] === undefined && kept[kind] !== undefined) next[kind] = kept[kind];
    for (const key of ['k', 'cl', 'vmax', 'km'] as const) if (t[key] !== undefined) this.store.set(`${p}.${key}`, undefined);
    for (const [key, value] of Object.entries(next)) this.store.set(`${p}.${key}`, value);
    formerKinetics.set(t, kept);
    pendingKind.set(t, kind);
    this.hooks.rerender(`path:${p}`);
    const aside = Object.entries(old)
      .filter(([key]) => !(key in next) && !said)
      .map(([key, value]) => `${key === 'vmax' ? 'Vmax' : key === 'km' ? 'Km' : key === 'cl' ? 'CL' : 'k'} ${String(value)}`);
    const restored = Object.keys(next).length > 0 && !said ? ` Restored the ${kindWords[kind]} entered before.` : '';
    const kindSentence = `Transfer ${i + 1} is now ${kindWords[kind]}.`;
    const carry = said ? ` Converted through the volume of ${String(t.from)}: ${said}.` : '';
    const keptWords = !said && aside.length ? ` ${aside.join(' and ')} kept aside: switch back to ${kindWords[was]} to restore ${aside.length > 1 ? 'them' : 'it'}.` : '';
    this.hooks.announce(`${kindSentence}${carry}${restored}${keptWords}`);
    this.note(`transfer-note-${i}`, `${carry.trim()}${restored}${keptWords}`.trim() || null);
  }

  /** A short note under the transfers, kept until the next render (the announcement is spoken once). */
  private note(key: string, text: string | null): void {
    const host = this.root.querySelectorAll('.transfer-row');
    const i = Number(key.split('-').pop());
    const row = host[i];
    if (!row || !text) return;
    row.append(h('p', { class: 'hint kinetics-note', 'data-testid': `kinetics-note-${i}`, role: 'status' }, text));
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
    const row = this.store.transfers[i];
    if (!row) return;
    this.store.mutate((doc) => {
      doc.transfers?.splice(i, 1);
    });
    const message = `Removed transfer ${i + 1}: ${String(row.from ?? '?')} → ${typeof row.to === 'string' ? row.to : 'out'}${typeof row.label === 'string' && row.label ? ` (${row.label})` : ''}.`;
    this.undo.offer({
      message,
      focusAfter: `path:transfers[${i}].from`,
      restore: (doc) => {
        if (!Array.isArray(doc.transfers)) doc.transfers = [];
        doc.transfers.splice(Math.min(i, doc.transfers.length), 0, row);
      },
    });
    this.hooks.clearErrors();
    const left = this.store.transfers.length;
    this.hooks.rerender(left === 0 ? 'key:add-transfer' : `key:remove-transfer-${Math.min(i, left - 1)}`);
    this.hooks.announce(`${message} Undo puts it back.`);
  }
}
