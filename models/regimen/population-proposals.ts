/**
 * Regimen proposals for a population (propose.basis "population"): every candidate of the
 * `propose` block — the same amounts, intervals and durations as typical proposals — given to
 * the same virtual subjects of the scenario's `population` section (common random numbers), each
 * subject's steady state judged against the targets, and the regimens ranked by the share of
 * subjects meeting every target at once (population-rank.ts).
 *
 * Nothing here is a second engine: the candidates become the population's regimen grid
 * (population/regimens.ts) on a copy of the scenario that keeps only the proposed dose line (a
 * proposal is a regimen of its own, as regimen-model.ts has it), the population engine runs the
 * subjects (plan, runBatch), and the targets are judged by population/targets.ts's `meets` on the
 * figures the engine wrote (layout.ts's columns).
 *
 * From empty (population-approach.ts): every subject is also given every candidate from its first
 * dose, for its time to the window, the joint attainment of the first intervals and, when a
 * loading dose is asked for, the first interval after the typical subject's loading dose.
 *
 * The work is split by subjects (prepare once, runProposalChunk per range, summariseProposals of
 * the chunks in subject order), so threads may each run some ranges: subject i's numbers depend
 * only on (seed, i), never on who ran it (server/proposals-threads.ts).
 */
import type { Model } from '../building/model.ts';
import { figureColumn, type FigureLayout } from '../population/layout.ts';
import { percentileOfSorted } from '../population/percentiles.ts';
import { planPopulation, runBatch, type PopulationPlan } from '../population/population.ts';
import { POPULATION_CAUTION } from '../population/summary.ts';
import type { ReadTarget } from '../population/targets.ts';
import type { Outcome, Problem } from '../scenario/problems.ts';
import type { DoseLine, Quantity, Scenario } from '../scenario/schema.ts';
import { displayUnit } from '../scenario/units.ts';
import { APPROACH, APPROACH_INTERVALS_SHOWN, meetsTarget, runApproach, steadyColumn, TIME_TO_WINDOW_POPULATION_RULE, type ApproachChunk, type ApproachPlan } from './population-approach.ts';
import {
  PROPOSAL_CAUTION,
  typicalLoadingAmount,
  type LoadingAmount,
  type PercentileSpread,
  type PopulationApproach,
  type PopulationBasis,
  type Proposal,
  type ProposeResult,
  type ShareOfSubjects,
  type TimeSpread,
} from './propose.ts';
import { POPULATION_RANKING_RULE, rankPopulation } from './population-rank.ts';
import { logDistance, troughWindow } from './rank.ts';
import type { ProposeSettings } from './settings.ts';

/** Subjects and subject × regimen runs one search may take (the caller states its own: the server's population limits). */
export interface PopulationProposalLimits {
  subjects: number;
  runs: number;
}

export const LOADING_RULE =
  'chosen for the typical subject as typical proposals choose it (the first dose, in place of the first maintenance dose, whose first trough is the typical ' +
  'steady-state trough: the closed form for a linear model, bisection otherwise, lowered to the largest smaller sum of the strengths above the maintenance dose ' +
  'whose first interval keeps every upper bound when the typical subject\'s first interval would break one), rounded onto the sums of the strengths — and when no sum comes within ' +
  'one rounding step of it (above the largest sum, below the smallest), the nearest end is given and the row says so, with the amount computed — ' +
  'then given to every virtual subject; the share meeting every target in the first dosing interval is given with and without it';

export const PERCENTILE_RULE = 'percentiles by linear interpolation between order statistics (Hyndman & Fan 1996, definition 7) over the subjects with a steady state';

const grouped = (n: number) => n.toLocaleString('en-US');

/** One candidate regimen, in the model's units. */
type Spec = { amount: number; interval: number; duration: number };

/**
 * The scenario the population engine runs: the proposed line with the candidates as its regimen
 * grid, steady state only. The other dose lines stay where they are, each made one dose of
 * nothing (its route, bioavailability and lag kept): the varying quantities, their order and
 * correlations, and so every subject's numbers, are those of the scenario's own population.
 */
