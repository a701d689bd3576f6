/**
 * Form fields bound to the scenario store by JSON path. Every input carries `data-path`
 * (its JSON path) and a <label>; a unit picker carries `data-unit-for` with the path of its
 * number box, so `[data-path="…"]` always finds exactly one element.
 */
import { fieldId, h } from './dom.ts';
import { convertUnit, isNumberText, splitQuantity, unitChoices, type Dim } from './quantity.ts';
import type { ScenarioStore } from './store.ts';

interface BaseOptions {
  path: string;
  label: string;
  /** Short help shown under the field and linked with aria-describedby. */
  hint?: string;
  /** A required field keeps an empty string when cleared (so the server names it); an optional one is removed. */
  required?: boolean;
  /** Extra class on the wrapper (for layout). */
  wide?: boolean;
}

function wrapper(opts: BaseOptions, control: HTMLElement, input: HTMLElement): HTMLElement {
  const id = fieldId(opts.path);
  const label = h('label', { for: id }, opts.label);
  const parts: (HTMLElement | null)[] = [label, control];
  if (opts.hint) {
    const hintId = `${id}-hint`;
    input.setAttribute('aria-describedby', hintId);
    parts.push(h('p', { class: 'hint', id: hintId }, opts.hint));
  }
  return h('div', { class: `field${opts.wide ? ' field-wide' : ''}` }, ...parts);
}

function textInput(path: string, value: string, extra: Record<string, string | boolean> = {}): HTMLInputElement {
  return h('input', { type: 'text', id: fieldId(path), 'data-path': path, value, autocomplete: 'off', spellcheck: 'false', ...extra });
}

export interface TextOptions extends BaseOptions {
  placeholder?: string;
  /** Replaces the plain write on every keystroke. */
  onInput?: (value: string, input: HTMLInputElement) => void;
  /** Called with the text on `change` (when the field is left). */
  onCommit?: (value: string, input: HTMLInputElement) => void;
  maxLength?: number;
}

export function textField(store: ScenarioStore, opts: TextOptions): HTMLElement {
  const current = store.get(opts.path);
  const input = textInput(opts.path, typeof current === 'string' ? current : current === undefined ? '' : String(current), {
    ...(opts.placeholder ? { placeholder: opts.placeholder } : {}),
    ...(opts.required ? { 'aria-required': 'true' } : {}),
    ...(opts.maxLength ? { maxlength: String(opts.maxLength) } : {}),
  });
  const onInput = opts.onInput;
  if (onInput) input.addEventListener('input', () => onInput(input.value, input));
  else
    input.addEventListener('input', () => {
      const v = input.value;
      store.set(opts.path, v === '' && !opts.required ? undefined : v);
    });
  const onCommit = opts.onCommit;
  if (onCommit) input.addEventListener('change', () => onCommit(input.value, input));
  return wrapper(opts, h('div', { class: 'control' }, input), input);
}

export interface NumberOptions extends BaseOptions {
  placeholder?: string;
  /** Accept "85%" and store 0.85. */
  percent?: boolean;
}

/** A plain number (bioavailability, count, tolerances): stored as a JSON number; text that is not a number is stored as typed so the server can name it. */
export function numberField(store: ScenarioStore, opts: NumberOptions): HTMLElement {
  const current = store.get(opts.path);
  const input = textInput(opts.path, current === undefined || current === null ? '' : String(current), {
    inputmode: 'decimal',
    class: 'num-input',
    ...(opts.placeholder ? { placeholder: opts.placeholder } : {}),
  });
  input.addEventListener('input', () => {
    const t = input.value.trim();
    if (t === '') store.set(opts.path, opts.required ? '' : undefined);
    else if (isNumberText(t)) store.set(opts.path, Number(t));
    else if (opts.percent && /%$/.test(t) && isNumberText(t.slice(0, -1))) store.set(opts.path, Number(t.slice(0, -1)) / 100);
    else store.set(opts.path, t);
  });
  return wrapper(opts, h('div', { class: 'control' }, input), input);
}

export interface QuantityOptions extends BaseOptions {
  dim: Dim;
  placeholder?: string;
}

const asTyped = '';

/**
 * A number box with a unit picker; stores "<number> <unit>" (the scenario's own quantity
 * strings). Choosing another unit converts the number so that the quantity stays the same
 * (0.9 1/h becomes 0.015 1/min), and a note beside the field says so; a unit the page cannot
 * convert (one typed in a file, outside its tables) keeps the number and the note says that
 * instead, so a relabelling is never silent.
 */
