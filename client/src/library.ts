/**
 * The library panel (a native modal dialog): the stored scenarios, searched by name or tag,
 * each with Open, History, Duplicate and Delete (with Undo), and a "Show deleted" toggle with
 * Restore. Below the list, the history of the chosen scenario (library-history.ts).
 */
import { h } from './dom.ts';
import { localDateTime } from './draft.ts';
import { createScenario, deleteScenario, getScenario, listScenarios, restoreScenario, type ScenarioSummary } from './library-api.ts';
import { HistoryView } from './library-history.ts';
import type { PageShell } from './library-save.ts';
import { rememberedAuthor } from './save-dialog.ts';

const searchDelayMs = 250;

export class LibraryPanel {
  readonly dialog: HTMLDialogElement;
  private readonly search = h('input', { type: 'search', id: 'library-search', 'data-testid': 'library-search', placeholder: 'Name or tag', autocomplete: 'off' });
  private readonly showDeleted = h('input', { type: 'checkbox', id: 'library-show-deleted', 'data-testid': 'library-show-deleted' });
  private readonly status = h('p', { class: 'library-status', role: 'status', 'aria-live': 'polite', 'data-testid': 'library-status' });
  private readonly list = h('div', { class: 'library-list', 'data-testid': 'library-list' });
  private readonly history: HistoryView;
  private searchTimer: ReturnType<typeof setTimeout> | null = null;
  /** Answers to older searches are dropped. */
  private listSerial = 0;
  /** The scenario whose history is shown. */
  private chosen: number | null = null;

  constructor(private readonly shell: PageShell) {
    const close = h('button', { type: 'button', class: 'library-close', 'data-testid': 'library-close' }, 'Close');
    close.addEventListener('click', () => this.dialog.close());
    const historyHost = h('section', { class: 'library-history', 'aria-label': 'History of the chosen scenario', 'data-testid': 'library-history' });
    this.history = new HistoryView(historyHost, shell, {
      say: (text) => this.say(text),
      opened: () => this.dialog.close(),
    });
    this.dialog = h(
      'dialog',
      { class: 'library-dialog', 'aria-labelledby': 'library-heading', 'data-testid': 'library-dialog' },
      h('div', { class: 'library-top' }, h('h2', { id: 'library-heading' }, 'Library'), close),
      h(
        'div',
        { class: 'library-controls' },
        h('label', { for: 'library-search' }, 'Search'),
        this.search,
        h('span', { class: 'check' }, this.showDeleted, h('label', { for: 'library-show-deleted' }, 'Show deleted')),
      ),
      this.status,
      this.list,
      historyHost,
    );
    document.body.append(this.dialog);
    this.search.addEventListener('input', () => {
      if (this.searchTimer !== null) clearTimeout(this.searchTimer);
      this.searchTimer = setTimeout(() => void this.refresh(), searchDelayMs);
    });
    this.showDeleted.addEventListener('change', () => void this.refresh());
  }

  /** Opens the panel, with the history of `id` (default: the scenario on screen, when stored). */
  async show(id?: number): Promise<void> {
    this.chosen = id ?? this.shell.tracker.stored?.id ?? this.chosen;
    this.status.replaceChildren();
    if (!this.dialog.open) this.dialog.showModal();
    await this.refresh();
    if (this.chosen) await this.history.show(this.chosen);
    else this.history.clear();
  }

  private say(text: string, ...extra: HTMLElement[]): void {
    this.status.replaceChildren(text, ...extra.flatMap((e) => [' ', e]));
  }

  async refresh(): Promise<void> {
    const serial = ++this.listSerial;
    const answer = await listScenarios(this.search.value.trim(), this.showDeleted.checked ? 'include' : 'exclude');
    if (serial !== this.listSerial) return;
    if (!answer.ok) {
      this.list.replaceChildren(h('p', { class: 'library-empty' }, answer.message));
      return;
    }
    const { scenarios, total } = answer.value;
    if (scenarios.length === 0) {
      const searching = this.search.value.trim() !== '';
      this.list.replaceChildren(h('p', { class: 'library-empty' }, searching ? 'No scenario matches that name or tag.' : 'The library is empty. Save the scenario on screen to start it.'));
      return;
    }
    const table = h(
      'table',
      { class: 'library-table' },
      h('caption', { class: 'visually-hidden' }, 'Stored scenarios, latest update first'),
      h('thead', {}, h('tr', {}, ...['Name', 'Tags', 'Version', 'Updated', 'By', ''].map((t) => h('th', { scope: 'col' }, t)))),
      h('tbody', {}, ...scenarios.map((s) => this.row(s))),
    );
    this.list.replaceChildren(table, total > scenarios.length ? h('p', { class: 'hint' }, `Showing ${scenarios.length} of ${total}; search to narrow the list.`) : '');
  }

