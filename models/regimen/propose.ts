/**
 * Regimen proposals: every (amount, interval, duration) of the `propose` block on the scenario's
 * model (typical, or the subject's when a subject is given), its steady state and figures, the
 * targets it meets, the time to the window from empty, an optional loading dose, ranked.
 *
 * Linear models on the exact path: the state is linear in the doses, so the steady state (and
 * every interval from empty) of amount A is A times that of a unit dose — exact, not an
 * approximation — and one unit-dose solve per (interval, duration) serves every amount; the
 * shares of the interval in a window are read with the window's levels divided by A. Saturable
 * models: the steady state is not proportional to the dose, so each regimen gets its own search.
 */
import type { Model } from '../building/model.ts';
import { CompartmentSystem } from '../building/system.ts';
import { steadyStateFigures, type SteadyStateCompartment } from '../figures/steady-state.ts';
import type { ReadTarget } from '../population/targets.ts';
import { formatNumber } from '../result/format-number.ts';
import { unitsPerHour } from '../scenario/instants.ts';
import { normaliseScenario, parseScenario } from '../scenario/normalize.ts';
import type { Outcome } from '../scenario/problems.ts';
import { limits } from '../scenario/limits.ts';
import { displayUnit } from '../scenario/units.ts';
import { emptyStats, IntegrationFailure, type SolverStats } from '../solving/numerics/ode-system.ts';
import { choosePath } from '../solving/solve.ts';
import { walkIntervals } from './approach-run.ts';
import { bisectLoading, closedFormLoading, firstIntervalNote } from './loading.ts';
import { compareProposals, logDistance, RANKING_RULE, troughWindow } from './rank.ts';
import { steadyModel, type RegimenSpec } from './regimen-model.ts';
import { readPropose, type ProposeSettings } from './settings.ts';
import { roundingGap, roundToAvailable } from './strengths.ts';
import { targetsMet, targetThresholds, targetValues, type ExposureRead } from './target-values.ts';
import { TIME_TO_WINDOW_DEFINITION, windowTime } from './window-time.ts';

export const PROPOSAL_CAUTION =
  "Proposals are model outputs for a clinician's review, not recommendations; follow local protocols, the product labelling and licensed practice.";

export interface SteadyStateSummary {
  /** In the compartment of the first target. */
  trough: number;
  peak: number;
  auc24: number;
  cavg: number;
  /** The share of the interval above the first `above` target's level. */
  shareAbove?: number;
  /** The share of the interval within the first `window` target's window. */
  shareInWindow?: number;
}

/** A loading dose's amount alone: what the population basis gives every subject (each subject's first interval is judged there). */
export interface LoadingAmount {
  /** Rounded onto the strengths' sums. */
  amount: number;
  /** Before rounding. */
  computed: number;
  method: 'closed form' | 'bisection';
  /** Set when the sums cannot come within one rounding step of the computed amount (strengths.ts's roundingGap), saying so. */
  note: string | null;
  /**
   * The amount aimed at the steady-state trough when it was lowered because its own first
   * interval broke an upper bound (a peak ceiling, say) and a smaller sum of strengths, still
   * above the maintenance dose, keeps every upper bound there; null when not lowered.
   */
  loweredFrom: number | null;
}

export interface LoadingDose extends LoadingAmount {
  /** The first trough with the rounded amount, simulated (compartment of the first target). */
  firstTrough: number;
  /** Whether the first interval's trough meets the trough targets (the loading dose's aim). */
  firstTroughMet: boolean;
  /** Whether the first interval meets every target (a peak ceiling may fail just after a loading dose). */
  firstIntervalMet: boolean;
  /** Each target's figure in the first interval after the loading dose (as targetValues: a share for above and window targets). */
  firstInterval: number[];
  /** Each target met or not in that first interval. */
  firstIntervalTargetsMet: boolean[];
  timeToWindow: number | null;
  intervalsToWindow: number | null;
}

/** Smaller sums of strengths tried for a loading dose that breaks an upper bound (each one simulated interval by interval from empty). */
const LOWER_LOADING_TRIES = 20;

