/**
 * Non-compartmental analysis of a scenario's measured levels: the model's observations grouped
 * by subject and compartment, each group one profile for ncaProfile, the dose taken from the
 * scenario's first dose line, then a summary over subjects per compartment (summariseNca).
 *
 * Rules, as stated to users:
 * - The dose is the first dose line's nominal amount (bioavailability is not applied: NCA does
 *   not know F, so an extravascular dose gives CL/F and Vz/F). Its route follows where it goes:
 *   into a compartment without a volume (a depot) → extravascular; an infusion into one with a
 *   volume → infusion with its duration; a bolus into one with a volume → intravascular. The
 *   dose time is when it is given (a lag is part of the absorption, as NCA sees it).
 * - A line given once: figures after that dose. A line that repeats (every, more than one
 *   dose): the steady-state figures over τ = its interval, for the last dosing interval that
 *   holds at least two levels (its pre-dose trough counted), else the last that holds one. A
 *   level drawn within a quarter of τ before that dose is its pre-dose trough (troughs are drawn
 *   shortly before a dose; the quarter is our rule); earlier levels are left out. Levels after
 *   the interval's end are used only after the line's last dose (the washout gives λz); before
 *   that they lie under the next dose and are left out. The levels cannot show that steady
 *   state was reached; a note says so.
 * - Levels below the limit are excluded from every figure and named by their path.
 * - The area rule: the caller's (command line --rule, ?rule=), else nca.rule, else linear up,
 *   log-linear down. The terminal line: by the best adjusted R², unless an entry of
 *   nca.terminal (the most specific that matches the profile; nca-settings.ts) fixes it "from
 *   T": then the levels at or after T after Cmax (terminal-from.ts), however few — fewer than 3
 *   are flagged, not refused, as for --terminal-from.
 * NCA figures describe the levels given; they are not dosing advice.
 */
import type { Model } from '../building/model.ts';
import { formatNumber } from '../result/format-number.ts';
import type { Outcome, Problem } from '../scenario/problems.ts';
import type { Instant, NcaSettingsLine } from '../scenario/schema.ts';
import { unitsPerHour } from '../scenario/instants.ts';
import { displayUnit } from '../scenario/units.ts';
import { clockLabel } from './clock.ts';
import { checkNcaInput, isPreDoseTime, ncaProfile, PRE_DOSE_SHARE, type NcaDose, type NcaResult, type NcaRoute, type NcaRule } from './nca.ts';
import { summariseNca, type NcaSummary } from './nca-summary.ts';
import { choiceFor, readNcaSettings } from './nca-settings.ts';
import type { Observation } from './observation.ts';
import { terminalPointsFrom } from './terminal-from.ts';

export const NCA_CAUTION = 'NCA figures describe the levels given; they are not dosing advice.';

// The pre-dose rule (a level within τ/4 before a dose is its trough) is the core's, shared with a levels file (nca.ts).
export { PRE_DOSE_SHARE };

export interface ScenarioNcaProfile {
  /** null when the observations name no subject. */
  subject: string | null;
  compartment: string;
  /** The dose these figures follow (time in the scenario's time unit), or null when the scenario has none. */
  dose: NcaDose | null;
  /** Which dose of the line, counted from 1; null without a dose. */
  doseNumber: number | null;
  /** τ for the steady-state figures; null for a single dose. */
  interval: number | null;
  /** The observations' paths, in the order of the profile's times (result indices refer to these). */
  paths: string[];
  /** Observations of this subject and compartment not used, with why. */
  leftOut: { path: string; reason: string }[];
  /**
   * The start of the terminal line when the user fixed it (result.terminal.chosenBy is then
   * 'fixed'): where (nca.terminal[i] or --terminal-from) and the instant, in the scenario's time
   * unit. null when the line is chosen by the best adjusted R².
   */
  terminalFixed: { path: string; from: number } | null;
  result: NcaResult;
}

export interface ScenarioNca {
  units: { time: string; concentration: string; amount: string };
  rule: NcaRule;
  /** The dose line used (index into doses), or null without doses. */
  doseLine: number | null;
  route: NcaRoute | null;
  profiles: ScenarioNcaProfile[];
  /** Over the profiles of the first compartment observed (usually the only one). */
  summary: NcaSummary;
  /** One summary over subjects per compartment observed, in order of first appearance. */
  summaries: { compartment: string; summary: NcaSummary }[];
  notes: string[];
}

/** The first dose line read as NCA sees it: nominal amount, route by where it goes, τ when it repeats. */
export function ncaDoseOf(model: Model): { line: number; amount: number; route: NcaRoute; duration: number; times: number[]; every: number | null } | null {
  const line = model.doseLines[0];
  if (!line) return null;
  const target = model.compartments[line.into];
  const route: NcaRoute = target.volume === null ? 'extravascular' : line.duration > 0 ? 'infusion' : 'intravascular';
  const times = model.administrations.filter((a) => a.line === line.line).map((a) => a.given).sort((a, b) => a - b);
  const every = line.every !== null && times.length > 1 ? line.every : null;
  return { line: line.line, amount: line.nominal, route, duration: line.duration, times, every };
}

