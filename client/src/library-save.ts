/**
 * Saving the scenario on screen to the library: the first time a new scenario (POST), after
 * that a new version on top of the one it was opened from (PUT with baseVersion). A conflict
 * (409) is told plainly and never overwritten; invalid scenarios (400) get their problems
 * beside the fields.
 */
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import type { Problem } from './api.ts';
import type { Origin, WorkTracker } from './draft.ts';
import type { ErrorPresenter } from './errors.ts';
import { createScenario, getScenario, saveVersion, type Answer, type Saved } from './library-api.ts';
import { askAfterConflict, askSaveDetails } from './save-dialog.ts';
import type { ScenarioDoc, ScenarioStore } from './store.ts';

/** What the library needs of the page. */
export interface PageShell {
  store: ScenarioStore;
  tracker: WorkTracker;
  errors: ErrorPresenter;
  announce(message: string): void;
  /** The store's message when it is not available, else null. */
  unavailable(): string | null;
  /**
   * Puts a scenario from the library on screen and runs it, asking first over unsaved changes
   * unless `ask` is false; `base` is the fingerprint it counts as saved against. False when the
   * user kept the screen as it was.
   */
  open(doc: ScenarioDoc, origin: Extract<Origin, { kind: 'stored' }>, base: string, ask: boolean, message: string): Promise<boolean>;
  /** Shows the banner for the draft the tracker holds (after a conflict). */
  offerHeldDraft(): void;
}

export type StoredRef = Extract<Origin, { kind: 'stored' }> & { fingerprint: string };

/** Problems of a rejected save: the scenario's own paths lose their "scenario." prefix so they land beside the fields. */
export function scenarioProblems(problems: Problem[]): Problem[] {
  return problems.map((p) => ({ path: p.path === 'scenario' ? '' : p.path.startsWith('scenario.') ? p.path.slice('scenario.'.length) : p.path, message: p.message }));
}

export class Saver {
  private busy = false;

  constructor(private readonly shell: PageShell) {}

  /**
   * Saves the scenario on screen (after asking for a note and, the first time, a name); resolves
   * to the stored version, or null when nothing was saved (cancelled, refused, conflict).
   */
  async save(purpose: 'save' | 'report' = 'save'): Promise<StoredRef | null> {
    const { shell } = this;
    const off = shell.unavailable();
    if (off !== null) {
      shell.announce(`Not saved: ${off}`);
      return null;
    }
    if (this.busy) return null;
    this.busy = true;
    try {
      const link = shell.tracker.stored;
      const title = typeof shell.store.scenario.title === 'string' ? shell.store.scenario.title : '';
      const lead =
        purpose === 'report'
          ? 'A report is issued for a stored version, so that it can be found again by its fingerprint. Save first:'
          : link
            ? `A new version of “${link.name}” after version ${link.version}.`
            : 'The scenario is kept in the library with every later version.';
      const details = await askSaveDetails({ first: link === null, name: title, lead, action: purpose === 'report' ? 'Save and issue the report' : 'Save' });
      if (details === null) {
        shell.announce('Not saved.');
        return null;
      }
      const scenario = structuredClone(shell.store.scenario);
      if (link === null) {
        const answer = await createScenario({ scenario, name: details.name, tags: details.tags, note: details.note, author: details.author });
        return this.settle(answer, details.name, scenario);
      }
      const answer = await saveVersion(link.id, { scenario, baseVersion: link.version, note: details.note, author: details.author });
      if (!answer.ok && answer.status === 409) {
        await this.conflict(link, answer.latestVersion, scenario, details.note, details.author);
        return null;
      }
      return this.settle(answer, link.name, scenario);
    } finally {
      this.busy = false;
    }
  }

  /** Records a successful save, or shows why it failed. */
  private settle(answer: Answer<Saved>, name: string, scenario: ScenarioDoc): StoredRef | null {
    const { shell } = this;
    if (!answer.ok) {
      if (answer.status === 400 && answer.problems.length) {
        shell.errors.showInvalid(scenarioProblems(answer.problems));
        shell.announce('Not saved: the scenario has problems, listed with the fields. Your work is kept as a draft in this browser.');
      } else {
        shell.errors.showMessage(answer.message, 'Not saved');
        shell.announce('Not saved. Your work is kept as a draft in this browser.');
      }
      return null;
    }
    const { id, version, fingerprint } = answer.value;
    const origin = { kind: 'stored' as const, id, version, name };
    // The base is the server's fingerprint of what was sent; edits made meanwhile stay unsaved.
    shell.tracker.saved(origin, fingerprint);
    const local = scenarioFingerprint(scenario);
    shell.announce(`Saved “${name}” as version ${version} (fingerprint ${fingerprint}).${local === fingerprint ? '' : ' The library computed another fingerprint than this page; tell the maintainers.'}`);
    return { ...origin, fingerprint };
  }

  private async conflict(link: Extract<Origin, { kind: 'stored' }>, latest: number | undefined, scenario: ScenarioDoc, note: string, author: string): Promise<void> {
    const { shell } = this;
    const choice = await askAfterConflict(link.name, link.version, latest);
    if (choice === 'cancel') {
      shell.announce(`Not saved: version ${latest ?? 'newer'} of “${link.name}” was saved elsewhere first. Your changes are still on screen.`);
      return;
    }
    if (choice === 'copy') {
      const name = `${link.name} (copy)`;
      const answer = await createScenario({ scenario, name, note: note || `Copy of “${link.name}” version ${link.version} with unsaved changes`, author });
      this.settle(answer, name, scenario);
      return;
    }
    const stored = await getScenario(link.id);
    if (!stored.ok) {
      shell.errors.showMessage(stored.message, 'The latest version could not be opened');
      return;
    }
    // The edits become the held draft first, so opening the latest loses nothing.
    if (!shell.tracker.holdCurrent()) {
      shell.errors.showMessage('Your changes could not be kept as a draft in this browser, so the latest version was not opened over them. Save them as a new copy, or save the scenario as JSON first.', 'Latest version not opened');
      return;
    }
    const s = stored.value;
    await shell.open(s.scenario, { kind: 'stored', id: s.id, version: s.version.version, name: s.name }, s.version.fingerprint, false, `Opened “${s.name}” version ${s.version.version}, the latest. Your changes are kept as a draft: restore them from the banner above.`);
    shell.offerHeldDraft();
  }
}
