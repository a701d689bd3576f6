/**
 * The two small native dialogs of saving: the details of a save (name and tags the first time,
 * a change note, "Your name", remembered in this browser), and the choice after a conflict
 * (someone else saved a newer version first). Both answer a promise; Escape cancels.
 */
import { h } from './dom.ts';

export const authorKey = 'tidemark.author';

export function rememberedAuthor(): string {
  try {
    return localStorage.getItem(authorKey) ?? '';
  } catch {
    return '';
  }
}

function rememberAuthor(name: string): void {
  try {
    if (name) localStorage.setItem(authorKey, name);
    else localStorage.removeItem(authorKey);
  } catch {
    // Not remembered; the name is still sent with this save.
  }
}

export interface SaveDetails {
  name: string;
  tags: string[];
  note: string;
  author: string;
}

export interface SaveQuestion {
  /** True for the first save of this scenario: the dialog asks for its name and tags. */
  first: boolean;
  name: string;
  /** The line above the fields: what is being saved and why. */
  lead: string;
  /** The Save button's words. */
  action: string;
}

/** Splits "a, b ,c" into ["a", "b", "c"], without empty or repeated tags. */
export function parseTags(text: string): string[] {
  return [...new Set(text.split(',').map((t) => t.trim()).filter((t) => t !== ''))];
}

function labelled(id: string, label: string, control: HTMLElement, hint?: string): HTMLElement {
  return h('div', { class: 'save-field' }, h('label', { for: id }, label), control, hint ? h('p', { class: 'hint' }, hint) : null);
}

/** Opens a modal dialog and settles with what `wire` resolves, removing the dialog after. */
function modal<T>(content: HTMLElement[], testid: string, wire: (dialog: HTMLDialogElement, done: (value: T) => void) => T): Promise<T> {
  return new Promise((resolve) => {
    const dialog = h('dialog', { class: 'save-dialog', 'data-testid': testid });
    dialog.append(...content);
    document.body.append(dialog);
    let settled = false;
    const done = (value: T) => {
      if (settled) return;
      settled = true;
      dialog.close();
      dialog.remove();
      resolve(value);
    };
    const onCancel = wire(dialog, done);
    dialog.addEventListener('close', () => done(onCancel));
    dialog.showModal();
  });
}

/** Asks for the save's details; null when the user cancels. */
export function askSaveDetails(q: SaveQuestion): Promise<SaveDetails | null> {
  const name = h('input', { id: 'save-name', type: 'text', maxlength: 200, required: true, value: q.name, 'data-testid': 'save-name' });
  const tags = h('input', { id: 'save-tags', type: 'text', 'data-testid': 'save-tags' });
  const note = h('textarea', { id: 'save-note', rows: 3, maxlength: 2000, 'data-testid': 'save-note' });
  const author = h('input', { id: 'save-author', type: 'text', maxlength: 100, value: rememberedAuthor(), autocomplete: 'name', 'data-testid': 'save-author' });
  const save = h('button', { type: 'submit', class: 'primary', 'data-testid': 'save-confirm' }, q.action);
  const cancel = h('button', { type: 'button', 'data-testid': 'save-cancel' }, 'Cancel');
  const form = h(
    'form',
    { class: 'save-form' },
    h('h2', {}, q.first ? 'Save to the library' : 'Save a new version'),
    h('p', { class: 'save-lead' }, q.lead),
    q.first ? labelled('save-name', 'Name', name) : null,
    q.first ? labelled('save-tags', 'Tags (optional)', tags, 'Separated by commas, e.g. “renal, draft”.') : null,
    labelled('save-note', 'What changed (optional)', note),
    labelled('save-author', 'Your name', author, 'Remembered in this browser and shown beside your versions and reports.'),
    h('div', { class: 'dialog-buttons' }, save, cancel),
  );
  return modal<SaveDetails | null>([form], 'save-dialog', (_dialog, done) => {
    cancel.addEventListener('click', () => done(null));
    form.addEventListener('submit', (ev) => {
      ev.preventDefault();
      if (q.first && name.value.trim() === '') {
        name.setCustomValidity('Give the scenario a name.');
        name.reportValidity();
        return;
      }
      rememberAuthor(author.value.trim());
      done({ name: name.value.trim(), tags: parseTags(tags.value), note: note.value.trim(), author: author.value.trim() });
    });
    name.addEventListener('input', () => name.setCustomValidity(''));
    // The note is what changes from save to save; the name only the first time.
    queueMicrotask(() => (q.first ? name : note).focus());
    return null;
  });
}

export type ConflictChoice = 'latest' | 'copy' | 'cancel';

/** After a 409: the user's edits are not saved; open the latest or save them as a new copy. */
export function askAfterConflict(name: string, base: number, latest: number | undefined): Promise<ConflictChoice> {
  const newer = latest === undefined ? 'a newer version' : `version ${latest}`;
  const open = h('button', { type: 'button', class: 'primary', 'data-testid': 'conflict-latest' }, latest === undefined ? 'Open the latest' : `Open version ${latest}`);
  const copy = h('button', { type: 'button', 'data-testid': 'conflict-copy' }, 'Save mine as a new copy');
  const cancel = h('button', { type: 'button', 'data-testid': 'conflict-cancel' }, 'Cancel');
  const content = [
    h('h2', {}, 'Not saved: someone saved first'),
    h('p', {}, `Another tab or person saved ${newer} of “${name}” after you opened version ${base}. Your changes were not saved, and nothing was overwritten.`),
    h('ul', { class: 'conflict-options' }, h('li', {}, h('strong', {}, 'Open the latest'), ': it replaces the screen; your changes stay in this browser as a draft you can restore.'), h('li', {}, h('strong', {}, 'Save mine as a new copy'), ': a separate scenario named “', name, ' (copy)”.')),
    h('div', { class: 'dialog-buttons' }, open, copy, cancel),
  ];
  return modal<ConflictChoice>(content, 'conflict-dialog', (_dialog, done) => {
    open.addEventListener('click', () => done('latest'));
    copy.addEventListener('click', () => done('copy'));
    cancel.addEventListener('click', () => done('cancel'));
    queueMicrotask(() => open.focus());
    return 'cancel';
  });
}