export function quantityField(store: ScenarioStore, opts: QuantityOptions): HTMLElement {
  const parts = splitQuantity(store.get(opts.path), opts.dim, store.units);
  const input = textInput(opts.path, parts.value, {
    inputmode: 'decimal',
    class: 'num-input',
    ...(opts.placeholder ? { placeholder: opts.placeholder } : {}),
    ...(opts.required ? { 'aria-required': 'true' } : {}),
  });
  const unitId = `${fieldId(opts.path)}-unit`;
  const choices = [...unitChoices[opts.dim]];
  if (parts.unit !== null && !choices.includes(parts.unit)) choices.unshift(parts.unit);
  const select = h('select', { id: unitId, 'data-unit-for': opts.path, class: 'unit-select' });
  if (parts.unit === null) select.append(h('option', { value: asTyped }, 'as typed'));
  for (const u of choices) select.append(h('option', { value: u }, u));
  select.value = parts.unit ?? asTyped;
  let unitBefore = select.value;

  const noteId = `${fieldId(opts.path)}-unit-note`;
  const note = h('p', { class: 'hint unit-note', id: noteId, role: 'status', 'data-unit-note-for': opts.path });
  note.hidden = true;
  const say = (text: string | null) => {
    note.textContent = text ?? '';
    note.hidden = text === null;
  };

  const write = () => {
    const t = input.value.trim();
    if (t === '') {
      store.set(opts.path, opts.required ? '' : undefined);
      return;
    }
    // Text that is not a plain number (a unit typed in the box, "12 LL", or a typo) is stored as
    // typed, so the server's message quotes what the user wrote, not it with the picker's unit.
    if (select.value === asTyped || !isNumberText(t)) store.set(opts.path, isNumberText(t) ? Number(t) : t);
    else store.set(opts.path, `${t} ${select.value}`);
  };
  input.addEventListener('input', () => {
    say(null); // the note was about the number before this edit
    write();
  });
  select.addEventListener('change', () => {
    const from = unitBefore;
    const to = select.value;
    unitBefore = to;
    const t = input.value.trim();
    if (from !== asTyped && to !== asTyped && isNumberText(t)) {
      const converted = convertUnit(Number(t), from, to, opts.dim);
      if (converted !== null) {
        input.value = String(converted);
        say(`converted ${t} ${from} → ${converted} ${to}`);
      } else {
        say(`${t} kept as it was: the page cannot convert ${from} to ${to}; check the number`);
      }
    } else say(null);
    write();
  });
  const unitLabel = h('label', { for: unitId, class: 'visually-hidden' }, `Unit of ${opts.label.toLowerCase()}`);
  const field = wrapper(opts, h('div', { class: 'control' }, input, unitLabel, select), input);
  field.append(note);
  input.setAttribute('aria-describedby', [input.getAttribute('aria-describedby'), noteId].filter(Boolean).join(' '));
  return field;
}

export interface SelectOptions extends BaseOptions {
  options: [value: string, label: string][];
  /** Value shown when the key is absent; choosing it removes the key. */
  absentValue?: string;
  onChange?: (value: string) => void;
  /** A select that does not map to one JSON value gets a focus key instead of data-path. */
  noPath?: boolean;
  /** Path used for error messages on a row-level select (e.g. "transfers[0]"). */
  errorPath?: string;
  value?: string;
  className?: string;
}

export function selectField(store: ScenarioStore, opts: SelectOptions): HTMLElement {
  const id = fieldId(opts.errorPath ?? opts.path);
  const attrs: Record<string, string> = { id };
  if (opts.noPath) {
    attrs['data-focus-key'] = opts.path;
    if (opts.errorPath) attrs['data-path'] = opts.errorPath;
  } else {
    attrs['data-path'] = opts.path;
  }
  if (opts.className) attrs.class = opts.className;
  const select = h('select', attrs);
  const current = opts.value ?? store.get(opts.path);
  const value = current === undefined || current === null ? (opts.absentValue ?? '') : String(current);
  const options = [...opts.options];
  if (!options.some(([v]) => v === value)) options.push([value, value === '' ? '(none)' : `${value} (not found)`]);
  for (const [v, l] of options) select.append(h('option', { value: v }, l));
  select.value = value;
  select.addEventListener('change', () => {
    if (opts.onChange) opts.onChange(select.value);
    else store.set(opts.path, opts.absentValue !== undefined && select.value === opts.absentValue ? undefined : select.value);
  });
  return wrapper({ ...opts, path: opts.errorPath ?? opts.path }, h('div', { class: 'control' }, select), select);
}

export interface CompartmentSelectOptions extends BaseOptions {
  /** Label of an extra first choice that removes the key (e.g. "out of the body"). */
  absentLabel?: string;
  /** Offer only compartments with a volume (concentration windows). */
  withVolume?: boolean;
}

/** A compartment picker; its choices are refreshed in place when compartments are renamed. */
export function compartmentField(store: ScenarioStore, opts: CompartmentSelectOptions): HTMLElement {
  const select = h('select', {
    id: fieldId(opts.path),
    'data-path': opts.path,
    class: 'cmt-select',
    'data-absent-label': opts.absentLabel ?? null,
    'data-with-volume': opts.withVolume ? 'true' : null,
  });
  fillCompartmentSelect(store, select);
  select.addEventListener('change', () => {
    store.set(opts.path, select.value === '' && opts.absentLabel ? undefined : select.value);
  });
  return wrapper(opts, h('div', { class: 'control' }, select), select);
}

export function fillCompartmentSelect(store: ScenarioStore, select: HTMLSelectElement): void {
  const path = select.dataset.path ?? '';
  const current = store.get(path);
  const value = typeof current === 'string' ? current : '';
  const absentLabel = select.dataset.absentLabel;
  const withVolume = select.dataset.withVolume === 'true';
  select.replaceChildren();
  if (absentLabel) select.append(h('option', { value: '' }, absentLabel));
  const comps = store.compartments.filter((c) => typeof c.id === 'string' && c.id !== '' && (!withVolume || c.volume !== undefined));
  for (const c of comps) {
    const id = c.id as string;
    select.append(h('option', { value: id }, c.label ? `${id} — ${c.label}` : id));
  }
  if (value !== '' && !comps.some((c) => c.id === value)) select.append(h('option', { value }, `${value} (not in the model)`));
  if (value === '' && !absentLabel) select.append(h('option', { value: '' }, '(choose)'));
  select.value = value;
}

/** Refreshes every compartment picker under root (after a rename or a volume change). */
export function refreshCompartmentSelects(store: ScenarioStore, root: ParentNode): void {
  root.querySelectorAll<HTMLSelectElement>('select.cmt-select').forEach((s) => fillCompartmentSelect(store, s));
}

export function button(label: string, attrs: Record<string, string> = {}, onClick?: (ev: MouseEvent) => void): HTMLButtonElement {
  const b = h('button', { type: 'button', ...attrs }, label);
  if (onClick) b.addEventListener('click', onClick);
  return b;
}
