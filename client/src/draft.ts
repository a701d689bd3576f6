/**
 * Nothing typed is lost: the scenario on screen is compared with what it was opened from (or
 * last saved as) by fingerprint, and while it differs it is kept in localStorage as a draft,
 * with the time and its origin. On start a kept draft that differs from what the page opens is
 * offered back (Restore / Discard); it is never dropped without the user choosing. Work the page
 * holds beside the scenario, not in it (the covariate source set aside), is kept in the same
 * draft and given back with it.
 */
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import { h } from './dom.ts';
import type { ScenarioDoc, ScenarioStore } from './store.ts';

/** Where the scenario on screen came from; a stored one keeps its id, version and name. */
export type Origin =
  | { kind: 'sample'; id: string }
  | { kind: 'file'; name: string }
  | { kind: 'stored'; id: number; version: number; name: string }
  | { kind: 'new' };

export interface Draft {
  scenario: ScenarioDoc;
  /** ISO 8601 UTC, when the draft was written. */
  keptAt: string;
  origin: Origin;
  /** Fingerprint of what the draft was edited from, so a restored draft is still "unsaved". */
  baseFingerprint: string;
  /** What the page kept beside the scenario, by keeper name (see KeptBeside); absent when nothing. */
  beside?: Record<string, unknown>;
}

/**
 * Work a part of the page keeps beside the scenario (never sent, saved or exported with it),
 * written into the draft with the scenario so a restored draft brings it back.
 */
export interface KeptBeside {
  /** What to keep now (JSON); undefined when there is nothing. */
  read(): unknown;
  /** Gives back what the restored draft held (undefined when it held nothing), after the scenario is on screen. */
  restore(value: unknown): void;
  /** The keeper calls `listener` when what it holds changes without a change to the scenario. */
  onChange(listener: () => void): void;
}

export const draftKey = 'tidemark.draft';

/**
 * The browser's localStorage; where it is switched off (reading it throws), a stand-in that
 * keeps nothing and refuses writes, so the page says once that no draft is kept.
 */
export function browserStorage(): Storage {
  try {
    const s = window.localStorage;
    s.getItem(draftKey);
    return s;
  } catch {
    const refuse = () => {
      throw new DOMException('storage is switched off', 'SecurityError');
    };
    return { length: 0, clear: () => undefined, getItem: () => null, key: () => null, removeItem: () => undefined, setItem: refuse };
  }
}

const writeDelayMs = 400;

function isOrigin(v: unknown): v is Origin {
  if (typeof v !== 'object' || v === null) return false;
  const o = v as Record<string, unknown>;
  switch (o.kind) {
    case 'sample':
      return typeof o.id === 'string';
    case 'file':
      return typeof o.name === 'string';
    case 'stored':
      return Number.isInteger(o.id) && Number.isInteger(o.version) && typeof o.name === 'string';
    case 'new':
      return true;
    default:
      return false;
  }
}

/** The kept draft, or null when there is none or it cannot be read (a draft of another page version, say). */
export function readDraft(storage: Storage): Draft | null {
  let text: string | null;
  try {
    text = storage.getItem(draftKey);
  } catch {
    return null;
  }
  if (text === null) return null;
  try {
    const d = JSON.parse(text) as Partial<Draft>;
    if (typeof d.scenario !== 'object' || d.scenario === null || Array.isArray(d.scenario)) return null;
    if (typeof d.keptAt !== 'string' || typeof d.baseFingerprint !== 'string' || !isOrigin(d.origin)) return null;
    // Kept work beside the scenario that cannot be read is dropped; the scenario itself is not.
    if (d.beside !== undefined && (typeof d.beside !== 'object' || d.beside === null || Array.isArray(d.beside))) delete d.beside;
    return d as Draft;
  } catch {
    return null;
  }
}

/** "from the sample brennock-oral-bid", "from the file x.json", "based on “Name” version 3". */
export function describeOrigin(origin: Origin): string {
  switch (origin.kind) {
    case 'sample':
      return `opened from the sample “${origin.id}”`;
    case 'file':
      return `opened from the file “${origin.name}”`;
    case 'stored':
      return `based on “${origin.name}” version ${origin.version} in the library`;
    case 'new':
      return 'started as a new model';
  }
}

export function localDateTime(iso: string): string {
  const d = new Date(iso);
  return Number.isNaN(d.getTime()) ? iso : d.toLocaleString(undefined, { dateStyle: 'medium', timeStyle: 'short' });
}

export type WorkListener = () => void;

/**
 * Tracks the scenario on screen against its origin and keeps the draft. While a kept draft from
 * an earlier visit waits for the user's choice (`held`), nothing is written over it.
 */
export class WorkTracker {
  origin: Origin = { kind: 'new' };
  private baseFingerprint = '';
  private timer: ReturnType<typeof setTimeout> | null = null;
  private quotaReported = false;
  private listeners = new Set<WorkListener>();
  private keepers = new Map<string, KeptBeside>();
  private dirtyCache: { revision: number; dirty: boolean } | null = null;
  /** A draft from before that the user has not yet restored or discarded. */
  held: Draft | null = null;

  constructor(
    private readonly store: ScenarioStore,
    private readonly storage: Storage,
    private readonly announce: (message: string) => void,
  ) {
    store.subscribe(() => this.writeSoon());
    addEventListener('pagehide', () => this.flush());
  }

