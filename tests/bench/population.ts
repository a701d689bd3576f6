/**
 * Population figures for `npm run bench` (alone: `npm run bench:population`): the benchmark's
 * two-compartment oral model (one dose a day for a year, hourly bands) as a virtual population.
 *  - per subject: the population path (covariates, model, exact solve, the grid, first-interval
 *    and steady-state figures) against the exact solve alone, one thread, as a ratio;
 *  - 1,000 subjects on the machine's threads, end to end (plan, batches, summary): target < 1 s
 *    on 2 cores on the exact path (the median of five runs, each run listed), < 15 s for the
 *    saturable variant;
 *  - 10,000 subjects × 500 reported times: peak resident memory of the whole process (target
 *    < 500 MB), and the time against 1,000 subjects of the same (cost linear in subjects: ≈ 10×).
 * Each population run happens in a child process of its own, so that one run's memory and
 * garbage never count against the next.
 */
import { spawnSync } from 'node:child_process';
import { buildSync } from 'esbuild';
import { availableParallelism } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildSchedule } from '../../models/building/events.ts';
import { CompartmentSystem } from '../../models/building/system.ts';
import { planPopulation, runBatch, summarise } from '../../models/population/population.ts';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { emptyStats } from '../../models/solving/numerics/ode-system.ts';
import { solveSchedule } from '../../models/solving/solve.ts';
import { withHugePages } from '../../server/huge-pages.ts';
import { runThreads, type ThreadOptions } from '../../server/population-threads.ts';
import { linearScenario, saturableScenario } from './scenario.ts';

const here = dirname(fileURLToPath(import.meta.url));

/** Packages left out of the population benchmark's bundle (the build tool, and what the engine never loads). */
export const POPULATION_BENCH_EXTERNAL = ['esbuild', 'better-sqlite3', 'pdfkit', '@fontsource/*', 'express', 'helmet'];
const root = join(here, '..', '..');

/** The benchmark scenario with between-subject variability, a weight covariate and two targets. */
export function populationScenario(saturable: boolean, subjects: number, step = 1, end?: number): Record<string, unknown> {
  const base = (saturable ? saturableScenario : linearScenario)({ method: 'auto' }, step) as {
    compartments: { id: string; volume?: number | object }[];
    transfers: Record<string, unknown>[];
    [k: string]: unknown;
  };
  const transfers = base.transfers.map((t) => ({ ...t }));
  transfers[0].k = { typical: transfers[0].k, cv: '40%', name: 'ka' };
  if (saturable) transfers[1].vmax = { typical: transfers[1].vmax, cv: '30%', name: 'Vmax', covariates: [{ on: 'weight', power: 0.75, reference: '70 kg' }] };
  else transfers[1].cl = { typical: transfers[1].cl, cv: '30%', name: 'CL', covariates: [{ on: 'weight', power: 0.75, reference: '70 kg' }] };
  const compartments = base.compartments.map((c) => (c.id === 'central' ? { ...c, volume: { typical: c.volume, cv: '20%', name: 'V1', covariates: [{ on: 'weight', power: 1, reference: '70 kg' }] } } : c));
  return {
    ...base,
    ...(end === undefined ? {} : { output: { end, step } }),
    subject: { weight: '70 kg' },
    compartments,
    transfers,
    population: {
      subjects,
      seed: 20261202,
      covariates: { weight: { distribution: 'normal', mean: '72 kg', sd: '13 kg', min: '40 kg', max: '140 kg' } },
      correlations: [{ between: [saturable ? 'Vmax' : 'CL', 'V1'], value: 0.3 }],
      targets: [{ trough: { atLeast: '0.5 mg/L' } }, { peak: { atMost: '4 mg/L' } }],
    },
  };
}

export interface PopulationRun {
  subjects: number;
  times: number;
  /** Threads that computed (the calling one, and the workers it started: see workersWorthIt). */
  threads: number;
  seconds: number;
  /** The parts of `seconds`: the plan, the threads (started, run, joined) and the summary. */
  planSeconds: number;
  threadSeconds: number;
  summarySeconds: number;
  /** From the last subject done to the bands found (part of threadSeconds). */
  bandsSeconds: number;
  /** From starting the threads until the first subject is done (engine load in the threads). */
  firstSubjectSeconds: number;
  peakRssMb: number;
  subjectsWithoutSteadyState: number;
}