function gridScenario(s: Scenario, model: Model, settings: ProposeSettings): Scenario {
  const p = s.propose as NonNullable<Scenario['propose']>;
  const population = s.population as NonNullable<Scenario['population']>;
  // Amounts as numbers of the model's amount unit, written with it (they may come from sums of strengths).
  const amounts: Quantity[] = settings.amounts.map((a) => `${a} ${model.units.amount}`);
  const line = s.doses[p.line];
  // The line repeats at the first candidate (so the template has a steady state, whatever the line was) until the span's end.
  const { count: _count, through: _through, rate, ...kept } = line;
  const dose: DoseLine = { ...kept, amount: amounts[0], every: p.intervals[0] };
  // A rate would stretch the infusion with the amount; typical proposals keep the line's duration.
  if (rate !== undefined && !p.durations) dose.duration = `${settings.durations[0]} ${model.units.time}`;
  // Durations all 0: boluses (the grid would write "0 h", which a dose line refuses).
  const boluses = p.durations !== undefined && settings.durations.every((d) => d === 0);
  if (boluses) delete dose.duration;
  const { propose: _propose, fit: _fit, observations: _observations, ...rest } = s;
  const inert = (d: DoseLine): DoseLine => {
    const { every: _e, count: _c, through: _t, duration: _d, rate: _r, ...once } = d;
    return { ...once, amount: `0 ${model.units.amount}` };
  };
  return {
    ...rest,
    doses: s.doses.map((d, i) => (i === p.line ? dose : inert(d))),
    population: {
      ...population,
      targets: p.targets,
      periods: ['steady state'],
      regimens: { line: p.line, amounts, intervals: p.intervals, ...(p.durations && !boluses ? { durations: p.durations } : {}), ceilingAtLeast: 0 },
    },
  };
}

/** The paths of problems found on the engine's copy, as the user wrote them. */
function userPaths(problems: Problem[]): Problem[] {
  return problems.map((q) => {
    if (q.path.startsWith('population.regimens') || q.path.startsWith('population.targets')) return { path: 'propose', message: `${q.path.replace(/^population\./, 'propose ')}: ${q.message}` };
    return q;
  });
}

export function limitProblems(subjects: number, regimens: number, limits: PopulationProposalLimits): Problem[] {
  if (subjects > limits.subjects) {
    return [{ path: 'population.subjects', message: `${grouped(subjects)} subjects: population proposals take at most ${grouped(limits.subjects)} here` }];
  }
  const runs = subjects * regimens;
  if (runs > limits.runs) {
    return [
      {
        path: 'population.subjects',
        message: `${grouped(subjects)} subjects × ${regimens} regimens = ${grouped(runs)} steady states (each subject's run of each regimen from the first dose comes on top); population proposals take at most ${grouped(limits.runs)} steady states: run fewer subjects, or list fewer strengths, intervals or durations (or lower propose.maxUnits)`,
      },
    ];
  }
  return [];
}

function share(attained: number, n: number): ShareOfSubjects {
  const p = attained / n;
  return { probability: p, standardError: Math.sqrt((p * (1 - p)) / n), attained };
}

/** Percentiles of the determined values among the first n (NaN sorts last in a typed array). */
function spread(values: Float64Array, n: number): { spread: PercentileSpread; median: number } {
  const sorted = values.subarray(0, n).sort();
  let m = n;
  while (m > 0 && Number.isNaN(sorted[m - 1])) m--;
  const at = (q: number) => percentileOfSorted(sorted, m, q);
  return { spread: { p5: at(5), p50: at(50), p95: at(95) }, median: at(50) };
}

/** Definition 7 over a sorted sample whose tail may be +∞; an order statistic hit exactly is not interpolated (0·∞). */
function percentileWithNever(sorted: Float64Array, q: number): number | null {
  const n = sorted.length;
  const h = ((n - 1) * q) / 100;
  const v = h === Math.floor(h) ? sorted[h] : percentileOfSorted(sorted, n, q);
  return Number.isFinite(v) ? v : null;
}

/** The candidates in the order readRegimens makes them: amounts, then intervals, then durations. */
function candidates(settings: ProposeSettings): Spec[] {
  const out: Spec[] = [];
  for (const amount of settings.amounts) for (const interval of settings.intervals) for (const duration of settings.durations) out.push({ amount, interval, duration });
  return out;
}

/** Everything a chunk of subjects needs, read once (in every thread alike). */
export interface PreparedProposals {
  scenario: Scenario;
  model: Model;
  settings: ProposeSettings;
  limits: PopulationProposalLimits;
  plan: PopulationPlan;
  specs: Spec[];
  /** The typical subject's loading dose per candidate (null: none asked for, or none found); amounts only in a worker thread. */
  loadings: (LoadingAmount | null)[] | null;
  approach: ApproachPlan;
}

/** Subjects first … first + count − 1: their steady states (the engine's regimen grid) and their runs from empty. */
export interface ProposalChunk {
  first: number;
  count: number;
  /** runBatch's regimenFigures of the range. */
  steady: Float64Array;
  approach: ApproachChunk;
}