/** Which dose of a repeated line the interval figures follow: the last whose interval holds ≥ 2 levels (pre-dose trough counted), else the last holding one. */
export function chooseInterval(doseTimes: readonly number[], tau: number, levelTimes: readonly number[], bolus: boolean): number | null {
  let lastOne: number | null = null;
  for (let k = doseTimes.length - 1; k >= 0; k--) {
    const g = doseTimes[k];
    const inside = levelTimes.filter((t) => (bolus ? t > g : t >= g) && t <= g + tau).length;
    const pre = levelTimes.some((t) => isPreDoseTime(t, g, tau, bolus)) ? 1 : 0;
    if (inside + pre >= 2) return k;
    if (inside >= 1 && lastOne === null) lastOne = k;
  }
  return lastOne;
}

const groupKey = (o: Observation) => `${o.subject ?? ''}\u0000${o.compartment}`;

export interface NcaOptions {
  /** The area rule asked for by the caller; it wins over nca.rule. */
  rule?: NcaRule;
  /** The scenario's `nca` section. */
  section?: NcaSettingsLine;
  /** The command line's --terminal-from: one start for every profile, in place of nca.terminal. */
  terminalFrom?: { from: Instant; path: string };
}

/** The profiles and summaries of the model's observations, or problems with paths for levels no profile can take and for a wrong `nca` section. */
export function ncaOfModel(model: Model, options: NcaOptions = {}): Outcome<ScenarioNca> {
  if (model.observations.length === 0) return { ok: false, problems: [{ path: 'observations', message: 'NCA needs measured levels; the scenario has none' }] };
  // A wrong section is reported with the levels' own problems, all at once.
  const settings = readNcaSettings(options.section, model, options.terminalFrom);
  const problems: Problem[] = settings.ok ? [] : [...settings.problems];
  const terminal = settings.ok ? settings.value.terminal : [];
  const rule = options.rule ?? options.section?.rule ?? 'linear-up-log-down';
  const groups = new Map<string, Observation[]>();
  for (const o of model.observations) {
    const list = groups.get(groupKey(o)) ?? [];
    list.push(o);
    groups.set(groupKey(o), list);
  }
  const dose = ncaDoseOf(model);
  const notes: string[] = [];
  if (!dose) notes.push('the scenario has no dose: areas start at time 0; no CL, Vz or MRT');
  else {
    notes.push(`the dose is doses[${dose.line}]: ${dose.amount} ${model.units.amount} nominal (bioavailability not applied), ${dose.route}${dose.route === 'infusion' ? ` over ${dose.duration} ${model.units.time}` : ''}`);
    if (model.doseLines.length > 1) notes.push(`only doses[${dose.line}] is counted; the other ${model.doseLines.length - 1} dose line${model.doseLines.length > 2 ? 's are' : ' is'} not, so figures that depend on the dose (CL, Vz) count that line alone`);
    if (dose.route === 'extravascular' && dose.duration > 0) notes.push('the dose enters a depot over a time; NCA treats it as extravascular and does not take the duration off MRT');
  }
  const bolus = dose?.route === 'intravascular';
  // An instant in words: elapsed time, and its clock time when the scenario has a clock.
  const perHour = unitsPerHour(model.units);
  const when = (t: number) => `${formatNumber(t)} ${model.units.time}${model.clock ? ` (${clockLabel(t / perHour, model.clock)})` : ''}`;
  const profiles: ScenarioNcaProfile[] = [];
  for (const list of groups.values()) {
    // Stable by time: the same time twice cannot be one profile.
    const sorted = [...list].sort((a, b) => a.time - b.time);
    let clash = false;
    for (let i = 1; i < sorted.length; i++) {
      if (sorted[i].time === sorted[i - 1].time) {
        clash = true;
        problems.push({ path: `${sorted[i].path}.time`, message: `${sorted[i].subject !== null ? `subject '${sorted[i].subject}' has` : 'there is'} a level in '${sorted[i].compartment}' at this time already (${sorted[i - 1].path}); NCA needs one level per time` });
      }
    }
    if (clash) continue;
    let doseTime = dose?.times[0] ?? 0;
    let doseNumber: number | null = dose ? 1 : null;
    let interval: number | null = null;
    let kept = sorted;
    const leftOut: { path: string; reason: string }[] = [];
    if (dose && dose.every !== null) {
      const tau = dose.every;
      const usable = sorted.filter((o) => !o.belowLimit && o.concentration !== null).map((o) => o.time);
      const k = chooseInterval(dose.times, tau, usable, bolus);
      if (k !== null) {
        doseTime = dose.times[k];
        doseNumber = k + 1;
        interval = tau;
        const last = k === dose.times.length - 1;
        const from = doseTime - PRE_DOSE_SHARE * tau;
        kept = [];
        for (const o of sorted) {
          if (o.time < from) leftOut.push({ path: o.path, reason: `before dose ${k + 1} at ${when(doseTime)} and more than a quarter of τ before it: not this interval's pre-dose trough` });
          else if (!last && o.time > doseTime + tau) leftOut.push({ path: o.path, reason: `after the interval of dose ${k + 1} ends (${when(doseTime + tau)}): under the next dose` });
          else kept.push(o);
        }
        // A level before the dose counts as the pre-dose trough only if it is the last one before it.
        const pre = kept.filter((o) => (bolus ? o.time <= doseTime : o.time < doseTime));
        for (const o of pre.slice(0, -1)) {
          leftOut.push({ path: o.path, reason: 'an earlier level than the pre-dose trough of the interval' });
          kept = kept.filter((x) => x !== o);
        }
      } else notes.push(`${profileName(sorted[0])}: no level inside any dosing interval of doses[${dose.line}], so no steady-state figures; figures after the first dose`);
    }
    const ncaDose: NcaDose | null = dose ? { amount: dose.amount, time: doseTime, route: dose.route, ...(dose.route === 'infusion' ? { duration: dose.duration } : {}) } : null;
    const input = {
      times: kept.map((o) => o.time),
      concentrations: kept.map((o) => o.concentration ?? 0),
      excluded: kept.flatMap((o, i) => (o.belowLimit || o.concentration === null ? [i] : [])),
      rule,
      ...(ncaDose ? { dose: ncaDose } : {}),
      ...(interval !== null ? { interval } : {}),
    };
    const wrong = checkNcaInput(input);
    if (wrong.length > 0) {
      problems.push(...wrong.map((w) => ({ path: 'observations', message: `${profileName(sorted[0])}: ${w}` })));
      continue;
    }
    const choice = choiceFor(terminal, sorted[0].subject, sorted[0].compartment);
    const terminalFixed = choice !== null && choice.from !== null ? { path: choice.path, from: choice.from } : null;
    const points = terminalFixed !== null ? terminalPointsFrom(input, terminalFixed.from) : null;
    const result = ncaProfile(points !== null ? { ...input, terminalPoints: points } : input);
    if (terminalFixed !== null && points !== null) fewPointsFlag(result, terminalFixed, points.map((i) => input.times[i]), model.units.time);
    // Excluded levels named by their paths rather than by their index.
    for (const e of result.excluded) {
      const i = result.flags.findIndex((f) => f.figure === 'levels' && f.message.startsWith(`the level at time ${e.time} `));
      if (i >= 0) result.flags[i] = { figure: 'levels', message: `${kept[e.index].path} (time ${e.time} ${model.units.time}) is below the limit: excluded from every figure` };
    }
    if (interval !== null && doseNumber !== null) result.flags.push({ figure: 'aucTau', message: `the interval after dose ${doseNumber} of ${dose?.times.length} is taken to be at steady state; the levels cannot show that it is` });
    profiles.push({ subject: sorted[0].subject, compartment: sorted[0].compartment, dose: ncaDose, doseNumber, interval, paths: kept.map((o) => o.path), leftOut, terminalFixed, result });
  }
  if (problems.length > 0) return { ok: false, problems };
  const compartments = [...new Set(profiles.map((p) => p.compartment))];
  const summaries = compartments.map((compartment) => ({
    compartment,
    summary: summariseNca(profiles.filter((p) => p.compartment === compartment).map((p) => ({ subject: p.subject ?? '', result: p.result }))),
  }));
  notes.push(NCA_CAUTION);
  return {
    ok: true,
    value: {
      units: { time: model.units.time, concentration: displayUnit('concentration', model.units), amount: model.units.amount },
      rule,
      doseLine: dose?.line ?? null,
      route: dose?.route ?? null,
      profiles,
      summary: summaries[0].summary,
      summaries,
      notes,
    },
  };
}