export interface Proposal {
  amount: number;
  interval: number;
  duration: number;
  /** Typical basis: the loading dose, simulated; population basis: its amount only (the typical subject's time to the window would read as the population's). */
  loading: LoadingDose | LoadingAmount | null;
  steadyState: SteadyStateSummary | null;
  /** Each target's figure at steady state (a share for above and window targets). */
  targetValues: number[];
  targetsMet: boolean[];
  allMet: boolean;
  timeToWindow: number | null;
  intervalsToWindow: number | null;
  dosesPerDay: number;
  dailyAmount: number;
  /** |ln(trough / middle of the trough window)|, the ranking's second key; null without one. */
  troughDistance: number | null;
  /** Why a regimen has no steady state or no time, when it has none. */
  note: string | null;
  /** 1 is the best. */
  rank: number;
  /**
   * With propose.basis "population" only: the regimen over the virtual subjects. Then
   * steadyState holds the medians over the subjects with a steady state, targetValues each
   * target's share of subjects, targetsMet whether at least half attain each, allMet whether at
   * least half attain all of them, timeToWindow and intervalsToWindow the medians over every
   * subject (null when more than half never reach the window), and loading the typical
   * subject's loading dose, given to every subject (its first interval: population.approach).
   */
  population?: PopulationRow;
}

/** The 5th, 50th and 95th percentiles of a figure over the subjects with a steady state. */
export interface PercentileSpread {
  p5: number;
  p50: number;
  p95: number;
}

export interface ShareOfSubjects {
  probability: number;
  /** Monte Carlo (binomial) standard error √(p(1 − p)/N). */
  standardError: number;
  attained: number;
}

export interface PopulationRow {
  /** Subjects meeting every target at once (the ranking's first key). */
  joint: ShareOfSubjects;
  /** Each target's share, in the order of `targets`. */
  targets: ShareOfSubjects[];
  /** Steady-state trough and peak in the compartment of the first target. */
  trough: PercentileSpread;
  peak: PercentileSpread;
  /** Subjects without a steady state for this regimen: left out of the percentiles, counted as not attaining. */
  undetermined: number;
  /** Regimens in one tier are within 2 standard errors of its leader's joint share (population-rank.ts). */
  tier: number;
  /** Every subject from empty: the time to the window, the first intervals, the loading dose's first interval. */
  approach: PopulationApproach;
}

/** Percentiles over every subject, those never reaching the window sorted last; null where one falls among them. */
export interface TimeSpread {
  p5: number | null;
  p50: number | null;
  p95: number | null;
}

export interface PopulationApproach {
  /** Time from the first dose to the window (population-approach.ts's rule), in the model's time unit. */
  timeToWindow: TimeSpread;
  /** Subjects reaching the window; the others by reason (each counted, none dropped). */
  reached: number;
  neverReached: { steadyStateMisses: number; noSteadyState: number; onlyAtSteadyState: number; failed: number };
  /** The share meeting every target in each of the first dosing intervals from empty (interval 1 first). */
  byInterval: ShareOfSubjects[];
  /** The first interval from empty: every target met without and with the loading dose (null when none was chosen). */
  firstInterval: { without: ShareOfSubjects; withLoading: ShareOfSubjects | null };
}

export interface PopulationBasis {
  subjects: number;
  seed: number;
  /** Subjects × regimens, each a steady-state search (or solve) of its own. */
  runs: number;
  limits: { subjects: number; runs: number };
  /** How the loading dose is chosen and judged, when one was asked for. */
  loading: string | null;
  /** How the time to the window is found for each subject and summarised. */
  timeToWindow: string;
  percentileRule: string;
  /** Population figures describe a model population, not a patient. */
  caution: string;
}

export interface ProposeResult {
  title: string;
  units: { amount: string; time: string; concentration: string; auc: string };
  /** The targets in words, in order (targetsMet[i] answers targets[i]). */
  targets: string[];
  proposals: Proposal[];
  searched: {
    amounts: number;
    intervals: number;
    durations: number;
    regimens: number;
    /** Steady-state solves (one per (interval, duration) for a linear model, one per regimen otherwise). */
    steadyStateSolves: number;
    /** Dosing intervals simulated from empty (times to the window, loading doses). */
    intervalsSimulated: number;
    method: 'unit dose scaled (linear)' | 'per regimen (saturable or numerical)' | 'per subject and regimen (population, common random numbers)';
  };
  rankingRule: string;
  timeToWindowDefinition: string;
  caution: string;
  /** With propose.basis "population" only: the population the regimens were judged on. */
  population?: PopulationBasis;
}

