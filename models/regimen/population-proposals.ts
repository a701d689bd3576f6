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
 * Not given for a population: a loading dose (it would need every subject's first interval
 * from empty with its own search) and the time to the window (a run from empty per subject and
 * regimen, up to limits.steadyStateCycles intervals each, many times the steady-state cost).
 */
import type { Model } from '../building/model.ts';
import { figureColumn, windowColumn, type FigureLayout } from '../population/layout.ts';
import { percentileOfSorted } from '../population/percentiles.ts';
import { planPopulation, runBatch, type PopulationPlan } from '../population/population.ts';
import { POPULATION_CAUTION } from '../population/summary.ts';
import { meets, type ReadTarget } from '../population/targets.ts';
import type { Outcome, Problem } from '../scenario/problems.ts';
import type { DoseLine, Quantity, Scenario } from '../scenario/schema.ts';
import { displayUnit } from '../scenario/units.ts';
import { PROPOSAL_CAUTION, type PercentileSpread, type PopulationBasis, type Proposal, type ProposeResult, type ShareOfSubjects } from './propose.ts';
import { POPULATION_RANKING_RULE, rankPopulation } from './population-rank.ts';
import { logDistance, troughWindow } from './rank.ts';
import type { ProposeSettings } from './settings.ts';

/** Subjects and subject × regimen runs one search may take (the caller states its own: the server's population limits). */
export interface PopulationProposalLimits {
  subjects: number;
  runs: number;
}

export const LOADING_LEFT_OUT =
  'not proposed for a population: a loading dose is judged on the first interval from empty, which each subject would need computed with its own search; ask for typical proposals (propose.basis "typical") to get one for the typical subject';

export const TIME_TO_WINDOW_LEFT_OUT =
  'not given for a population: it needs a run from empty for every subject and regimen (up to thousands of intervals each for a saturable model), many times the cost of the steady states; typical proposals give it for the typical subject';

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
        message: `${grouped(subjects)} subjects × ${regimens} regimens = ${grouped(runs)} steady states; population proposals take at most ${grouped(limits.runs)}: run fewer subjects, or list fewer strengths, intervals or durations (or lower propose.maxUnits)`,
      },
    ];
  }
  return [];
}

