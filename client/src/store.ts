/**
 * The scenario store: the scenario object is the single source of truth. Form fields
 * write into it by JSON path; fields the form does not show (description, labels,
 * output.times, solver.maxSteps, anything else) are never touched, so a file saved
 * after editing holds everything the opened one did.
 */
import type { ScenarioInput } from '../../models/scenario/schema.ts';
import { defaultUnits, type UnitSet } from './quantity.ts';

type Loose<T> = { [K in keyof T]?: T[K] } & { [extra: string]: unknown };

export type CompartmentDoc = Loose<ScenarioInput['compartments'][number]>;
export type TransferDoc = Loose<NonNullable<ScenarioInput['transfers']>[number]>;
export type DoseDoc = Loose<NonNullable<ScenarioInput['doses']>[number]>;
export type ThresholdDoc = Loose<NonNullable<ScenarioInput['output']['thresholds']>[number]>;
export type OutputDoc = Loose<Omit<ScenarioInput['output'], 'thresholds'>> & { thresholds?: ThresholdDoc[] };
export type SolverDoc = Loose<NonNullable<ScenarioInput['solver']>>;

export interface ScenarioDoc {
  title?: string;
  description?: string;
  units?: Partial<UnitSet>;
  compartments?: CompartmentDoc[];
  transfers?: TransferDoc[];
  doses?: DoseDoc[];
  output?: OutputDoc;
  solver?: SolverDoc;
  [extra: string]: unknown;
}

/** What changed: a whole new scenario, rows added or removed (paths shift), or one value. */
export type ChangeKind = 'replaced' | 'structure' | 'value';
export type Listener = (kind: ChangeKind, path: string | null) => void;

export type PathToken = string | number;

/** "doses[0].amount" → ['doses', 0, 'amount']. */
export function parsePath(path: string): PathToken[] {
  const tokens: PathToken[] = [];
  const re = /([^.[\]]+)|\[(\d+)\]/g;
  let m: RegExpExecArray | null;
  while ((m = re.exec(path)) !== null) tokens.push(m[2] !== undefined ? Number(m[2]) : m[1]);
  return tokens;
}

function isContainer(v: unknown): v is Record<string | number, unknown> {
  return typeof v === 'object' && v !== null;
}

export function getAt(root: unknown, path: string): unknown {
  let cur: unknown = root;
  for (const t of parsePath(path)) {
    if (!isContainer(cur)) return undefined;
    cur = cur[t];
  }
  return cur;
}

/** Writes a value at a path, creating objects and arrays on the way; undefined deletes the key. */
export function setAt(root: Record<string, unknown>, path: string, value: unknown): void {
  const tokens = parsePath(path);
  let cur: Record<string | number, unknown> = root;
  for (let i = 0; i < tokens.length - 1; i++) {
    const t = tokens[i];
    let next = cur[t];
    if (!isContainer(next)) {
      if (value === undefined) return;
      next = typeof tokens[i + 1] === 'number' ? [] : {};
      cur[t] = next;
    }
    cur = next as Record<string | number, unknown>;
  }
  const last = tokens[tokens.length - 1];
  if (value === undefined) {
    if (Array.isArray(cur)) cur[last as number] = undefined;
    else delete cur[last];
  } else {
    cur[last] = value;
  }
}

export function emptyScenario(): ScenarioDoc {
  return {
    title: 'New scenario',
    units: { ...defaultUnits },
    compartments: [],
    transfers: [],
    doses: [],
    // Every time in the scenario's time unit (hours): a step in minutes beside hours invited
    // "0.1" meant as hours and read as minutes.
    output: { end: '24 h', step: '0.25 h', thresholds: [] },
  };
}

export class ScenarioStore {
  private doc: ScenarioDoc = emptyScenario();
  private listeners = new Set<Listener>();
  /** Increases with every change; a result remembers the revision it was computed from. */
  revision = 0;

