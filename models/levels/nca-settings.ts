/**
 * The scenario's `nca` section read against its observations: the terminal lines the user
 * fixes, each entry's instant read by the clock rule of observations
 * (models/scenario/instants.ts) and its subject and compartment checked against the levels.
 * Every problem names its JSON path. Which entry applies to a profile: the most specific one
 * that matches (subject and compartment, then subject, then compartment, then neither).
 */
import type { Model } from '../building/model.ts';
import { readInstant, type InstantReader } from '../scenario/instants.ts';
import type { Outcome, Problem } from '../scenario/problems.ts';
import { ncaRules, type Instant, type NcaSettingsLine } from '../scenario/schema.ts';
import { convertQuantity } from '../scenario/units.ts';
import type { NcaRule } from './nca.ts';

// The schema's rules and the core's NcaRule are one list: the check fails to compile if they part.
type Same<A, B> = [A] extends [B] ? ([B] extends [A] ? true : false) : false;
export const rulesAgree: Same<NcaRule, (typeof ncaRules)[number]> = true;

/** One entry of nca.terminal (or the command line's --terminal-from) as read. */
export interface TerminalChoice {
  /** Where it was written: "nca.terminal[0]", or "--terminal-from". */
  path: string;
  /** The instant the line starts at, in the scenario's time unit; null for "automatic". */
  from: number | null;
  subject: string | null;
  compartment: string | null;
}

/** The section as the analysis uses it (nca.rule is taken as written: the schema has checked it). */
export interface NcaSettings {
  terminal: TerminalChoice[];
}

/** The word that undoes a wider entry for the profiles a narrower one names. */
export const AUTOMATIC = 'automatic';

const isAutomatic = (q: Instant) => typeof q === 'string' && q.trim().toLowerCase() === AUTOMATIC;

/** Reads one instant at `path` by the scenario's clock, as an observation's time is read. */
export function readTerminalFrom(q: Instant, path: string, model: Model, problems: Problem[]): number | null {
  if (isAutomatic(q)) return null;
  const reader: InstantReader = {
    units: model.units,
    fail: (at, message) => problems.push({ path: at, message }),
    read: (value, dimension, at) => {
      if (value === undefined) return null;
      const c = convertQuantity(value, dimension, model.units);
      if (c.ok) return c.value;
      problems.push({ path: at, message: `${c.message}; write a time such as "96 h", a date-time such as "2026-03-08T08:00", or "${AUTOMATIC}"` });
      return null;
    },
  };
  return readInstant(q, path, model.clock, reader);
}

/** How closely an entry names a profile: subject and compartment 3, subject 2, compartment 1, neither 0. */
export function specificity(c: Pick<TerminalChoice, 'subject' | 'compartment'>): number {
  return (c.subject !== null ? 2 : 0) + (c.compartment !== null ? 1 : 0);
}

/** The entry that applies to the profile of `subject` in `compartment`: the most specific that matches, or null. */
export function choiceFor(terminal: readonly TerminalChoice[], subject: string | null, compartment: string): TerminalChoice | null {
  let best: TerminalChoice | null = null;
  for (const c of terminal) {
    if (c.subject !== null && c.subject !== subject) continue;
    if (c.compartment !== null && c.compartment !== compartment) continue;
    if (best === null || specificity(c) > specificity(best)) best = c;
  }
  return best;
}

const listed = (names: Iterable<string>) => [...names].map((n) => `'${n}'`).join(', ');

/** The section read, or every problem with its path. `terminalFrom` (the command line's) replaces nca.terminal with one entry for every profile. */
export function readNcaSettings(section: NcaSettingsLine | undefined, model: Model, terminalFrom?: { from: Instant; path: string }): Outcome<NcaSettings> {
  const problems: Problem[] = [];
  const subjects = new Set(model.observations.flatMap((o) => (o.subject !== null ? [o.subject] : [])));
  const compartments = new Set(model.observations.map((o) => o.compartment));
  const pairs = new Set(model.observations.map((o) => `${o.subject ?? ''}\u0000${o.compartment}`));
  const terminal: TerminalChoice[] = [];
  if (terminalFrom !== undefined) {
    const from = readTerminalFrom(terminalFrom.from, terminalFrom.path, model, problems);
    if (problems.length === 0) terminal.push({ path: terminalFrom.path, from, subject: null, compartment: null });
  } else {
    (section?.terminal ?? []).forEach((entry, i) => {
      const path = `nca.terminal[${i}]`;
      const before = problems.length;
      const subject = entry.subject ?? null;
      const compartment = entry.compartment ?? null;
      if (subject !== null && !subjects.has(subject)) {
        problems.push({ path: `${path}.subject`, message: subjects.size > 0 ? `no observation is of subject '${subject}' (the subjects are ${listed(subjects)})` : `no observation names a subject; leave \`subject\` out to fix the line of every profile` });
      }
      if (compartment !== null && !compartments.has(compartment)) {
        problems.push({ path: `${path}.compartment`, message: `no level was measured in '${compartment}' (levels are in ${listed(compartments)})` });
      }
      if (problems.length === before && subject !== null && compartment !== null && !pairs.has(`${subject}\u0000${compartment}`)) {
        problems.push({ path, message: `subject '${subject}' has no levels in '${compartment}'` });
      }
      const from = readTerminalFrom(entry.from, `${path}.from`, model, problems);
      if (problems.length > before) return;
      // Two entries equally specific overlap only when they name the same profiles: which one applies would be a guess.
      const twin = terminal.find((c) => c.subject === subject && c.compartment === compartment);
      if (twin) {
        problems.push({ path, message: `names the same profiles as ${twin.path}; give each subject and compartment once` });
        return;
      }
      terminal.push({ path, from, subject, compartment });
    });
  }
  if (problems.length > 0) return { ok: false, problems };
  return { ok: true, value: { terminal } };
}
