/**
 * The library's part of the header: the Save and Library buttons (Ctrl+S / Cmd+S saves), the
 * line that always says where the scenario on screen stands ("saved as “name” v3" or "unsaved
 * changes"), the question before leaving with unsaved changes, and the store's availability
 * (when the server has no store the buttons stay and say why; drafts still work).
 */
import { byId, h } from './dom.ts';
import { storeStatus } from './library-api.ts';
import type { LibraryPanel } from './library.ts';
import type { PageShell, Saver } from './library-save.ts';

/** A server message as a sentence: "the file is locked" → "the file is locked." */
export function sentence(text: string): string {
  const t = text.trim();
  return /[.!?]$/.test(t) ? t : `${t}.`;
}

/** Whether the server's store can be used; `message` says why not (a sentence). */
export class StoreAccess {
  message: string | null = null;
  private first: Promise<void> | null = null;

  /** The first answer of the server (asked once); later calls return at once. */
  settled(): Promise<void> {
    this.first ??= this.check();
    return this.first;
  }

  async check(): Promise<void> {
    const answer = await storeStatus();
    if (!answer.ok) this.message = answer.status === 404 ? 'this server has no scenario library.' : sentence(answer.message);
    else if (!answer.value.available) this.message = sentence(answer.value.message ?? 'the scenario library is not available on this server');
    else this.message = null;
  }
}

/** True for Ctrl+S (Cmd+S on a Mac) without other modifiers. */
export function isSaveShortcut(ev: KeyboardEvent): boolean {
  return (ev.ctrlKey || ev.metaKey) && !ev.altKey && !ev.shiftKey && ev.key.toLowerCase() === 's';
}

export function setUpLibraryHeader(shell: PageShell, saver: Saver, access: StoreAccess, panel: LibraryPanel): { render(): void } {
  const saveButton = byId<HTMLButtonElement>('save-library');
  const libraryButton = byId<HTMLButtonElement>('open-library');
  const state = byId('work-state');
  const { tracker } = shell;

  const render = () => {
    const link = tracker.stored;
    const dirty = tracker.isDirty();
    const off = access.message;
    saveButton.title = off ? `The library is not available: ${off}` : 'Save the scenario on screen to the library as a new version (Ctrl+S)';
    libraryButton.title = off ? `The library is not available: ${off}` : 'Stored scenarios, their versions, runs and reports';
    const parts: (Node | string)[] = [];
    if (link) {
      // The name may be shortened on screen; the version never is.
      const open = h('button', { type: 'button', class: 'link-button', 'data-testid': 'work-link', title: `Open the history of “${link.name}”` }, dirty ? '“' : 'saved as “', h('span', { class: 'work-name' }, link.name), `” v${link.version}`);
      open.addEventListener('click', () => void showPanel(link.id));
      parts.push(open);
      if (dirty) parts.push(h('span', { class: 'unsaved' }, ' · unsaved changes'));
    } else {
      parts.push(dirty ? h('span', { class: 'unsaved' }, 'unsaved changes (not in the library)') : 'not in the library');
    }
    state.replaceChildren(...parts);
    state.dataset.state = dirty ? 'unsaved' : link ? 'saved' : 'unstored';
  };
  tracker.onChange(render);

  const showPanel = async (id?: number) => {
    if (access.message !== null) await access.check();
    if (access.message !== null) {
      shell.announce(`The library is not available: ${access.message} Your work is still kept as a draft in this browser.`);
      render();
      return;
    }
    await panel.show(id);
  };

  const save = async () => {
    if (access.message !== null) await access.check();
    render();
    await saver.save();
  };

  saveButton.addEventListener('click', () => void save());
  libraryButton.addEventListener('click', () => void showPanel());
  document.addEventListener('keydown', (ev) => {
    if (!isSaveShortcut(ev)) return;
    // Never the browser's own "save page" dialog.
    ev.preventDefault();
    if (document.querySelector('dialog[open]')) return;
    void save();
  });
  addEventListener('beforeunload', (ev) => {
    tracker.flush();
    if (!tracker.isDirty()) return;
    ev.preventDefault();
    // Older browsers ask only when returnValue is set.
    ev.returnValue = '';
  });
  void access.settled().then(render);
  render();
  return { render };
}