export interface PopulationBench {
  perSubject: { exactSolveMs: number; populationPathMs: number; ratio: number };
  /** The median of LINEAR_RUNS runs (by seconds); every run's seconds in linear1000Seconds, in the order run. */
  linear1000: PopulationRun;
  linear1000Seconds: number[];
  saturable1000: PopulationRun;
  memory1000: PopulationRun;
  memory10000: PopulationRun;
  misaligned1000: PopulationRun;
  scaling: number;
}

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)];
}

/** One thread: the exact solve of the typical subject, and a subject of the population path. */
function perSubject(): PopulationBench['perSubject'] {
  const model = normaliseScenario(linearScenario({ method: 'exact' }));
  if (!model.ok) throw new Error('benchmark scenario invalid');
  const system = new CompartmentSystem(model.value);
  const schedule = buildSchedule(model.value.administrations, model.value.compartments.length, model.value.start, model.value.end);
  const solve = () => solveSchedule(model.value, system, schedule, new Float64Array(system.dimension), emptyStats());
  const plan = planPopulation(populationScenario(false, 200));
  if (!plan.ok) throw new Error(JSON.stringify(plan.problems));
  for (let i = 0; i < 20; i++) solve();
  runBatch(plan.value, 0, 20);
  const solveRuns: number[] = [];
  const pathRuns: number[] = [];
  for (let rep = 0; rep < 5; rep++) {
    let t = performance.now();
    for (let i = 0; i < 100; i++) solve();
    solveRuns.push((performance.now() - t) / 100);
    t = performance.now();
    runBatch(plan.value, rep * 40, 40);
    pathRuns.push((performance.now() - t) / 40);
  }
  const exactSolveMs = median(solveRuns);
  const populationPathMs = median(pathRuns);
  return { exactSolveMs, populationPathMs, ratio: populationPathMs / exactSolveMs };
}

/** One population end to end in a child process: `node population.mjs run <saturable> <subjects> <step> [end]`. */
function childRun(saturable: boolean, subjects: number, step: number, end?: number): PopulationRun {
  const bundle = join(root, 'dist', 'bench', 'population.mjs');
  const out = spawnSync(process.execPath, [bundle, 'run', String(saturable), String(subjects), String(step), ...(end === undefined ? [] : [String(end)])], { encoding: 'utf8', cwd: root, env: withHugePages(process.env) });
  const line = out.stdout.trim().split('\n').pop() ?? '';
  if (out.status !== 0 || !line.startsWith('{')) throw new Error(`population run failed: ${out.stderr}`);
  return JSON.parse(line) as PopulationRun;
}

async function runHere(saturable: boolean, subjects: number, step: number, end?: number): Promise<PopulationRun> {
  const threads = availableParallelism();
  const scenario = populationScenario(saturable, subjects, step, end);
  const start = performance.now();
  const plan = planPopulation(scenario);
  if (!plan.ok) throw new Error(JSON.stringify(plan.problems));
  const planned = performance.now();
  let firstDone = NaN;
  // The last subject done: the bands follow.
  let bandsDone: number | undefined;
  const options: ThreadOptions = {
    threads,
    plan: plan.value,
    bands: true,
    worker: { kind: 'built', url: new URL(`file://${join(root, 'dist', 'server', 'population-worker.js')}`) },
    onProgress: (done) => {
      if (done > 0 && Number.isNaN(firstDone)) firstDone = performance.now();
      if (done === subjects) bandsDone = performance.now();
    },
  };
  const batches = await runThreads(scenario, {}, subjects, options);
  if (!batches.ok) throw new Error(JSON.stringify(batches.problems));
  const threadsUsed = batches.threadsUsed ?? threads;
  const ran = performance.now();
  const bandsSeconds = bandsDone === undefined ? NaN : (ran - bandsDone) / 1000;
  const result = summarise(plan.value, batches.value, batches.computed);
  if (!result.ok) throw new Error(JSON.stringify(result.problems));
  const finished = performance.now();
  const seconds = (finished - start) / 1000;
  return {
    subjects,
    times: result.value.times.length,
    threads: threadsUsed,
    seconds,
    planSeconds: (planned - start) / 1000,
    threadSeconds: (ran - planned) / 1000,
    summarySeconds: (finished - ran) / 1000,
    bandsSeconds,
    firstSubjectSeconds: (firstDone - planned) / 1000,
    peakRssMb: process.resourceUsage().maxRSS / 1024,
    subjectsWithoutSteadyState: result.value.diagnostics.subjectsWithoutSteadyState,
  };
}

