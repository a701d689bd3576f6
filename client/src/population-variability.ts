/**
 * A model quantity that may vary between subjects: the usual number-and-unit field, and a
 * small "varies between subjects" toggle that reveals the coefficient of variation and a
 * short name (for correlations and tables). Switched on, the quantity is written as
 * { typical, cv, name } in place of the plain value; switched off, back to the plain value
 * (covariate relations, if the file had any, stay on the object).
 */
import { fieldId, h } from './dom.ts';
import { quantityField, textField, type QuantityOptions } from './fields.ts';
import { isNumberText } from './quantity.ts';
import type { ScenarioStore } from './store.ts';

type Rerender = (focusAfter?: string) => void;

function isObject(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/** A cv typed as "30", "30%" or "0.3": stored as the percentage string, or as typed when unreadable (the server names it). */
export function cvValue(text: string): string | number | undefined {
  const t = text.trim();
  if (t === '') return undefined;
  if (/%$/.test(t)) return t;
  if (!isNumberText(t)) return t;
  const n = Number(t);
  // A number above 1 is read as a percentage (nobody means a cv of 3000%).
  return n > 1 ? `${n}%` : n;
}

export function variableQuantityField(store: ScenarioStore, opts: QuantityOptions, rerender: Rerender): HTMLElement {
  return variableField(store, opts.path, (path) => quantityField(store, { ...opts, path }), rerender);
}

/**
 * Any field that may vary between subjects: `makeField` draws the plain value's field at the
 * path it is given (the quantity's own path, or `.typical` once it is an object), and the toggle
 * with cv and name goes under it. `cvTitle` says how the quantity varies (log-normal unless told).
 */
export function variableField(store: ScenarioStore, path: string, makeField: (path: string) => HTMLElement, rerender: Rerender, cvTitle = 'Between-subject coefficient of variation: log-normal around the typical value'): HTMLElement {
  const value = store.get(path);
  const adjusted = isObject(value);
  const varies = adjusted && value.cv !== undefined;
  const field = makeField(adjusted ? `${path}.typical` : path);
  const toggleId = `${fieldId(path)}-varies`;
  const toggle = h('input', { type: 'checkbox', id: toggleId, 'data-focus-key': `varies:${path}`, 'data-testid': `varies-${path}`, checked: varies });
  toggle.addEventListener('change', () => {
    setVarying(store, path, toggle.checked);
    rerender(toggle.checked ? `path:${path}.cv` : `key:varies:${path}`);
  });
  const box = h('div', { class: 'varies' }, h('span', { class: 'varies-toggle' }, toggle, h('label', { for: toggleId }, 'varies between subjects')));
  if (varies) {
    const cv = textField(store, {
      path: `${path}.cv`,
      label: 'cv',
      placeholder: 'e.g. 30%',
      onInput: (text) => store.set(`${path}.cv`, cvValue(text) ?? ''),
    });
    const name = textField(store, { path: `${path}.name`, label: 'Name', placeholder: 'e.g. CL', maxLength: 40 });
    cv.querySelector('input')?.setAttribute('title', cvTitle);
    box.append(h('div', { class: 'varies-fields' }, cv, name));
  }
  field.append(box);
  return field;
}

/** Switches a quantity between its plain value and { typical, cv, name }. */
export function setVarying(store: ScenarioStore, path: string, on: boolean): void {
  const value = store.get(path);
  if (on) {
    if (isObject(value)) store.set(`${path}.cv`, value.cv ?? '30%');
    else store.set(path, { typical: value ?? '', cv: '30%' });
    return;
  }
  if (!isObject(value)) return;
  const { cv: _cv, name: _name, variation: _variation, ...rest } = value;
  // With covariate relations the object stays (without its variability); otherwise the plain typical value.
  store.set(path, rest.covariates !== undefined ? rest : rest.typical);
}