  onChange(fn: WorkListener): void {
    this.listeners.add(fn);
  }

  /** Keeps `keeper`'s work in the draft under `name`, written whenever it changes. */
  keepBeside(name: string, keeper: KeptBeside): void {
    this.keepers.set(name, keeper);
    keeper.onChange(() => this.writeSoon());
  }

  /** Gives each keeper back what the restored `draft` held for it; call once the draft's scenario is on screen. */
  restoreBeside(draft: Draft): void {
    for (const [name, keeper] of this.keepers) keeper.restore(draft.beside?.[name]);
  }

  /** The stored scenario and version the screen is linked to, or null. */
  get stored(): Extract<Origin, { kind: 'stored' }> | null {
    return this.origin.kind === 'stored' ? this.origin : null;
  }

  /** The fingerprint of what the scenario on screen is compared with. */
  get base(): string {
    return this.baseFingerprint;
  }

  /** True when the scenario on screen differs from the saved version or, if never stored, from what was opened. */
  isDirty(): boolean {
    if (this.dirtyCache?.revision === this.store.revision) return this.dirtyCache.dirty;
    const dirty = scenarioFingerprint(this.store.scenario) !== this.baseFingerprint;
    this.dirtyCache = { revision: this.store.revision, dirty };
    return dirty;
  }

  /**
   * A scenario was put on screen from `origin`; `base` is the fingerprint it is compared with
   * (default: its own, so it starts clean; an older version opened on top of the latest passes
   * the latest's). Call after `store.replace`.
   */
  opened(origin: Origin, base?: string): void {
    this.origin = origin;
    this.baseFingerprint = base ?? scenarioFingerprint(this.store.scenario);
    this.dirtyCache = null;
    this.flush();
  }

  /** The scenario on screen was saved as this version: it is clean again and its draft goes. */
  saved(origin: Extract<Origin, { kind: 'stored' }>, fingerprint: string): void {
    this.opened(origin, fingerprint);
  }

  /** Keeps the scenario on screen as the held draft (before opening something over it), so the user can restore it later; false when storage refused it. */
  holdCurrent(): boolean {
    const draft = this.current();
    if (!this.write(draft)) return false;
    this.held = draft;
    return true;
  }

  /** The user restored or discarded the held draft; writing resumes. */
  release(discard: boolean): void {
    if (discard) this.remove();
    this.held = null;
    this.flush();
  }

  /** Writes the draft (or removes it when the screen is clean) after the user pauses. */
  writeSoon(): void {
    if (this.timer !== null) clearTimeout(this.timer);
    this.timer = setTimeout(() => this.flush(), writeDelayMs);
  }

  /** Writes now: pagehide, and after open or save. */
  flush(): void {
    if (this.timer !== null) clearTimeout(this.timer);
    this.timer = null;
    if (this.held === null) {
      if (this.isDirty()) this.write(this.current());
      else this.remove();
    }
    for (const fn of this.listeners) fn();
  }

  private current(): Draft {
    const draft: Draft = { scenario: this.store.scenario, keptAt: new Date().toISOString(), origin: this.origin, baseFingerprint: this.baseFingerprint };
    const beside = [...this.keepers].map(([name, keeper]) => [name, keeper.read()] as const).filter(([, value]) => value !== undefined);
    if (beside.length > 0) draft.beside = Object.fromEntries(beside);
    return draft;
  }

  private write(draft: Draft): boolean {
    try {
      this.storage.setItem(draftKey, JSON.stringify(draft));
      return true;
    } catch {
      // Full storage (or storage switched off) must not break editing: say so once.
      if (!this.quotaReported) {
        this.quotaReported = true;
        this.announce('This browser would not keep a draft of the scenario (its storage is full or switched off). Save to the library or as JSON to keep your work.');
      }
      return false;
    }
  }

  private remove(): void {
    try {
      this.storage.removeItem(draftKey);
    } catch {
      // Nothing kept, nothing to remove.
    }
  }
}

export interface DraftBannerActions {
  restore(draft: Draft): void;
  discard(draft: Draft): void;
}

/** "Unsaved work from <date> (<title>) was kept. Restore it / Discard", in `host`. */
export function showDraftBanner(host: HTMLElement, draft: Draft, actions: DraftBannerActions): void {
  const title = typeof draft.scenario.title === 'string' && draft.scenario.title ? draft.scenario.title : 'untitled';
  const restore = h('button', { type: 'button', 'data-testid': 'draft-restore', class: 'primary' }, 'Restore it');
  const discard = h('button', { type: 'button', 'data-testid': 'draft-discard' }, 'Discard');
  const close = () => {
    host.replaceChildren();
    host.hidden = true;
  };
  restore.addEventListener('click', () => {
    close();
    actions.restore(draft);
  });
  discard.addEventListener('click', () => {
    close();
    actions.discard(draft);
  });
  host.replaceChildren(
    h(
      'p',
      { class: 'draft-text', 'data-testid': 'draft-text' },
      h('strong', {}, `Unsaved work from ${localDateTime(draft.keptAt)} (${title}) was kept.`),
      ` It was ${describeOrigin(draft.origin)}. `,
    ),
    h('div', { class: 'draft-actions' }, restore, discard),
  );
  // Shown without taking the focus: the page opened behind it is usable as it is.
  host.hidden = false;
}