interface Context {
  base: Model;
  system: CompartmentSystem;
  settings: ProposeSettings;
  stats: SolverStats;
  day: number;
  counts: { steady: number; intervals: number };
}

/** Scenario JSON in; the ranked proposals or every problem with its path out. Never throws for bad input. */
export function proposeRegimens(input: unknown): Outcome<ProposeResult> {
  const parsed = parseScenario(input);
  if (!parsed.ok) return parsed;
  const model = normaliseScenario(parsed.value);
  if (!model.ok) return model;
  const read = readPropose(parsed.value, model.value);
  if (!read.ok) return read;
  const base = model.value;
  const settings = read.value;
  const cx: Context = { base, system: new CompartmentSystem(base), settings, stats: emptyStats(), day: 24 * unitsPerHour(base.units), counts: { steady: 0, intervals: 0 } };
  const scaled = base.linear && choosePath(base) === 'exact';
  const proposals: Proposal[] = [];
  for (const duration of settings.durations) {
    for (const interval of settings.intervals) {
      const specs = settings.amounts.map((amount): RegimenSpec => ({ amount, interval, duration }));
      if (scaled) proposals.push(...linearProposals(cx, specs));
      else for (const spec of specs) proposals.push(saturableProposal(cx, spec));
    }
  }
  for (const p of proposals) if (p.allMet && settings.loading) withLoading(cx, p);
  proposals.sort((a, b) => compareProposals({ ...a, distance: a.troughDistance ?? Infinity }, { ...b, distance: b.troughDistance ?? Infinity }, cx.day));
  proposals.forEach((p, i) => (p.rank = i + 1));
  const concentration = displayUnit('concentration', base.units);
  return {
    ok: true,
    value: {
      title: base.title,
      units: { amount: base.units.amount, time: base.units.time, concentration, auc: `${concentration}·${base.units.time}` },
      targets: settings.targets.map((t) => t.words),
      proposals,
      searched: {
        amounts: settings.amounts.length,
        intervals: settings.intervals.length,
        durations: settings.durations.length,
        regimens: proposals.length,
        steadyStateSolves: cx.counts.steady,
        intervalsSimulated: cx.counts.intervals,
        method: scaled ? 'unit dose scaled (linear)' : 'per regimen (saturable or numerical)',
      },
      rankingRule: RANKING_RULE,
      timeToWindowDefinition: TIME_TO_WINDOW_DEFINITION,
      caution: PROPOSAL_CAUTION,
    },
  };
}

/** A numerical failure in one regimen is that regimen's note, not the search's end. */
function guarded<T>(f: () => T, failed: (message: string) => T): T {
  try {
    return f();
  } catch (e) {
    if (e instanceof IntegrationFailure || e instanceof Error) return failed(e.message);
    throw e;
  }
}

function steadyRead(c: SteadyStateCompartment): ExposureRead {
  return { trough: c.trough, peak: c.cmax, auc: c.auc, windows: c.windows };
}

/** The steady state of `spec` (thresholds for `scales`), or the reason there is none. */
function steadyOf(cx: Context, spec: RegimenSpec, scales: number[]): { read: (c: number) => ExposureRead | null } | { note: string } {
  const thresholds = targetThresholds(cx.settings.targets, scales);
  cx.counts.steady++;
  const figures = steadyStateFigures(steadyModel(cx.base, cx.settings.line, spec, thresholds), cx.system, cx.stats, { approach: false, profile: false });
  if (!figures) return { note: 'no steady state: the regimen does not repeat' };
  if (!figures.reached) return { note: figures.message };
  const byIndex = new Map(figures.compartments.map((c) => [cx.base.compartments.findIndex((m) => m.id === c.compartment), steadyRead(c)]));
  return { read: (c) => byIndex.get(c) ?? null };
}