  get scenario(): ScenarioDoc {
    return this.doc;
  }

  /** The scenario's unit system with defaults filled in (for display only; nothing is written). */
  get units(): UnitSet {
    const u = this.doc.units ?? {};
    return {
      amount: typeof u.amount === 'string' && u.amount ? u.amount : defaultUnits.amount,
      volume: typeof u.volume === 'string' && u.volume ? u.volume : defaultUnits.volume,
      time: typeof u.time === 'string' && u.time ? u.time : defaultUnits.time,
    };
  }

  get compartments(): CompartmentDoc[] {
    return Array.isArray(this.doc.compartments) ? this.doc.compartments : [];
  }
  get transfers(): TransferDoc[] {
    return Array.isArray(this.doc.transfers) ? this.doc.transfers : [];
  }
  get doses(): DoseDoc[] {
    return Array.isArray(this.doc.doses) ? this.doc.doses : [];
  }
  get thresholds(): ThresholdDoc[] {
    const t = this.doc.output?.thresholds;
    return Array.isArray(t) ? t : [];
  }

  /** Ids of the compartments, in order (entries without a string id are skipped). */
  compartmentIds(): string[] {
    return this.compartments.map((c) => c.id).filter((id): id is string => typeof id === 'string' && id !== '');
  }

  get(path: string): unknown {
    return getAt(this.doc, path);
  }

  /** One field changed; paths stay where they are. */
  set(path: string, value: unknown): void {
    setAt(this.doc, path, value);
    this.emit('value', path);
  }

  /** Rows were added or removed by the caller (through `mutate`); every path after them shifts. */
  mutate(change: (doc: ScenarioDoc) => void): void {
    change(this.doc);
    this.emit('structure', null);
  }

  replace(doc: ScenarioDoc): void {
    this.doc = doc;
    this.emit('replaced', null);
  }

  /** Makes sure a list exists before rows are added to it. */
  list<K extends 'compartments' | 'transfers' | 'doses'>(key: K): NonNullable<ScenarioDoc[K]> {
    if (!Array.isArray(this.doc[key])) this.doc[key] = [];
    return this.doc[key] as NonNullable<ScenarioDoc[K]>;
  }

  thresholdList(): ThresholdDoc[] {
    if (typeof this.doc.output !== 'object' || this.doc.output === null) this.doc.output = { end: '24 h' };
    const out = this.doc.output;
    if (!Array.isArray(out.thresholds)) out.thresholds = [];
    return out.thresholds;
  }

  subscribe(fn: Listener): void {
    this.listeners.add(fn);
  }

  private emit(kind: ChangeKind, path: string | null): void {
    this.revision++;
    for (const fn of this.listeners) fn(kind, path);
  }
}

/** Checks that an opened file can be shown in the form; the server judges everything else. */
export function formProblem(value: unknown): string | null {
  if (typeof value !== 'object' || value === null || Array.isArray(value)) return 'the file does not hold a scenario object';
  const v = value as Record<string, unknown>;
  for (const key of ['compartments', 'transfers', 'doses'] as const) {
    const list = v[key];
    if (list === undefined) continue;
    if (!Array.isArray(list)) return `“${key}” must be a list`;
    if (list.some((row) => typeof row !== 'object' || row === null || Array.isArray(row))) return `every entry of “${key}” must be an object`;
  }
  const out = v.output;
  if (out !== undefined && (typeof out !== 'object' || out === null || Array.isArray(out))) return '“output” must be an object';
  if (out !== undefined) {
    const th = (out as Record<string, unknown>).thresholds;
    if (th !== undefined && (!Array.isArray(th) || th.some((row) => typeof row !== 'object' || row === null))) return '“output.thresholds” must be a list of objects';
  }
  for (const key of ['units', 'solver'] as const) {
    const o = v[key];
    if (o !== undefined && (typeof o !== 'object' || o === null || Array.isArray(o))) return `“${key}” must be an object`;
  }
  return null;
}