/** Runs of the 1,000-subject linear population, each in a process of its own; the target is read from their median. */
const LINEAR_RUNS = 5;

export async function measurePopulation(): Promise<PopulationBench> {
  spawnSync(process.execPath, [join(root, 'scripts', 'build-server.mjs'), '--if-stale', '--quiet'], { stdio: 'inherit', cwd: root });
  buildSync({
    entryPoints: [join(root, 'tests', 'bench', 'population-run.ts')],
    bundle: true,
    platform: 'node',
    format: 'esm',
    outfile: join(root, 'dist', 'bench', 'population.mjs'),
    logLevel: 'warning',
    // The engine's packages bundled, as the built command line has them (mathjs's unit parser
    // tree-shaken, not the whole library evaluated at start-up, whose compilation would run on).
    external: POPULATION_BENCH_EXTERNAL,
  });
  const per = perSubject();
  // The 1 s target is read from the median of a few runs: one run moves by ±15% with the host's load.
  const linearRuns = Array.from({ length: LINEAR_RUNS }, () => childRun(false, 1000, 1));
  const linear1000 = [...linearRuns].sort((a, b) => a.seconds - b.seconds)[Math.floor(LINEAR_RUNS / 2)];
  const saturable1000 = childRun(true, 1000, 1);
  // 500 reported times: hourly over the first 499 h (21 daily doses), aligned with the doses.
  const memory1000 = childRun(false, 1000, 1, 499);
  const memory10000 = childRun(false, 10000, 1, 499);
  // 500 times over the whole year (a step of 8760/499 h) fall between the doses at offsets that
  // never repeat: each needs a step of its own (about 365 per subject).
  const misaligned1000 = childRun(false, 1000, 8760 / 499);
  return { perSubject: per, linear1000, linear1000Seconds: linearRuns.map((r) => r.seconds), saturable1000, memory1000, memory10000, misaligned1000, scaling: memory10000.seconds / memory1000.seconds };
}

export function populationReport(b: PopulationBench): string {
  const f = (v: number, d = 2) => v.toFixed(d);
  const run = (name: string, r: PopulationRun, target: string) =>
    `  ${name.padEnd(44)} ${f(r.seconds).padStart(7)} s  ${String(Math.round(r.peakRssMb)).padStart(5)} MB peak  (${r.subjects} subjects × ${r.times} times, ${r.threads} of ${availableParallelism()} threads used; ${target})\n` +
    `  ${''.padEnd(44)} plan ${f(r.planSeconds)} s, threads ${f(r.threadSeconds)} s (first subjects done after ${f(r.firstSubjectSeconds)} s; the bands ${f(r.bandsSeconds)} s after the last), summary ${f(r.summarySeconds)} s`;
  return [
    `  per subject, one thread: population path ${f(b.perSubject.populationPathMs, 3)} ms, exact solve alone ${f(b.perSubject.exactSolveMs, 3)} ms: ${f(b.perSubject.ratio, 1)}×`,
    run(`1,000 subjects, exact path, hourly bands (median of ${b.linear1000Seconds.length})`, b.linear1000, `target < 1 s: ${b.linear1000.seconds < 1 ? 'PASS' : 'FAIL'}`),
    `  ${''.padEnd(44)} the ${b.linear1000Seconds.length} runs: ${b.linear1000Seconds.map((x) => f(x)).join(', ')} s; ${b.linear1000Seconds.filter((x) => x < 1).length} under 1 s`,
    run('1,000 subjects, saturable, hourly bands', b.saturable1000, `target < 15 s: ${b.saturable1000.seconds < 15 ? 'PASS' : 'FAIL'}`),
    run('1,000 subjects × 500 hourly times', b.memory1000, 'the scaling reference'),
    run('10,000 subjects × 500 hourly times', b.memory10000, `target < 500 MB: ${b.memory10000.peakRssMb < 500 ? 'PASS' : 'FAIL'}`),
    `  10,000 against 1,000 subjects: ${f(b.scaling, 1)}× the time (linear: 10×)`,
    run('1,000 subjects × 500 times over a year', b.misaligned1000, 'times between the doses at offsets that never repeat'),
  ].join('\n');
}

export { runHere };