function proposalFrom(cx: Context, spec: RegimenSpec, read: ((c: number) => ExposureRead | null) | null, scale: number, slot: number, note: string | null): Proposal {
  const targets = cx.settings.targets;
  const values = read ? targetValues(targets, read, scale, slot, spec.interval, cx.day) : targets.map(() => NaN);
  const met = targetsMet(targets, values);
  const first = read?.(targets[0].compartment) ?? null;
  const window = troughWindow(targets);
  const troughThere = window && read ? read(targets[window.target].compartment) : null;
  const dosesPerDay = cx.day / spec.interval;
  return {
    amount: spec.amount,
    interval: spec.interval,
    duration: spec.duration,
    loading: null,
    steadyState: first ? summary(targets, values, first, scale, spec.interval, cx.day) : null,
    targetValues: values,
    targetsMet: met,
    allMet: met.every(Boolean),
    timeToWindow: null,
    intervalsToWindow: null,
    dosesPerDay,
    dailyAmount: spec.amount * dosesPerDay,
    troughDistance: window && troughThere ? logDistance(troughThere.trough * scale, window) : null,
    note,
    rank: 0,
  };
}

function summary(targets: readonly ReadTarget[], values: number[], f: ExposureRead, scale: number, interval: number, day: number): SteadyStateSummary {
  const out: SteadyStateSummary = { trough: f.trough * scale, peak: f.peak * scale, auc24: (f.auc * scale * day) / interval, cavg: (f.auc * scale) / interval };
  const above = targets.findIndex((t) => t.measure === 'above');
  const window = targets.findIndex((t) => t.measure === 'window');
  if (above >= 0) out.shareAbove = values[above];
  if (window >= 0) out.shareInWindow = values[window];
  return out;
}

/** Every amount of one (interval, duration) from the unit dose's steady state and approach, scaled (exact for a linear model). */
function linearProposals(cx: Context, specs: RegimenSpec[]): Proposal[] {
  const unit: RegimenSpec = { ...specs[0], amount: 1 };
  const scales = specs.map((s) => s.amount);
  const steady = guarded(() => steadyOf(cx, unit, scales), (note) => ({ note }));
  if ('note' in steady) return specs.map((s) => proposalFrom(cx, s, null, 1, 0, steady.note));
  const proposals = specs.map((s, j) => proposalFrom(cx, s, steady.read, s.amount, j, null));
  const pending = new Set(proposals.flatMap((p, j) => (p.allMet ? [j] : [])));
  if (pending.size === 0) return proposals;
  const targets = cx.settings.targets;
  const setup = { base: cx.base, system: cx.system, line: cx.settings.line, spec: unit, loading: null, thresholds: targetThresholds(targets, scales), stats: cx.stats };
  cx.counts.intervals += walkIntervals(setup, limits.steadyStateCycles, (k, read) => {
    for (const j of [...pending]) {
      const values = targetValues(targets, read, specs[j].amount, j, unit.interval, cx.day);
      if (targetsMet(targets, values).every(Boolean)) {
        proposals[j].intervalsToWindow = k + 1;
        proposals[j].timeToWindow = (k + 1) * unit.interval;
        pending.delete(j);
      }
    }
    return pending.size === 0;
  });
  for (const j of pending) proposals[j].note = `the targets are not met by any interval within the first ${limits.steadyStateCycles} from empty`;
  return proposals;
}

/** One regimen of a saturable model (or a linear one solved numerically): its own steady-state search and approach. */
function saturableProposal(cx: Context, spec: RegimenSpec): Proposal {
  const steady = guarded(() => steadyOf(cx, spec, [1]), (note) => ({ note }));
  if ('note' in steady) return proposalFrom(cx, spec, null, 1, 0, steady.note);
  const p = proposalFrom(cx, spec, steady.read, 1, 0, null);
  if (!p.allMet) return p;
  guarded(
    () => {
      const w = windowTime(setupFor(cx, spec, null), cx.settings.targets, cx.day, limits.steadyStateCycles);
      cx.counts.intervals += w.simulated;
      p.intervalsToWindow = w.intervals;
      p.timeToWindow = w.intervals === null ? null : w.intervals * spec.interval;
      if (w.intervals === null) p.note = `the targets are not met by any interval within the first ${w.simulated} from empty`;
    },
    (message) => (p.note = `time to the window not determined: ${message}`),
  );
  return p;
}