/** Columns of one target in the regimens' layout (steady state is period 0). */
function targetColumn(layout: FigureLayout, plan: PopulationPlan, k: number): number {
  const t = plan.targets[k];
  const b = layout.banded.indexOf(t.compartment);
  if (t.measure === 'above' || t.measure === 'window') return windowColumn(layout, 0, b, plan.targetWindows[k]);
  return figureColumn(layout, 0, b, t.measure === 'peak' ? 'cmax' : t.measure);
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

interface Row {
  proposal: Proposal;
  distance: number;
}

/** One regimen's shares and percentiles over the subjects, from the figures the engine wrote. */
function regimenRow(plan: PopulationPlan, figures: Float64Array, r: number, spec: Spec, scratch: Float64Array[]): Row {
  const layout = plan.regimenLayout as FigureLayout;
  const cols = layout.columns;
  const N = plan.subjects;
  const targets: readonly ReadTarget[] = plan.targets;
  const probes = targets.map((_, k) => targetColumn(layout, plan, k));
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
      // A share target bounds the share from below only (its level sits in the window).
      const ok = t.measure === 'above' || t.measure === 'window' ? meets(figures[row + probes[k]], t.atLeast, null) : meets(figures[row + probes[k]], t.atLeast, t.atMost);
      if (ok) attained[k]++;
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
  const proposal: Proposal = {
    ...spec,
    loading: null,
    steadyState: { trough: troughs.median, peak: peaks.median, auc24: spread(auc24, N).median, cavg: spread(cavg, N).median },
    targetValues: shares.map((x) => x.probability),
    targetsMet: shares.map((x) => x.probability >= 0.5),
    allMet: jointShare.probability >= 0.5,
    timeToWindow: null,
    intervalsToWindow: null,
    dosesPerDay,
    dailyAmount: spec.amount * dosesPerDay,
    troughDistance: window ? distance : null,
    note: undetermined > 0 ? `${undetermined} of ${N} subjects have no steady state with this regimen; they count as not attaining` : null,
    rank: 0,
    population: { joint: jointShare, targets: shares, trough: troughs.spread, peak: peaks.spread, undetermined, tier: 0 },
  };
  return { proposal, distance };
}

/** Column `col` of regimen r for every subject into `out`. */
function extract(figures: Float64Array, r: number, N: number, cols: number, col: number, out: Float64Array): Float64Array {
  for (let s = 0; s < N; s++) out[s] = figures[(r * N + s) * cols + col];
  return out;
}

/** The candidates in the order readRegimens makes them: amounts, then intervals, then durations. */
function candidates(settings: ProposeSettings): Spec[] {
  const out: Spec[] = [];
  for (const amount of settings.amounts) for (const interval of settings.intervals) for (const duration of settings.durations) out.push({ amount, interval, duration });
  return out;
}

/** The population section, the limits and the engine's plan of the candidates, before any subject runs. */
function planProposals(s: Scenario, model: Model, settings: ProposeSettings, limits: PopulationProposalLimits): Outcome<{ plan: PopulationPlan; specs: Spec[] }> {
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
  return { ok: true, value: { plan: plan.value, specs } };
}

/** Every problem population proposals would meet before their subjects run (the API answers them 400). */
export function checkPopulationProposals(s: Scenario, model: Model, settings: ProposeSettings, limits: PopulationProposalLimits): Problem[] {
  const planned = planProposals(s, model, settings, limits);
  return planned.ok ? [] : planned.problems;
}

/** The ranked population proposals of a scenario already read (readPropose passed), or every problem with its path. */
export function proposeForPopulation(s: Scenario, model: Model, settings: ProposeSettings, limits: PopulationProposalLimits): Outcome<ProposeResult> {
  const planned = planProposals(s, model, settings, limits);
  if (!planned.ok) return planned;
  const { plan: pl, specs } = planned.value;
  const line = (s.propose as NonNullable<Scenario['propose']>).line;
  const batch = runBatch(pl, 0, pl.subjects);
  if (!batch.ok) return { ok: false, problems: userPaths(batch.problems) };
  const N = pl.subjects;
  const scratch = Array.from({ length: 5 }, () => new Float64Array(N));
  const rows = specs.map((spec, r) => regimenRow(pl, batch.value.regimenFigures, r, spec, scratch));
  const ranked = rankPopulation(
    rows.map((row) => ({ ...row.proposal, probability: (row.proposal.population as NonNullable<Proposal['population']>).joint.probability, standardError: (row.proposal.population as NonNullable<Proposal['population']>).joint.standardError, distance: row.distance })),
    pl.day,
  );
  const proposals = ranked.order.map((i, k) => {
    const p = rows[i].proposal;
    p.rank = k + 1;
    (p.population as NonNullable<Proposal['population']>).tier = ranked.tier[i];
    return p;
  });
  const concentration = displayUnit('concentration', model.units);
  const basis: PopulationBasis = {
    subjects: N,
    seed: pl.seed,
    runs: N * specs.length,
    limits: { ...limits },
    loading: settings.loading ? LOADING_LEFT_OUT : null,
    timeToWindow: TIME_TO_WINDOW_LEFT_OUT,
    percentileRule: PERCENTILE_RULE,
    caution: POPULATION_CAUTION,
  };
  return {
    ok: true,
    value: {
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
        intervalsSimulated: 0,
        method: 'per subject and regimen (population, common random numbers)',
      },
      rankingRule: POPULATION_RANKING_RULE,
      timeToWindowDefinition: TIME_TO_WINDOW_LEFT_OUT,
      caution: PROPOSAL_CAUTION,
      population: basis,
    },
  };
}