/**
 * A fixed line of fewer than 3 levels is flagged by the core in words about indices; the flag
 * is put in the user's words: where the start was written, the start, and the levels it leaves.
 */
function fewPointsFlag(result: NcaResult, fixed: { path: string; from: number }, times: number[], unit: string): void {
  if (times.length >= 3) return;
  const at = fixed.path.startsWith('nca.') ? `${fixed.path}.from` : fixed.path;
  const leaves = times.length === 0 ? 'no level' : `${times.length === 1 ? 'one level' : `${times.length} levels`} (at ${times.map(formatNumber).join(', ')} ${unit})`;
  const message = `${at} (${formatNumber(fixed.from)} ${unit}) leaves ${leaves} after Cmax for the terminal line; ${times.length < 2 ? 'a line needs at least 2, so there is no terminal rate' : 'at least 3 are usual'}`;
  const i = result.flags.findIndex((f) => f.figure === 'terminalRate' && (f.message.startsWith('no terminal rate: a line needs') || f.message.startsWith('the terminal line has only')));
  if (i >= 0) result.flags[i] = { figure: 'terminalRate', message };
  else result.flags.push({ figure: 'terminalRate', message });
}

function profileName(o: Observation): string {
  return `${o.subject !== null ? `subject '${o.subject}', ` : ''}compartment '${o.compartment}'`;
}