function setupFor(cx: Context, spec: RegimenSpec, loading: number | null) {
  return { base: cx.base, system: cx.system, line: cx.settings.line, spec, loading, thresholds: targetThresholds(cx.settings.targets, [1]), stats: cx.stats };
}

/** The first interval's trough (compartment of the first target) after a first dose of `amount`. */
function firstTrough(cx: Context, spec: RegimenSpec, amount: number): number {
  let trough = NaN;
  cx.counts.intervals += walkIntervals(setupFor(cx, spec, amount), 1, (_, read) => {
    trough = read(cx.settings.targets[0].compartment)?.trough ?? NaN;
    return true;
  });
  return trough;
}

/** The loading amount of a regimen with a steady-state trough: computed, rounded onto the sums, a note when they fall short of it. */
function loadingAmount(cx: Context, p: Proposal): LoadingAmount | null {
  const spec: RegimenSpec = { amount: p.amount, interval: p.interval, duration: p.duration };
  const target = p.steadyState?.trough;
  if (target === undefined || !(target > 0)) return null;
  let computed: number;
  let method: LoadingDose['method'];
  if (cx.base.linear) {
    // The accumulation ratio as the steady-state trough over the first trough from empty: the first
    // trough is linear in the first dose, so this lands it on the steady-state trough exactly.
    computed = closedFormLoading(p.amount, target / firstTrough(cx, spec, p.amount));
    method = 'closed form';
  } else {
    const found = bisectLoading((a) => firstTrough(cx, spec, a), target, p.amount);
    if (!found) return null;
    computed = found.amount;
    method = 'bisection';
  }
  const amount = roundToAvailable(computed, cx.settings.loadingAmounts, cx.settings.rounding);
  return { amount, computed, method, note: roundingNote(computed, amount, cx.settings.loadingAmounts, cx.base.units.amount), loweredFrom: null };
}

/** The note of a loading amount the sums could not give within one rounding step, or null. */
export function roundingNote(computed: number, amount: number, available: readonly number[], unit: string): string | null {
  if (Math.abs(computed - amount) <= roundingGap(computed, available)) return null;
  const what = amount < computed ? 'capped' : 'raised';
  const why = amount < computed ? 'no more' : 'no less';
  // Four significant figures: the computed amount is a guide, not a dose to measure out.
  return `${what} at ${formatNumber(amount)} ${unit}: the strengths give ${why}; computed ${formatNumber(Number(computed.toPrecision(4)))} ${unit}`;
}

/** Sets the regimen's loading dose; a lowered amount and a target its first interval misses are said in the row's note. */
function withLoading(cx: Context, p: Proposal): void {
  const found = guarded(() => loadingDose(cx, p), () => null);
  p.loading = found?.dose ?? null;
  if (!found) return;
  const units = { concentration: displayUnit('concentration', cx.base.units), auc: `${displayUnit('concentration', cx.base.units)}·${cx.base.units.time}` };
  const unit = cx.base.units.amount;
  const say = (words: string) => (p.note = p.note === null ? words : `${p.note}; ${words}`);
  const from = found.dose.loweredFrom;
  if (from !== null && found.aimedFirst) {
    const why = firstIntervalNote(cx.settings.targets, found.aimedFirst, units);
    say(`the loading dose is lowered from ${formatNumber(from)} ${unit}, the amount aimed at the steady-state trough, to ${formatNumber(found.dose.amount)} ${unit}, the largest sum of strengths that keeps every upper bound in its first interval${why ? `: at ${formatNumber(from)} ${unit}, ${why}` : ''}`);
  }
  if (found.dose.firstIntervalMet) return;
  const missed = firstIntervalNote(cx.settings.targets, found.dose.firstInterval, units);
  if (missed !== null) say(missed);
}

/** Whether a first interval's figures break an upper bound of a target (a ceiling, or a window's top). */
function breaksUpperBound(targets: readonly ReadTarget[], first: readonly number[]): boolean {
  return targets.some((t, k) => t.atMost !== null && first[k] > t.atMost);
}

/** Each target's figure in the first interval after `amount` is given first (one interval simulated). */
function firstIntervalOf(cx: Context, p: Proposal, amount: number): number[] {
  const spec: RegimenSpec = { amount: p.amount, interval: p.interval, duration: p.duration };
  const w = windowTime(setupFor(cx, spec, amount), cx.settings.targets, cx.day, 1);
  cx.counts.intervals += w.simulated;
  return w.first;
}

