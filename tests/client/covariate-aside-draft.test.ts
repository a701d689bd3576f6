// The covariate source set aside (population-table.ts), with the units of columns that hold no number yet, is kept in the page's draft of unsaved
// work (draft.ts) beside the scenario, so a reload that restores the work restores it too; what
// cannot be read back is dropped without losing the scenario (common practice for drafts).
import { afterEach, describe, expect, it, vi } from 'vitest';
import { draftKey, readDraft, WorkTracker } from '../../client/src/draft.ts';
import { covariateTableKept, forgetCovariateTable } from '../../client/src/population-table.ts';
import { ScenarioStore } from '../../client/src/store.ts';

/** localStorage as a Map, as a browser holds it between visits. */
function memoryStorage(): Storage {
  const m = new Map<string, string>();
  return {
    get length() {
      return m.size;
    },
    clear: () => m.clear(),
    getItem: (k) => m.get(k) ?? null,
    key: (i) => [...m.keys()][i] ?? null,
    removeItem: (k) => void m.delete(k),
    setItem: (k, v) => void m.set(k, String(v)),
  };
}

const distributions = { weight: { distribution: 'normal', mean: '72 kg', sd: '12 kg' } };

/** One visit of the page: a store, a tracker on the shared storage, the covariate keeper registered. */
function visit(storage: Storage) {
  const store = new ScenarioStore();
  const tracker = new WorkTracker(store, storage, () => undefined);
  const rerender = vi.fn();
  const kept = covariateTableKept(rerender);
  tracker.keepBeside('covariateTable', kept);
  return { store, tracker, kept, rerender };
}

describe('the set-aside covariate source in the draft', () => {
  afterEach(() => {
    forgetCovariateTable();
    vi.unstubAllGlobals();
  });

  it('is written with the unsaved scenario and comes back when the draft is restored after a reload', () => {
    // The tracker listens for pagehide; node has no window to listen on.
    vi.stubGlobal('addEventListener', () => undefined);
    const storage = memoryStorage();
    const first = visit(storage);
    first.tracker.opened({ kind: 'new' });
    first.store.replace({ title: 'Edited', population: { subjects: 10, covariateTable: { rows: [{ weight: '64 kg' }] } } });
    first.kept.restore({ aside: { distributions }, units: { weight: 'kg' } });
    first.tracker.flush();
    expect(readDraft(storage)?.beside).toEqual({ covariateTable: { aside: { distributions }, units: { weight: 'kg' } } });

    // The reload: the page's memory is gone; the draft is read and restored.
    forgetCovariateTable();
    const second = visit(storage);
    expect(second.kept.read()).toBeUndefined();
    const draft = readDraft(storage);
    expect(draft).not.toBeNull();
    second.store.replace(structuredClone(draft!.scenario));
    second.tracker.restoreBeside(draft!);
    expect(second.kept.read()).toEqual({ aside: { distributions }, units: { weight: 'kg' } });
    expect(second.rerender).toHaveBeenCalledTimes(1);
    second.tracker.flush();
    expect(readDraft(storage)?.beside).toEqual({ covariateTable: { aside: { distributions }, units: { weight: 'kg' } } });
  });

  it('drops what cannot be read back, and writes nothing beside the scenario when nothing is set aside', () => {
    vi.stubGlobal('addEventListener', () => undefined);
    const storage = memoryStorage();
    storage.setItem(draftKey, JSON.stringify({ scenario: { title: 'x' }, keptAt: '2026-12-02T20:00:00Z', origin: { kind: 'new' }, baseFingerprint: 'f', beside: ['not', 'an', 'object'] }));
    expect(readDraft(storage)).toEqual({ scenario: { title: 'x' }, keptAt: '2026-12-02T20:00:00Z', origin: { kind: 'new' }, baseFingerprint: 'f' });

    const page = visit(storage);
    page.kept.restore({ aside: { distributions: 'a string, not distributions', table: { rows: [{ weight: '70 kg' }] } }, units: { weight: 3, height: 'cm' } });
    expect(page.kept.read()).toEqual({ aside: { table: { rows: [{ weight: '70 kg' }] } }, units: { height: 'cm' } });
    forgetCovariateTable();
    page.tracker.opened({ kind: 'new' });
    page.store.replace({ title: 'Changed' });
    page.tracker.flush();
    expect(readDraft(storage)?.scenario).toEqual({ title: 'Changed' });
    expect(readDraft(storage)?.beside).toBeUndefined();
  });
});
