/**
 * Population proposals from empty: each virtual subject given each candidate regimen from its
 * first dose (no steady-state shortcut), interval by interval (approach-run.ts), to find
 * - the time at which its targets first hold and keep holding to its steady state,
 * - whether every target holds in each of the first APPROACH_INTERVALS_SHOWN intervals,
 * - whether the first interval meets every target when the typical subject's loading dose is
 *   given first (the loading dose of loading.ts, chosen once per regimen, the same for all).
 *
 * Why stopping early is sound: a compartment system is cooperative (a transfer's flux rises
 * with its source's amount only), so from empty under a repeated dose every state rises from
 * interval to interval towards the steady state (the comparison principle, Kamke–Müller). The
 * trough, peak, AUC and the share of the interval above a level rise with the state, so each
 * interval's figure lies between the last one's and the steady state's: once an interval meets
 * such targets and the steady state meets them too, every later interval does: such a run is
 * followed until it meets them (at most limits.steadyStateCycles intervals), never cut short by
 * nearness to the steady state, since a target the steady state just meets is met only close to it.
 * A share within a window has no such order, so no interval proves the later ones: it is followed
 * until every figure is within SETTLED_TOLERANCE of the subject's own steady state and judged there.
 */
import type { Model } from '../building/model.ts';
import { CompartmentSystem } from '../building/system.ts';
import { figureColumn, windowColumn, type FigureLayout } from '../population/layout.ts';
import type { PopulationPlan } from '../population/plan.ts';
import { SubjectScratch, subjectVariant } from '../population/subject-run.ts';
import { meets, type ReadTarget } from '../population/targets.ts';
import { limits } from '../scenario/limits.ts';
import { buildModel } from '../scenario/normalize.ts';
import type { Outcome } from '../scenario/problems.ts';
import { emptyStats } from '../solving/numerics/ode-system.ts';
import { walkIntervals, type ApproachSetup } from './approach-run.ts';
import type { RegimenSpec } from './regimen-model.ts';
import { targetThresholds, targetValues } from './target-values.ts';

/** Intervals from the first dose whose joint attainment is listed. */
export const APPROACH_INTERVALS_SHOWN = 6;

/**
 * Relative distance (absolute for shares) to a subject's steady state counted as there, for runs
 * with a window-share target only. 1% is a convention (common practice counts a subject at steady
 * state after 4–5 half-lives, 94–97% of the way; 1% left is 6.6 half-lives of a one-compartment
 * approach), not a proven bound: with every figure within 1% of the steady state's, a subject
 * is judged as at its steady state, but where a concentration runs flat along a window's edge the
 * share may still move by more than its concentrations do.
 */
export const SETTLED_TOLERANCE = 0.01;

/** A subject's outcome from empty (an Int32Array code beside the intervals). */
export const APPROACH = {
  /** Intervals to the window hold a count ≥ 1. */
  reached: 0,
  /** The subject's steady state misses a target: the window is never reached. */
  steadyMisses: 1,
  /** The subject has no steady state with this regimen. */
  noSteadyState: 2,
  /** Still missing a target after limits.steadyStateCycles intervals, or (a window-share target) within SETTLED_TOLERANCE of its steady state. */
  notMetBeforeSteady: 3,
  /** The run from empty failed numerically. */
  failed: 4,
} as const;

export const TIME_TO_WINDOW_POPULATION_RULE =
  'for each subject, the regimen given from empty (no steady-state shortcut): the time from the first dose to the end of the first dosing interval ' +
  'from which every interval meets every target up to the subject\'s steady state (trough, peak, AUC per 24 h and the share above a level rise ' +
  'from interval to interval from empty, since compartment systems are cooperative: once an interval and the steady state meet them, every interval between does; ' +
  `they are followed until met, at most ${limits.steadyStateCycles} intervals; a share within a window has no such order, so a run with one is followed until each figure ` +
  `is within ${SETTLED_TOLERANCE * 100}% of the subject's steady state, a convention (about 6.6 half-lives of accumulation, past the usual 4–5), not a proven bound). ` +
  'Subjects whose steady state misses a target, who have none, or who meet the targets only at it never reach the window: ' +
  'they are counted and sorted last (as an infinite time), so a percentile that falls among them is "not reached"';

/** What the subjects of one chunk gave from empty: regimen r, subject s (of the chunk) at r·count + s. */
export interface ApproachChunk {
  /** Intervals to the window (≥ 1) when code is APPROACH.reached, else 0. */
  intervals: Int32Array;
  code: Uint8Array;
  /** Bit k: every target met in interval k + 1 from empty (k < APPROACH_INTERVALS_SHOWN). */
  metByInterval: Uint8Array;
  /** 1: every target met in the first interval after the loading dose; 0 not; 2 no loading dose for this regimen. */
  firstLoaded: Uint8Array;
  /** Dosing intervals simulated from empty, over the chunk. */
  simulated: number;
  /** Per regimen, the message of the chunk's first failed run (from empty or after the loading dose), or null. */
  failures: (string | null)[];
}

/** What every chunk needs besides its subjects: the candidates and their loading doses. */
export interface ApproachPlan {
  plan: PopulationPlan;
  /** The proposed dose line (scenario index). */
  line: number;
  targets: readonly ReadTarget[];
  specs: readonly RegimenSpec[];
  /** The typical subject's loading dose of each regimen (model amount unit), or null. */
  loadings: readonly (number | null)[];
}