/**
 * The population section, the limits, the engine's plan of the candidates and (unless given, as
 * in a worker thread that is told them) the typical subject's loading doses, before any subject runs.
 */
export function prepareProposals(s: Scenario, model: Model, settings: ProposeSettings, limits: PopulationProposalLimits, loadingAmounts?: readonly (number | null)[]): Outcome<PreparedProposals> {
  if (!s.population) {
    return { ok: false, problems: [{ path: 'propose.basis', message: 'is "population", but the scenario has no `population` section: give at least { "subjects": 500 }, or use "typical"' }] };
  }
  const mixed = settings.durations.some((d) => d === 0) && settings.durations.some((d) => d > 0);
  if (mixed) {
    const k = settings.durations.indexOf(0);
    return { ok: false, problems: [{ path: `propose.durations[${k}]`, message: 'a bolus (0) cannot be tried beside infusions for a population (each regimen of the population grid is an infusion of a given duration); try the bolus in a run of its own' }] };
  }
  const specs = candidates(settings);
  const over = limitProblems(s.population.subjects, specs.length, limits);
  if (over.length > 0) return { ok: false, problems: over };
  const plan = planPopulation(gridScenario(s, model, settings));
  if (!plan.ok) return { ok: false, problems: userPaths(plan.problems) };
  if (plan.value.regimens.length !== specs.length) throw new Error(`internal: ${plan.value.regimens.length} regimens for ${specs.length} candidates`);
  const line = (s.propose as NonNullable<Scenario['propose']>).line;
  const loadings = loadingAmounts ? null : specs.map((spec) => (settings.loading ? typicalLoadingAmount(model, settings, spec) : null));
  const amounts = loadingAmounts ?? (loadings as (LoadingAmount | null)[]).map((l) => l?.amount ?? null);
  if (amounts.length !== specs.length) throw new Error(`internal: ${amounts.length} loading doses for ${specs.length} candidates`);
  const approach: ApproachPlan = { plan: plan.value, line, targets: plan.value.targets, specs, loadings: amounts };
  return { ok: true, value: { scenario: s, model, settings, limits, plan: plan.value, specs, loadings, approach } };
}

/** Every problem population proposals would meet before their subjects run (the API answers them 400). */
export function checkPopulationProposals(s: Scenario, model: Model, settings: ProposeSettings, limits: PopulationProposalLimits): Problem[] {
  // The loading doses are not needed to find the problems: every candidate is told none.
  const none = candidates(settings).map(() => null);
  const planned = prepareProposals(s, model, settings, limits, none);
  return planned.ok ? [] : planned.problems;
}

/** Subjects [first, first + count): their steady states and runs from empty under every candidate. */
export function runProposalChunk(p: PreparedProposals, first: number, count: number): Outcome<ProposalChunk> {
  const batch = runBatch(p.plan, first, count);
  if (!batch.ok) return { ok: false, problems: userPaths(batch.problems) };
  const approach = runApproach(p.approach, first, count, batch.value.regimenFigures);
  if (!approach.ok) return approach;
  return { ok: true, value: { first, count, steady: batch.value.regimenFigures, approach: approach.value } };
}

/** The chunks (every subject once, in any order) as one set of arrays over all N subjects: regimen r, subject s at r·N + s. */
function joined(p: PreparedProposals, chunks: readonly ProposalChunk[]) {
  const N = p.plan.subjects;
  const R = p.specs.length;
  const cols = (p.plan.regimenLayout as FigureLayout).columns;
  const steady = new Float64Array(R * N * cols);
  const intervals = new Int32Array(R * N);
  const code = new Uint8Array(R * N);
  const metByInterval = new Uint8Array(R * N);
  const firstLoaded = new Uint8Array(R * N);
  let covered = 0;
  let simulated = 0;
  // Each regimen's first failure message in subject order, whatever order the chunks came in.
  const failures = new Array<string | null>(R).fill(null);
  for (const c of [...chunks].sort((a, b) => a.first - b.first)) {
    covered += c.count;
    simulated += c.approach.simulated;
    c.approach.failures.forEach((m, r) => (failures[r] ??= m));
    for (let r = 0; r < R; r++) {
      steady.set(c.steady.subarray(r * c.count * cols, (r + 1) * c.count * cols), (r * N + c.first) * cols);
      const from = r * c.count;
      const to = (r + 1) * c.count;
      intervals.set(c.approach.intervals.subarray(from, to), r * N + c.first);
      code.set(c.approach.code.subarray(from, to), r * N + c.first);
      metByInterval.set(c.approach.metByInterval.subarray(from, to), r * N + c.first);
      firstLoaded.set(c.approach.firstLoaded.subarray(from, to), r * N + c.first);
    }
  }
  if (covered !== N) throw new Error(`internal: chunks cover ${covered} of ${N} subjects`);
  return { steady, intervals, code, metByInterval, firstLoaded, simulated, failures };
}