  private row(s: ScenarioSummary): HTMLTableRowElement {
    const onScreen = this.shell.tracker.stored?.id === s.id;
    const action = (label: string, testid: string, run: () => Promise<void> | void, title?: string) => {
      const b = h('button', { type: 'button', 'data-testid': `${testid}-${s.id}`, title }, label);
      b.addEventListener('click', () => void run());
      return b;
    };
    const actions = s.deleted
      ? [action('Restore', 'library-restore', () => this.restore(s))]
      : [
          action('Open', 'library-open', () => this.open(s)),
          action('History', 'library-history', () => this.choose(s.id)),
          action('Duplicate', 'library-duplicate', () => this.duplicate(s)),
          action('Delete', 'library-delete', () => this.remove(s)),
        ];
    return h(
      'tr',
      { class: [s.deleted ? 'deleted' : '', s.id === this.chosen ? 'chosen' : ''].join(' ').trim() || null, 'data-testid': `library-row-${s.id}` },
      h('th', { scope: 'row' }, s.name, onScreen ? h('span', { class: 'badge' }, 'on screen') : null, s.deleted ? h('span', { class: 'badge deleted-badge' }, 'deleted') : null),
      h('td', {}, s.tags.length ? h('ul', { class: 'tags' }, ...s.tags.map((t) => h('li', {}, t))) : ''),
      h('td', { class: 'num' }, `v${s.latestVersion}`),
      h('td', {}, h('time', { datetime: s.updated }, localDateTime(s.updated))),
      h('td', {}, s.author || '—'),
      h('td', {}, h('div', { class: 'library-actions' }, ...actions)),
    );
  }

  private async choose(id: number): Promise<void> {
    this.chosen = id;
    this.list.querySelectorAll('tr.chosen').forEach((tr) => tr.classList.remove('chosen'));
    this.list.querySelector(`[data-testid="library-row-${id}"]`)?.classList.add('chosen');
    await this.history.show(id);
  }

  private async open(s: ScenarioSummary): Promise<void> {
    const answer = await getScenario(s.id);
    if (!answer.ok) {
      this.say(`“${s.name}” could not be opened: ${answer.message}`);
      return;
    }
    const v = answer.value;
    this.dialog.close();
    const done = await this.shell.open(v.scenario, { kind: 'stored', id: v.id, version: v.version.version, name: v.name }, v.version.fingerprint, true, `Opened “${v.name}” version ${v.version.version} from the library.`);
    if (!done) void this.show(s.id);
  }

  private async duplicate(s: ScenarioSummary): Promise<void> {
    const source = await getScenario(s.id);
    if (!source.ok) {
      this.say(`“${s.name}” could not be copied: ${source.message}`);
      return;
    }
    const v = source.value;
    const name = `${v.name} (copy)`;
    const made = await createScenario({ scenario: v.scenario, name, tags: v.tags, notes: v.notes, note: `Copy of “${v.name}” version ${v.version.version}`, author: rememberedAuthor() || undefined });
    if (!made.ok) {
      this.say(`“${s.name}” could not be copied: ${made.message}`);
      return;
    }
    this.say(`Copied “${v.name}” version ${v.version.version} as “${name}”.`);
    await this.refresh();
  }

  private async remove(s: ScenarioSummary): Promise<void> {
    const answer = await deleteScenario(s.id);
    if (!answer.ok) {
      this.say(`“${s.name}” could not be deleted: ${answer.message}`);
      return;
    }
    const undo = h('button', { type: 'button', 'data-testid': 'library-undo' }, 'Undo');
    undo.addEventListener('click', () => void this.restore(s));
    this.say(`Deleted “${s.name}”. It stays recoverable under “Show deleted”.`, undo);
    undo.focus();
    if (this.chosen === s.id) this.history.clear();
    await this.refresh();
  }

  private async restore(s: ScenarioSummary): Promise<void> {
    const answer = await restoreScenario(s.id);
    if (!answer.ok) {
      this.say(`“${s.name}” could not be restored: ${answer.message}`);
      return;
    }
    this.say(`Restored “${s.name}”.`);
    await this.refresh();
  }
}