/** The engine's column of target k at steady state (period 0) in the regimens' layout. */
export function steadyColumn(plan: PopulationPlan, k: number): number {
  const layout = plan.regimenLayout as FigureLayout;
  const t = plan.targets[k];
  const b = layout.banded.indexOf(t.compartment);
  if (t.measure === 'above' || t.measure === 'window') return windowColumn(layout, 0, b, plan.targetWindows[k]);
  return figureColumn(layout, 0, b, t.measure === 'peak' ? 'cmax' : t.measure);
}

/** Whether one figure meets its target; a share target bounds the share from below only (its level sits in the window). */
export function meetsTarget(t: ReadTarget, value: number): boolean {
  return t.measure === 'above' || t.measure === 'window' ? meets(value, t.atLeast, null) : meets(value, t.atLeast, t.atMost);
}

function near(t: ReadTarget, value: number, steady: number): boolean {
  const share = t.measure === 'above' || t.measure === 'window';
  return Math.abs(value - steady) <= SETTLED_TOLERANCE * (share ? 1 : Math.abs(steady));
}

/**
 * Subjects [first, first + count) from empty under every regimen. `steady` holds the engine's
 * steady-state figures of those subjects (runBatch's regimenFigures of the same range).
 */
export function runApproach(a: ApproachPlan, first: number, count: number, steady: Float64Array): Outcome<ApproachChunk> {
  const { plan, targets, specs } = a;
  const R = specs.length;
  const out: ApproachChunk = {
    intervals: new Int32Array(R * count),
    code: new Uint8Array(R * count),
    metByInterval: new Uint8Array(R * count),
    firstLoaded: new Uint8Array(R * count).fill(2),
    simulated: 0,
    failures: new Array<string | null>(R).fill(null),
  };
  // The solvers throw IntegrationFailure, the matrix exponential a plain Error (a singular Padé
  // denominator): both count the subject as failed, and the first message is kept for the notes.
  const failed = (e: unknown, r: number) => {
    if (!(e instanceof Error)) throw e;
    out.failures[r] ??= e.message;
  };
  const cols = (plan.regimenLayout as FigureLayout).columns;
  const probes = targets.map((_, k) => steadyColumn(plan, k));
  // Only a window share lacks the order from empty that lets a run stop at its first met interval.
  const ordered = targets.every((t) => t.measure !== 'window');
  const thresholds = targetThresholds(targets, [1]);
  const scratch = new SubjectScratch(plan);
  const steadyValues = new Float64Array(targets.length);
  for (let s = 0; s < count; s++) {
    const i = first + s;
    const built = buildModel(plan.scenario, subjectVariant(plan, i, scratch));
    if (!built.ok) return { ok: false, problems: built.problems.map((p) => ({ path: p.path, message: `virtual subject ${i} (seed ${plan.seed}): ${p.message}` })) };
    const model: Model = built.value;
    const line = model.doseLines.find((l) => l.line === a.line);
    if (!line) throw new Error(`internal: virtual subject ${i} has no dose line ${a.line}`);
    const system = new CompartmentSystem(model);
    const stats = emptyStats();
    for (let r = 0; r < R; r++) {
      const at = r * count + s;
      const row = at * cols;
      let determined = true;
      for (let k = 0; k < targets.length; k++) {
        steadyValues[k] = steady[row + probes[k]];
        if (Number.isNaN(steadyValues[k])) determined = false;
      }
      const steadyMet = determined && targets.every((t, k) => meetsTarget(t, steadyValues[k]));
      const setup: ApproachSetup = { base: model, system, line, spec: specs[r], loading: null, thresholds, stats };
      try {
        let lastMissed = -1;
        let lastMet = false;
        let stopped = false;
        out.simulated += walkIntervals(setup, limits.steadyStateCycles, (k, read) => {
          const values = targetValues(targets, read, 1, 0, specs[r].interval, plan.day);
          const met = targets.every((t, j) => meetsTarget(t, values[j]));
          if (k < APPROACH_INTERVALS_SHOWN && met) out.metByInterval[at] |= 1 << k;
          if (!met) lastMissed = k;
          lastMet = met;
          const enough = k + 1 >= APPROACH_INTERVALS_SHOWN;
          // Without a steady state that meets the targets only the first intervals are wanted.
          if (!steadyMet) return enough;
          // Ordered figures: a met interval proves every later one, and only a met one ends the run.
          stopped = enough && (ordered ? met : targets.every((t, j) => near(t, values[j], steadyValues[j])));
          return stopped;
        });
        if (!determined) out.code[at] = APPROACH.noSteadyState;
        else if (!steadyMet) out.code[at] = APPROACH.steadyMisses;
        else if (stopped && lastMet) out.intervals[at] = lastMissed + 2;
        else out.code[at] = APPROACH.notMetBeforeSteady;
      } catch (e) {
        failed(e, r);
        out.code[at] = APPROACH.failed;
      }
      const loading = a.loadings[r];
      if (loading !== null) {
        try {
          out.simulated += walkIntervals({ ...setup, loading }, 1, (_, read) => {
            const values = targetValues(targets, read, 1, 0, specs[r].interval, plan.day);
            out.firstLoaded[at] = targets.every((t, j) => meetsTarget(t, values[j])) ? 1 : 0;
            return true;
          });
        } catch (e) {
          failed(e, r);
          out.firstLoaded[at] = 0;
        }
      }
    }
  }
  return { ok: true, value: out };
}