type Joined = ReturnType<typeof joined>;

interface Row {
  proposal: Proposal;
  distance: number;
}

/** One regimen's runs from empty over the subjects. */
function approachRow(j: Joined, r: number, N: number, interval: number, loaded: boolean): PopulationApproach {
  const times = new Float64Array(N);
  const never = { steadyStateMisses: 0, noSteadyState: 0, onlyAtSteadyState: 0, failed: 0 };
  let reached = 0;
  const byInterval = new Array<number>(APPROACH_INTERVALS_SHOWN).fill(0);
  let withLoading = 0;
  for (let s = 0; s < N; s++) {
    const at = r * N + s;
    const code = j.code[at];
    if (code === APPROACH.reached) reached++;
    else if (code === APPROACH.steadyMisses) never.steadyStateMisses++;
    else if (code === APPROACH.noSteadyState) never.noSteadyState++;
    else if (code === APPROACH.notMetBeforeSteady) never.onlyAtSteadyState++;
    else never.failed++;
    times[s] = code === APPROACH.reached ? j.intervals[at] : Infinity;
    for (let k = 0; k < APPROACH_INTERVALS_SHOWN; k++) if (j.metByInterval[at] & (1 << k)) byInterval[k]++;
    if (j.firstLoaded[at] === 1) withLoading++;
  }
  times.sort();
  const at = (q: number) => {
    const v = percentileWithNever(times, q);
    return v === null ? null : v * interval;
  };
  const shares = byInterval.map((a) => share(a, N));
  return {
    timeToWindow: { p5: at(5), p50: at(50), p95: at(95) } satisfies TimeSpread,
    reached,
    neverReached: never,
    byInterval: shares,
    firstInterval: { without: shares[0], withLoading: loaded ? share(withLoading, N) : null },
  };
}

/** One regimen's shares and percentiles over the subjects, from the figures the engine wrote and the runs from empty. */
function regimenRow(p: PreparedProposals, j: Joined, r: number, scratch: Float64Array[]): Row {
  const { plan, specs } = p;
  const spec = specs[r];
  const figures = j.steady;
  const layout = plan.regimenLayout as FigureLayout;
  const cols = layout.columns;
  const N = plan.subjects;
  const targets: readonly ReadTarget[] = plan.targets;
  const probes = targets.map((_, k) => steadyColumn(plan, k));
  const first = layout.banded.indexOf(targets[0].compartment);
  const troughCol = figureColumn(layout, 0, first, 'trough');
  const peakCol = figureColumn(layout, 0, first, 'cmax');
  const aucCol = figureColumn(layout, 0, first, 'auc24');
  const cavgCol = figureColumn(layout, 0, first, 'cavg');
  const attained = new Array<number>(targets.length).fill(0);
  let joint = 0;
  let undetermined = 0;
  const [trough, peak, auc24, cavg, windowTrough] = scratch;
  for (let s = 0; s < N; s++) {
    const row = (r * N + s) * cols;
    let all = true;
    targets.forEach((t, k) => {
      if (meetsTarget(t, figures[row + probes[k]])) attained[k]++;
      else all = false;
    });
    if (all) joint++;
    if (Number.isNaN(figures[row + troughCol])) undetermined++;
    trough[s] = figures[row + troughCol];
    peak[s] = figures[row + peakCol];
    auc24[s] = figures[row + aucCol];
    cavg[s] = figures[row + cavgCol];
  }
  const troughs = spread(trough, N);
  const peaks = spread(peak, N);
  const shares = attained.map((a) => share(a, N));
  const jointShare = share(joint, N);
  const window = troughWindow(targets);
  const windowCol = window ? figureColumn(layout, 0, layout.banded.indexOf(targets[window.target].compartment), 'trough') : -1;
  const medianTrough = window ? spread(extract(figures, r, N, cols, windowCol, windowTrough), N).median : NaN;
  const distance = window ? logDistance(medianTrough, window) : Infinity;
  const dosesPerDay = plan.day / spec.interval;
  const loading = p.loadings?.[r] ?? null;
  const approach = approachRow(j, r, N, spec.interval, loading !== null);
  const notes: string[] = [];
  if (undetermined > 0) notes.push(`${undetermined} of ${N} subjects have no steady state with this regimen; they count as not attaining`);
  if (p.settings.loading && loading === null) notes.push('no loading dose: the typical subject has no steady-state trough with this regimen, or none was bracketed');
  if (approach.neverReached.failed > 0) notes.push(`${approach.neverReached.failed} of ${N} subjects' runs from empty failed numerically (the first: ${j.failures[r]}); they count as never reaching the window`);
  else if (j.failures[r] !== null) notes.push(`a run after the loading dose failed numerically (the first: ${j.failures[r]}); its subject counts as not meeting the targets in the first interval`);
  const proposal: Proposal = {
    ...spec,
    loading,
    steadyState: { trough: troughs.median, peak: peaks.median, auc24: spread(auc24, N).median, cavg: spread(cavg, N).median },
    targetValues: shares.map((x) => x.probability),
    targetsMet: shares.map((x) => x.probability >= 0.5),
    allMet: jointShare.probability >= 0.5,
    timeToWindow: approach.timeToWindow.p50,
    intervalsToWindow: approach.timeToWindow.p50 === null ? null : approach.timeToWindow.p50 / spec.interval,
    dosesPerDay,
    dailyAmount: spec.amount * dosesPerDay,
    troughDistance: window ? distance : null,
    note: notes.length > 0 ? notes.join('; ') : null,
    rank: 0,
    population: { joint: jointShare, targets: shares, trough: troughs.spread, peak: peaks.spread, undetermined, tier: 0, approach },
  };
  return { proposal, distance };
}