/**
 * The loading amount aimed at the steady-state trough puts its peak on an emptier body than the
 * steady state's, yet that first peak can still break a ceiling the steady state keeps. Then the
 * largest smaller sum of strengths, above the maintenance dose, whose first interval keeps every
 * upper bound is given instead (at most LOWER_LOADING_TRIES tried, each one interval from empty);
 * when none does, the aimed amount stays and its miss is said in the row's note. `aimedFirst` is
 * the aimed amount's first interval when it was lowered.
 */
function keepingUpperBounds(cx: Context, p: Proposal, chosen: LoadingAmount): { chosen: LoadingAmount; aimedFirst: number[] | null } {
  const targets = cx.settings.targets;
  if (!targets.some((t) => t.atMost !== null)) return { chosen, aimedFirst: null };
  const aimedFirst = firstIntervalOf(cx, p, chosen.amount);
  if (!breaksUpperBound(targets, aimedFirst)) return { chosen, aimedFirst: null };
  const smaller = cx.settings.loadingAmounts.filter((a) => a < chosen.amount && a > p.amount).sort((a, b) => b - a);
  for (const amount of smaller.slice(0, LOWER_LOADING_TRIES)) {
    if (!breaksUpperBound(targets, firstIntervalOf(cx, p, amount))) return { chosen: { ...chosen, amount, note: null, loweredFrom: chosen.amount }, aimedFirst };
  }
  return { chosen, aimedFirst: null };
}

/** The loading dose of a regimen that meets its targets: its amount (keepingUpperBounds), then verified by simulation. */
function loadingDose(cx: Context, p: Proposal): { dose: LoadingDose; aimedFirst: number[] | null } | null {
  const aimed = loadingAmount(cx, p);
  if (!aimed) return null;
  const kept = keepingUpperBounds(cx, p, aimed);
  return { dose: judgedLoading(cx, p, kept.chosen), aimedFirst: kept.aimedFirst };
}

/** A loading amount given first, simulated from empty interval by interval: its first interval and time to the window. */
function judgedLoading(cx: Context, p: Proposal, chosen: LoadingAmount): LoadingDose {
  const spec: RegimenSpec = { amount: p.amount, interval: p.interval, duration: p.duration };
  const w = windowTime(setupFor(cx, spec, chosen.amount), cx.settings.targets, cx.day, limits.steadyStateCycles);
  cx.counts.intervals += w.simulated;
  return {
    ...chosen,
    firstTrough: firstTrough(cx, spec, chosen.amount),
    firstTroughMet: cx.settings.targets.every((t, k) => t.measure !== 'trough' || targetsMet([t], [w.first[k]])[0]),
    firstIntervalMet: w.intervals === 1,
    firstInterval: w.first,
    firstIntervalTargetsMet: targetsMet(cx.settings.targets, w.first),
    timeToWindow: w.intervals === null ? null : w.intervals * p.interval,
    intervalsToWindow: w.intervals,
  };
}

/**
 * The loading amount the typical basis would choose for `spec`, whatever the regimen's typical
 * targets: its aim is the typical subject's steady-state trough, lowered when the typical
 * subject's first interval would break an upper bound (keepingUpperBounds; population proposals then give
 * it to every virtual subject, and judge its first interval per subject, so no time to the
 * window is simulated here). Null when the regimen has no steady state, no trough or no bracket.
 */
export function typicalLoadingAmount(base: Model, settings: ProposeSettings, spec: RegimenSpec): LoadingAmount | null {
  const cx: Context = { base, system: new CompartmentSystem(base), settings, stats: emptyStats(), day: 24 * unitsPerHour(base.units), counts: { steady: 0, intervals: 0 } };
  const steady = guarded(() => steadyOf(cx, spec, [1]), (note) => ({ note }));
  if ('note' in steady) return null;
  const p = proposalFrom(cx, spec, steady.read, 1, 0, null);
  return guarded(
    () => {
      const aimed = loadingAmount(cx, p);
      return aimed && keepingUpperBounds(cx, p, aimed).chosen;
    },
    () => null,
  );
}