/** Column `col` of regimen r for every subject into `out`. */
function extract(figures: Float64Array, r: number, N: number, cols: number, col: number, out: Float64Array): Float64Array {
  for (let s = 0; s < N; s++) out[s] = figures[(r * N + s) * cols + col];
  return out;
}

/** The ranked proposals from every subject's chunk (in any order), as one thread or several computed them. */
export function summariseProposals(p: PreparedProposals, chunks: readonly ProposalChunk[]): ProposeResult {
  const { plan: pl, specs, model, settings, limits } = p;
  const N = pl.subjects;
  const j = joined(p, chunks);
  const scratch = Array.from({ length: 5 }, () => new Float64Array(N));
  const rows = specs.map((_, r) => regimenRow(p, j, r, scratch));
  const ranked = rankPopulation(
    rows.map((row) => ({ ...row.proposal, probability: (row.proposal.population as NonNullable<Proposal['population']>).joint.probability, standardError: (row.proposal.population as NonNullable<Proposal['population']>).joint.standardError, distance: row.distance })),
    pl.day,
  );
  const proposals = ranked.order.map((i, k) => {
    const q = rows[i].proposal;
    q.rank = k + 1;
    (q.population as NonNullable<Proposal['population']>).tier = ranked.tier[i];
    return q;
  });
  const concentration = displayUnit('concentration', model.units);
  const basis: PopulationBasis = {
    subjects: N,
    seed: pl.seed,
    runs: N * specs.length,
    limits: { ...limits },
    loading: settings.loading ? LOADING_RULE : null,
    timeToWindow: TIME_TO_WINDOW_POPULATION_RULE,
    percentileRule: PERCENTILE_RULE,
    caution: POPULATION_CAUTION,
  };
  return {
    title: model.title,
    units: { amount: model.units.amount, time: model.units.time, concentration, auc: `${concentration}·${model.units.time}` },
    targets: settings.targets.map((t) => t.words),
    proposals,
    searched: {
      amounts: settings.amounts.length,
      intervals: settings.intervals.length,
      durations: settings.durations.length,
      regimens: specs.length,
      steadyStateSolves: N * specs.length,
      intervalsSimulated: j.simulated,
      method: 'per subject and regimen (population, common random numbers)',
    },
    rankingRule: POPULATION_RANKING_RULE,
    timeToWindowDefinition: TIME_TO_WINDOW_POPULATION_RULE,
    caution: PROPOSAL_CAUTION,
    population: basis,
  };
}

/** The ranked population proposals of a scenario already read (readPropose passed), all in this thread, or every problem with its path. */
export function proposeForPopulation(s: Scenario, model: Model, settings: ProposeSettings, limits: PopulationProposalLimits): Outcome<ProposeResult> {
  const prepared = prepareProposals(s, model, settings, limits);
  if (!prepared.ok) return prepared;
  const chunk = runProposalChunk(prepared.value, 0, prepared.value.plan.subjects);
  if (!chunk.ok) return chunk;
  return { ok: true, value: summariseProposals(prepared.value, [chunk.value]) };
}
