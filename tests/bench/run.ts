/**
 * `npm run bench`: speed and memory of the solution paths on one year of daily oral
 * doses (two-compartment model, hourly output), against an independent closed form and
 * against odex. Prints tables and writes every figure to tests/artifacts/bench.json.
 *
 * Timings are wall-clock medians (performance.now()) of consecutive runs of each job after
 * a warm-up of at least two runs and 300 ms (timing.ts says why not interleaved); they
 * depend on the machine and on whatever else it runs at the time.
 *
 * The script runs as one JavaScript bundle (esbuild, packages left external) under plain
 * node: run through tsx's module loader, every path measured 20–40% slower, the faster
 * ones more, which is the loader's cost and not the engine's.
 *
 * Last, the start-up of the built command line (the demo's own process against a bare
 * `node -e 0` in the same run, as a ratio; target ≤ 4×) and of a fresh built server
 * (first answer, idle memory), each beside the sources run through tsx (startup.ts; alone:
 * `npm run bench:startup`). Then the scenario store (store.ts) and a regimen-proposal search on a
 * saturable model (propose.ts; alone: `npm run bench:propose`).
 */
import { spawnSync } from 'node:child_process';
import { mkdirSync, writeFileSync } from 'node:fs';
import { cpus, loadavg } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { simulate, simulateModel } from '../../models/simulate.ts';
import { tuneEngine } from '../../server/engine-flags.ts';
import { singleDose, singleDoseVsExpm, superposed } from './closed-form.ts';
import { GridSeries, prepare, readModel, runEngine, runOdex, type EngineRun, type OdexRun } from './paths.ts';
import { phaseNames, simulatePhases, type PhaseName } from './phases.ts';
import { measureStartup, startupReport } from './startup.ts';
import { measurePopulation, populationReport } from './population.ts';
import { measureStore, storeReport, storeTargets } from './store.ts';
import { measurePropose, proposeReport, proposeTargets } from './propose.ts';
import { fitReport, fitTargets, measureFit } from './fit.ts';
import { AMOUNT_SCALE, halvexin, linearScenario, saturableScenario, type SolverBlock } from './scenario.ts';
import { summarise, timeBlocks, type Job, type Timing } from './timing.ts';

// The engine as the server and the command line run it (server/engine-flags.ts).
tuneEngine();

const here = dirname(fileURLToPath(import.meta.url));
const root = join(here, '..', '..');
const artifacts = join(root, 'tests', 'artifacts');

const TOLERANCES = [1e-6, 1e-7, 1e-8, 1e-9, 1e-10];
const ODEX_TOLERANCES = [1e-4, 1e-5, 1e-6, 1e-7, 1e-8, 1e-9, 1e-10, 1e-11, 1e-12];
const METHODS = ['dopri5', 'dop853', 'auto'] as const;
/** rtol of the adaptive runs whose full simulate() is also timed. */
const SIMULATE_RTOL = 1e-8;
/** odex's first trial step in each segment (h): 0.01 h needed slightly fewer evaluations than its default 1e-4 h. */
const ODEX_FIRST_STEP = 0.01;
const TARGET_ODEX_RATIO = 3;
const AIM_ODEX_RATIO = 5;
const TARGET_EXACT_RATIO = 20;
const TARGET_SATURABLE_MS = 50;
const TARGET_MEMORY_MB = 150;

const wallStart = performance.now();

// ---------- formatting ----------
const sci = (v: number | null, digits = 2) => (v === null || !Number.isFinite(v) ? 'n/a' : v.toExponential(digits));
const ms = (v: number | null) => (v === null || !Number.isFinite(v) ? 'n/a' : v < 10 ? v.toFixed(2) : v < 100 ? v.toFixed(1) : v.toFixed(0));
const ratio = (v: number | null) => (v === null || !Number.isFinite(v) ? 'n/a' : `${v.toFixed(v < 10 ? 2 : 1)}×`);
const passFail = (ok: boolean) => (ok ? 'PASS' : 'FAIL');

function table(headers: string[], rows: string[][], align: ('l' | 'r')[] = []): string {
  const widths = headers.map((h, i) => Math.max(h.length, ...rows.map((r) => (r[i] ?? '').length)));
  const cell = (s: string, i: number) => ((align[i] ?? 'r') === 'l' ? s.padEnd(widths[i]) : s.padStart(widths[i]));
  const line = (r: string[]) => r.map((s, i) => cell(s ?? '', i)).join('  ');
  return [line(headers), widths.map((w) => '-'.repeat(w)).join('  '), ...rows.map(line)].join('\n');
}

function markdown(headers: string[], rows: string[][]): string {
  return [`| ${headers.join(' | ')} |`, `|${headers.map(() => '---').join('|')}|`, ...rows.map((r) => `| ${r.join(' | ')} |`)].join('\n');
}

function section(title: string): void {
  console.log(`\n=== ${title} ${'='.repeat(Math.max(0, 86 - title.length))}`);
}

// ---------- scenario and reference ----------
section('Scenario');
const atolOf = (rtol: number) => rtol * AMOUNT_SCALE;
const exactPrepared = prepare(linearScenario({ method: 'exact' }));
const rows = exactPrepared.rows;
console.log(
  [
    `Fictional oral compound "halvexin": gut depot → central (${halvexin.v1} L) ↔ peripheral (${halvexin.v2} L), first-order elimination`,
    `(ka ${halvexin.ka} 1/h, CL ${halvexin.cl} L/h, Q ${halvexin.q} L/h); ${halvexin.dose} mg × F ${halvexin.bioavailability} every ${halvexin.every} h × ${halvexin.count} doses;`,
    `output every 1 h over ${halvexin.end} h: ${exactPrepared.model.outputTimes.length} output times, ${rows.times.length} rows (a bolus adds a before/after row).`,
    `State: 3 amounts + 2 AUCs + eliminated amount (6 components). Tolerances: atol = rtol × ${AMOUNT_SCALE} mg.`,
    `Machine: ${cpus().length} × ${cpus()[0]?.model ?? 'cpu'}, Node ${process.version}, load average ${loadavg().map((v) => v.toFixed(2)).join(' ')}.`,
  ].join('\n'),
);

section('Reference: exact path vs superposition of single-dose closed forms');
const reference = runEngine(exactPrepared);
const cRef = reference.grid.concentration;
const cMax = cRef.reduce((m, v) => Math.max(m, v), 0);
const sd = singleDose();
const expmCheck = singleDoseVsExpm(sd, [0.25, 1, 3, 8, 24, 72, 240]);
// Off-grid times (none falls on a dose time): the exact path's stateAt builds a fresh propagator for each.
const offGrid = Array.from({ length: 300 }, (_, j) => 0.37 + (j * (halvexin.end - 0.74)) / 299);
const probeState = new Float64Array(exactPrepared.system.dimension);
const relDiff = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);
let offCentral = 0;
let offPeripheral = 0;
for (const t of offGrid) {
  reference.trajectory.stateAt(t, 'right', probeState);
  const cf = superposed(sd, t, 1);
  offCentral = Math.max(offCentral, relDiff(probeState[1], cf[1]));
  offPeripheral = Math.max(offPeripheral, relDiff(probeState[2], cf[2]));
}
// Every 30th row of the hourly grid (marched with cached propagators), sides included.
let gridCentral = 0;
let gridPeripheral = 0;
let gridChecked = 0;
for (let r = 1; r < rows.times.length; r += 30) {
  const cf = superposed(sd, rows.times[r], rows.sides[r] === 0 ? 0 : 1);
  if (cf[1] === 0) continue;
  gridCentral = Math.max(gridCentral, relDiff(reference.grid.central[r], cf[1]));
  gridPeripheral = Math.max(gridPeripheral, relDiff(reference.grid.peripheral[r], cf[2]));
  gridChecked++;
}
console.log(
  table(
    ['check', 'points', 'central', 'peripheral'],
    [
      ['single-dose tri-exponential vs mathjs expm(K·τ)', '7', sci(expmCheck), ''],
      ['exact path stateAt() at off-grid times', String(offGrid.length), sci(offCentral), sci(offPeripheral)],
      ['exact path hourly grid (every 30th row)', String(gridChecked), sci(gridCentral), sci(gridPeripheral)],
    ],
    ['l', 'r', 'r', 'r'],
  ),
);
console.log(`(max pointwise relative difference of the amount; eigenvalues ${sd.lambdas.map((l) => l.toPrecision(6)).join(', ')} 1/h; Cmax ${cMax.toFixed(4)} mg/L)`);
const referenceFigures = {
  singleDoseVsExpm: expmCheck,
  offGrid: { points: offGrid.length, central: offCentral, peripheral: offPeripheral },
  grid: { points: gridChecked, central: gridCentral, peripheral: gridPeripheral },
  lambdas: sd.lambdas,
  cMax,
};

function gridError(c: Float64Array): number {
  let worst = 0;
  for (let i = 0; i < c.length; i++) worst = Math.max(worst, Math.abs(c[i] - cRef[i]));
  return worst / cMax;
}

// ---------- timed runs: solve + output grid ----------
section('Solve + output grid (solveSchedule + trajectory.sample; odex driven over the same breakpoints)');
interface RunRow {
  key: string;
  path: 'exact' | 'adaptive' | 'odex';
  method: string;
  rtol: number | null;
  atol: number | null;
  error: number;
  evaluations: number;
  accepted: number;
  rejected: number;
  propagators: number;
  methodsUsed: string[];
  timing: Timing;
  simulate: Timing | null;
}

type AnyRun = { engine: EngineRun } | { odex: OdexRun };
const jobs: Job<AnyRun>[] = [];
const meta = new Map<string, { path: RunRow['path']; method: string; rtol: number | null; solver: SolverBlock | null }>();
const exactGrid = new GridSeries(rows.times.length);
jobs.push({ key: 'exact', run: () => ({ engine: runEngine(exactPrepared, exactGrid) }) });
meta.set('exact', { path: 'exact', method: 'exact', rtol: null, solver: { method: 'exact' } });
for (const method of METHODS) {
  for (const rtol of TOLERANCES) {
    const solver: SolverBlock = { method, rtol, atol: atolOf(rtol) };
    const p = prepare(linearScenario(solver), method === 'auto');
    const key = `${method}@${rtol}`;
    const grid = new GridSeries(rows.times.length);
    jobs.push({ key, run: () => ({ engine: runEngine(p, grid) }) });
    meta.set(key, { path: 'adaptive', method, rtol, solver });
  }
}
for (const rtol of ODEX_TOLERANCES) {
  const key = `odex@${rtol}`;
  const grid = new GridSeries(rows.times.length);
  jobs.push({ key, run: () => ({ odex: runOdex(exactPrepared.schedule, rows, rtol, atolOf(rtol), ODEX_FIRST_STEP, grid) }) });
  meta.set(key, { path: 'odex', method: 'odex', rtol, solver: null });
}
// At least 7 runs and 300 ms of runs per job: sub-millisecond jobs get dozens, so one hiccup does not move their median.
const timed = timeBlocks(jobs, { warmups: 2, minReps: 7, maxReps: 101, budgetMs: 300 });

// Full simulate() (normalise, solve, grid, exposure figures, steady state) for context: the
// exact path and each adaptive method at rtol 1e-8 (all tolerances would double the run time).
// For 'auto' the model is marked non-linear after normalisation (simulateModel), as above.
const simJobs: Job<unknown>[] = [];
for (const [key, m] of meta) {
  if (!m.solver || (m.rtol !== null && m.rtol !== SIMULATE_RTOL)) continue;
  const scenario = linearScenario(m.solver);
  simJobs.push({
    key,
    run: m.method === 'auto' ? () => simulateModel(readModel(scenario, true)) : () => simulate(scenario),
  });
}
const simTimed = new Map(timeBlocks(simJobs, { warmups: 2, minReps: 5, maxReps: 7, budgetMs: 1_500 }).map((r) => [r.key, r.timing]));

const runs: RunRow[] = timed.map(({ key, timing, value }) => {
  const m = meta.get(key) as NonNullable<ReturnType<typeof meta.get>>;
  const base = { key, path: m.path, method: m.method, rtol: m.rtol, atol: m.rtol === null ? null : atolOf(m.rtol), timing, simulate: simTimed.get(key) ?? null };
  if ('engine' in value) {
    const e = value.engine;
    return {
      ...base,
      error: gridError(e.grid.concentration),
      evaluations: e.stats.derivativeEvaluations,
      accepted: e.stats.acceptedSteps,
      rejected: e.stats.rejectedSteps,
      propagators: e.propagators,
      methodsUsed: e.methodsUsed,
    };
  }
  const o = value.odex;
  return { ...base, error: gridError(o.grid.concentration), evaluations: o.evaluations, accepted: o.accepted, rejected: o.rejected, propagators: 0, methodsUsed: ['odex'] };
});
const byKey = new Map(runs.map((r) => [r.key, r]));
const exactRun = byKey.get('exact') as RunRow;

console.log(
  table(
    ['path', 'method', 'rtol', 'max rel err', 'RHS evals', 'steps acc/rej', 'median ms', 'min ms', 'reps', 'simulate() ms'],
    runs.map((r) => [
      r.path,
      r.method === 'auto' ? `auto→${r.methodsUsed.join('+')}` : r.method,
      r.rtol === null ? '-' : sci(r.rtol, 0),
      r.path === 'exact' ? '(reference)' : sci(r.error),
      r.path === 'exact' ? `${r.propagators} expm` : String(r.evaluations),
      r.path === 'exact' ? '-' : `${r.accepted}/${r.rejected}`,
      ms(r.timing.median),
      ms(r.timing.min),
      String(r.timing.reps),
      r.simulate ? ms(r.simulate.median) : '-',
    ]),
    ['l', 'l'],
  ),
);
console.log(
  [
    `max rel err: max over the ${rows.times.length} rows of |C − C_exact| (central) / max C_exact; median/min over the timed rounds; simulate() timed for exact and rtol ${sci(SIMULATE_RTOL, 0)} only.`,
    `auto rows: the model is marked non-linear so that 'auto' runs its adaptive integrator (on a linear model 'auto' itself takes the exact path, i.e. the exact row).`,
    `odex: first step ${ODEX_FIRST_STEP} h per segment, dense output on (its interpolation-error control on), RHS calls counted in the wrapper.`,
  ].join('\n'),
);

// ---------- ratios ----------
section(`Adaptive vs odex at matched or better error (target ≥ ${TARGET_ODEX_RATIO}×, aim ${AIM_ODEX_RATIO}×)`);
const odexRuns = runs.filter((r) => r.path === 'odex');
const byError = [...odexRuns].sort((a, b) => a.error - b.error);

/** odex median time at our error, by log–log interpolation between the odex runs that bracket it. */
function interpolatedOdexTime(error: number): number | null {
  for (let i = 0; i + 1 < byError.length; i++) {
    const lo = byError[i];
    const hi = byError[i + 1];
    if (error >= lo.error && error <= hi.error && hi.error > lo.error) {
      const w = (Math.log(error) - Math.log(lo.error)) / (Math.log(hi.error) - Math.log(lo.error));
      return Math.exp(Math.log(lo.timing.median) + w * (Math.log(hi.timing.median) - Math.log(lo.timing.median)));
    }
  }
  return null;
}

interface Pairing {
  key: string;
  method: string;
  methodsUsed: string[];
  rtol: number;
  error: number;
  median: number;
  odexRtol: number | null;
  odexError: number | null;
  odexMedian: number | null;
  speedup: number | null;
  interpolatedSpeedup: number | null;
  /** The same pairing on the fastest repetitions (less sensitive to load from elsewhere). */
  minSpeedup: number | null;
  pass: boolean;
}
const pairings: Pairing[] = runs
  .filter((r) => r.path === 'adaptive')
  .map((r) => {
    // The odex run with the smallest error that is still ≥ ours: we are at least as accurate as it.
    const partner = byError.find((o) => o.error >= r.error) ?? null;
    const speedup = partner ? partner.timing.median / r.timing.median : null;
    const interp = interpolatedOdexTime(r.error);
    return {
      key: r.key,
      method: r.method,
      methodsUsed: r.methodsUsed,
      rtol: r.rtol as number,
      error: r.error,
      median: r.timing.median,
      odexRtol: partner?.rtol ?? null,
      odexError: partner?.error ?? null,
      odexMedian: partner?.timing.median ?? null,
      speedup,
      interpolatedSpeedup: interp === null ? null : interp / r.timing.median,
      minSpeedup: partner ? partner.timing.min / r.timing.min : null,
      pass: speedup !== null && speedup >= TARGET_ODEX_RATIO,
    };
  });
console.log(
  table(
    ['method', 'rtol', 'our err', 'our ms', 'odex rtol', 'odex err', 'odex ms', 'speed ratio', `≥${TARGET_ODEX_RATIO}×`, 'ratio of mins', 'interp. ratio'],
    pairings.map((p) => [
      p.method === 'auto' ? `auto→${p.methodsUsed.join('+')}` : p.method,
      sci(p.rtol, 0),
      sci(p.error),
      ms(p.median),
      p.odexRtol === null ? 'none' : sci(p.odexRtol, 0),
      sci(p.odexError),
      ms(p.odexMedian),
      ratio(p.speedup),
      p.speedup === null ? 'n/a' : passFail(p.pass),
      ratio(p.minSpeedup),
      ratio(p.interpolatedSpeedup),
    ]),
    ['l'],
  ),
);
console.log(
  'speed ratio = odex median / our median, odex paired with its run of smallest error still ≥ ours (so ours is at least as accurate).\n' +
    'ratio of mins = the same pairing on the fastest repetition of each; interp. ratio = odex median interpolated (log–log)\n' +
    'to exactly our error / our median. Both are cross-checks, not the criterion.',
);

section(`Exact vs adaptive (target ≥ ${TARGET_EXACT_RATIO}× against the adaptive path at rtol 1e-8)`);
const exactRatios = METHODS.map((method) => {
  const r = byKey.get(`${method}@1e-8`) as RunRow;
  const value = r.timing.median / exactRun.timing.median;
  return { method, methodsUsed: r.methodsUsed, adaptiveMedian: r.timing.median, exactMedian: exactRun.timing.median, ratio: value, pass: value >= TARGET_EXACT_RATIO };
});
console.log(
  table(
    ['adaptive @ rtol 1e-8', 'adaptive ms', 'exact ms', 'ratio', 'verdict'],
    exactRatios.map((e) => [
      e.method === 'auto' ? `auto→${e.methodsUsed.join('+')}` : e.method,
      ms(e.adaptiveMedian),
      ms(exactRun.timing.median),
      ratio(e.ratio),
      e.method === 'auto' ? passFail(e.pass) : '(context)',
    ]),
    ['l'],
  ),
);
const exactVsAuto = exactRatios.find((e) => e.method === 'auto') as (typeof exactRatios)[number];
console.log(`exact path: ${exactRun.propagators} matrix exponentials; full simulate() ${ms(exactRun.simulate?.median ?? null)} ms.`);

// ---------- saturable ----------
section(`Saturable variant: full simulate(), method 'auto' (target < ${TARGET_SATURABLE_MS} ms)`);
const saturable = saturableScenario({ method: 'auto' });
const satCheck = simulate(saturable);
if (!satCheck.ok) throw new Error(JSON.stringify(satCheck.problems));
const satCentral = satCheck.value.compartments[1].concentration as Float64Array;
const satCmax = satCentral.reduce((m, v) => Math.max(m, v), 0);
const [satTimed] = timeBlocks([{ key: 'saturable', run: () => simulate(saturable) }], { warmups: 2, minReps: 9, maxReps: 15, budgetMs: 4000 });
const phaseSamples = new Map<PhaseName, number[]>(phaseNames.map((n) => [n, []]));
for (let i = 0; i < 7; i++) {
  const ph = simulatePhases(saturable);
  if (i < 2) continue;
  for (const n of phaseNames) (phaseSamples.get(n) as number[]).push(ph[n]);
}
const phaseMedians = phaseNames.map((n) => ({ phase: n, median: summarise(phaseSamples.get(n) as number[]).median }));
const satDiag = satCheck.value.diagnostics;
const satPass = satTimed.timing.median < TARGET_SATURABLE_MS;
console.log(
  `Elimination vmax ${halvexin.vmax} mg/h, km ${halvexin.km} mg/L; Cmax reached ${satCmax.toFixed(3)} mg/L = ${(satCmax / halvexin.km).toFixed(2)} × km ` +
    `(clearance at Cmax is ${((halvexin.km / (halvexin.km + satCmax)) * 100).toFixed(0)}% of its low-concentration value).`,
);
console.log(
  `path ${satDiag.path}, methods ${satDiag.methodsUsed.join('+')}, ${satDiag.acceptedSteps} steps, ${satDiag.derivativeEvaluations} RHS evals; ` +
    `steady state: ${satCheck.value.metrics.steadyState?.message ?? 'none'}.`,
);
console.log(`simulate() median ${ms(satTimed.timing.median)} ms (min ${ms(satTimed.timing.min)}, ${satTimed.timing.reps} reps): ${passFail(satPass)}`);
console.log('Phases of one simulate() (median of 5 after 2 warm-ups):');
const phaseTotal = phaseMedians.reduce((s, p) => s + p.median, 0);
console.log(
  table(
    ['phase', 'ms', 'share'],
    phaseMedians.map((p) => [p.phase, ms(p.median), `${((100 * p.median) / phaseTotal).toFixed(0)}%`]),
    ['l'],
  ),
);

// ---------- memory ----------
section(`Memory: 1,000,000 output times in a child process (target < ${TARGET_MEMORY_MB} MB for simulate())`);
interface MemoryReport {
  kind: string;
  method: string;
  path: string;
  gridPoints: number;
  rows: number;
  baselineRssMB: number;
  simulatePeakMB: number;
  simulateMs: number;
  /** After simulate() and a forced collection, with the result still referenced. */
  simulateRetainedRssMB: number;
  retainedHeapMB: number;
  retainedArrayBuffersMB: number;
  jsonPeakMB: number | null;
  jsonMs: number | null;
  jsonChars: number | null;
}
function memoryChild(method: string, json: boolean): MemoryReport {
  const child = spawnSync(process.execPath, ['--expose-gc', '--import', 'tsx', join(here, 'memory-child.ts'), method, json ? 'json' : 'no-json'], {
    cwd: root,
    encoding: 'utf8',
    maxBuffer: 1 << 20,
  });
  const line = child.stdout.trim().split('\n').pop() ?? '';
  if (child.status !== 0 || !line.startsWith('{')) throw new Error(`memory child failed (${child.status}): ${child.stderr}`);
  return JSON.parse(line) as MemoryReport;
}
// The peak depends on when the garbage collector runs (and so on the machine's load):
// each configuration runs MEMORY_RUNS times and the run with the median increase is reported.
const MEMORY_RUNS = 3;
const increase = (m: MemoryReport) => m.simulatePeakMB - m.baselineRssMB;
function memoryMedian(method: string, jsonOnFirst: boolean, runs: number): { report: MemoryReport; increases: number[] } {
  const reports = Array.from({ length: runs }, (_, i) => memoryChild(method, jsonOnFirst && i === 0));
  const sorted = [...reports].sort((a, b) => increase(a) - increase(b));
  const median = { ...sorted[sorted.length >> 1] };
  // JSON figures come from the first run.
  median.jsonPeakMB = reports[0].jsonPeakMB;
  median.jsonMs = reports[0].jsonMs;
  median.jsonChars = reports[0].jsonChars;
  return { report: median, increases: reports.map(increase) };
}
// The verdict is on the default path ('auto' → exact); the adaptive path (DOP853, one run) is context.
const memoryRuns = [memoryMedian('auto', true, MEMORY_RUNS), memoryMedian('dop853', false, 1)];
const memory = memoryRuns.map((m) => m.report);
console.log(
  table(
    ['method', 'path', 'rows', 'RSS before', 'peak after simulate()', 'increase (median)', 'increases (runs)', 'result retains', 'simulate() s', 'peak after JSON', 'JSON s', 'verdict'],
    memoryRuns.map(({ report: m, increases }) => [
      m.method,
      m.path,
      String(m.rows),
      `${m.baselineRssMB.toFixed(0)} MB`,
      `${m.simulatePeakMB.toFixed(0)} MB`,
      `${increase(m).toFixed(0)} MB`,
      increases.map((v) => v.toFixed(0)).join(', '),
      `${m.retainedArrayBuffersMB.toFixed(0)} MB`,
      (m.simulateMs / 1000).toFixed(2),
      m.jsonPeakMB === null ? '-' : `${m.jsonPeakMB.toFixed(0)} MB`,
      m.jsonMs === null ? '-' : (m.jsonMs / 1000).toFixed(2),
      m.method === 'auto' ? passFail(increase(m) < TARGET_MEMORY_MB) : `(context) ${passFail(increase(m) < TARGET_MEMORY_MB)}`,
    ]),
    ['l', 'l'],
  ),
);
console.log(
  'Peak = process.resourceUsage().maxRSS (whole process, high-water mark). "RSS before" is after loading the engine under tsx\n' +
    '(node + tsx + zod + mathjs), so the increase is what simulate() itself needs; the verdict is on the median increase. The peak\n' +
    'depends on when the collector runs (it varies with load); "result retains" = typed-array bytes alive after a forced GC with the\n' +
    'result still referenced (the floor). JSON = resultToJsonText().',
);
const memoryPrimary = memory[0];
const memoryIncrease = increase(memoryPrimary);
const memoryPass = memoryIncrease < TARGET_MEMORY_MB;

// ---------- start-up ----------
section('Start-up: the built command line and server against a bare node start (startup.ts)');
const startup = await measureStartup();
console.log(startupReport(startup));

// ---------- virtual populations ----------
section('Virtual populations: the population path per subject, 1,000 and 10,000 subjects (population.ts)');
const population = await measurePopulation();
console.log(populationReport(population));

// ---------- scenario store ----------
section('Scenario store: save, list, search and history on a fresh SQLite store (store.ts)');
const store = measureStore();
console.log(storeReport(store));

// ---------- regimen proposals ----------
section('Regimen proposals: 10 amounts × 4 intervals on a saturable model, beside plain simulate() of each (propose.ts)');
const propose = measurePropose();
console.log(proposeReport(propose));

// ---------- fitting ----------
section('Fitting individual parameters: MAP, two compartments, 6 levels over 10 days, four quantities; the saturable variant (fit.ts)');
const fitting = measureFit();
console.log(fitReport(fitting));

// ---------- summary ----------
section('Summary (markdown)');
const best = (method: string) => pairings.filter((p) => p.method === method);
const summaryRows: string[][] = [
  [
    'Exact path vs closed-form superposition',
    `max rel. diff ${sci(Math.max(offCentral, gridCentral))} (central amount)`,
    '~1e-12',
    Math.max(offCentral, gridCentral) < 1e-10 ? 'PASS' : 'FAIL',
  ],
  ...METHODS.flatMap((method) =>
    best(method).map((p) => [
      `${method === 'auto' ? `auto (${p.methodsUsed.join('+')})` : method} rtol ${sci(p.rtol, 0)} vs odex`,
      p.speedup === null
        ? 'no odex run as inaccurate'
        : `${ratio(p.speedup)} (${ms(p.median)} vs ${ms(p.odexMedian)} ms; err ${sci(p.error, 1)} vs ${sci(p.odexError, 1)} @ odex ${sci(p.odexRtol, 0)})`,
      `≥ ${TARGET_ODEX_RATIO}× (aim ${AIM_ODEX_RATIO}×)`,
      p.speedup === null ? 'n/a' : passFail(p.pass),
    ]),
  ),
  [
    'Exact vs adaptive (auto, rtol 1e-8)',
    `${ratio(exactVsAuto.ratio)} (${ms(exactVsAuto.exactMedian)} vs ${ms(exactVsAuto.adaptiveMedian)} ms)`,
    `≥ ${TARGET_EXACT_RATIO}×`,
    passFail(exactVsAuto.pass),
  ],
  ['Saturable variant, full simulate() (auto)', `${ms(satTimed.timing.median)} ms`, `< ${TARGET_SATURABLE_MS} ms`, passFail(satPass)],
  [
    'Memory, 1e6 output times, simulate()',
    `+${memoryIncrease.toFixed(0)} MB (process peak ${memoryPrimary.simulatePeakMB.toFixed(0)} MB, of which ${memoryPrimary.baselineRssMB.toFixed(0)} MB before the call)`,
    `< ${TARGET_MEMORY_MB} MB`,
    passFail(memoryPass),
  ],
  [
    'Demo process (`node dist/server/cli.js simulate … --format text`) vs `node -e 0`',
    `${ratio(startup.cli.ratio)} (${ms(startup.cli.built.median)} vs ${ms(startup.cli.bare.median)} ms)${startup.cli.sourcesRatio === null ? '' : `; from the sources through tsx ${ratio(startup.cli.sourcesRatio)}`}`,
    `≤ ${startup.target}×`,
    passFail(startup.pass),
  ],
  [
    'Fresh built server: spawn to first 200 of /api/simulate; idle RSS with its workers',
    `${ms(startup.server.built.firstOk.median)} ms; ${startup.server.built.idleRss ? `${startup.server.built.idleRss.median.toFixed(0)} MB` : 'n/a'}` +
      (startup.server.sources ? ` (sources through tsx: ${ms(startup.server.sources.firstOk.median)} ms; ${startup.server.sources.idleRss ? `${startup.server.sources.idleRss.median.toFixed(0)} MB` : 'n/a'})` : ''),
    '(context)',
    '',
  ],
  [
    'Store: save a version (saveVersion, synchronous = FULL), median',
    `${ms(store.save.ours.median)} ms (p95 ${ms(store.save.ours.p95)}); ${ratio(store.save.ratio)} a plain INSERT of the same bytes (${ms(store.save.plainInsert.median)} ms)`,
    `< ${storeTargets.saveMs} ms`,
    passFail(store.pass.save),
  ],
  [
    `Store: list the first 100 of ${store.listFirst100.total.toLocaleString('en')} scenarios, with the total`,
    `${ms(store.listFirst100.ours.median)} ms; ${ratio(store.listFirst100.ratio)} the raw SELECTs; all of them ${ms(store.listAll.ours.median)} ms; a search ${ms(store.search.ours.median)} ms`,
    `< ${storeTargets.listMs} ms`,
    passFail(store.pass.list),
  ],
  [
    `Store: history of ${store.history.versions.toLocaleString('en')} versions`,
    `${ms(store.history.ours.median)} ms; ${ratio(store.history.ratio)} the raw SELECT`,
    `< ${storeTargets.historyMs} ms`,
    passFail(store.pass.history),
  ],
  [
    `Regimen proposals: ${propose.regimens} regimens (10 amounts × 4 intervals), saturable model, median`,
    `${ms(propose.search.median)} ms; ${ratio(propose.ratio)} plain simulate() of each over 100 intervals (${ms(propose.reference.median)} ms)`,
    `< ${proposeTargets.searchMs} ms`,
    passFail(propose.pass),
  ],
  [
    'Fit: MAP, two compartments, 6 levels, 4 quantities, median (no band)',
    `${ms(fitting.linear.fit.median)} ms; ${ratio(fitting.linear.ratio)} one simulate() of the model (${ms(fitting.linear.evaluation.median)} ms)`,
    `< ${fitTargets.linearMs} ms`,
    passFail(fitting.linear.pass),
  ],
  [
    'Fit: the same, saturable elimination (Vmax, Km, V1, V2), median (no band)',
    `${ms(fitting.saturable.fit.median)} ms; ${ratio(fitting.saturable.ratio)} one simulate() of the model (${ms(fitting.saturable.evaluation.median)} ms)`,
    `< ${fitTargets.saturableMs} ms`,
    passFail(fitting.saturable.pass),
  ],
  [
    'Memory, 1e6 output times, + resultToJsonText()',
    memoryPrimary.jsonPeakMB === null ? '-' : `process peak ${memoryPrimary.jsonPeakMB.toFixed(0)} MB, ${((memoryPrimary.jsonMs ?? 0) / 1000).toFixed(1)} s`,
    '(context)',
    '',
  ],
];
const summaryMarkdown =
  `Benchmark (\`npm run bench\`, ${cpus().length} × ${cpus()[0]?.model ?? 'cpu'}, Node ${process.version}): one year of daily oral doses, ` +
  `two-compartment model, hourly output (${rows.times.length} rows); solve + output grid, median wall time.\n\n` +
  markdown(['Check', 'Result', 'Target', 'Verdict'], summaryRows);
console.log(summaryMarkdown);

// ---------- artifact ----------
mkdirSync(artifacts, { recursive: true });
const artifact = {
  generated: new Date().toISOString(),
  machine: { cpus: cpus().length, model: cpus()[0]?.model ?? null, node: process.version, loadAverageAtStart: loadavg() },
  scenario: { ...halvexin, outputStep: 1, outputTimes: exactPrepared.model.outputTimes.length, rows: rows.times.length, amountScale: AMOUNT_SCALE },
  reference: referenceFigures,
  runs,
  pairings,
  exactVsAdaptive: exactRatios,
  saturable: {
    cMax: satCmax,
    cMaxOverKm: satCmax / halvexin.km,
    path: satDiag.path,
    methodsUsed: satDiag.methodsUsed,
    acceptedSteps: satDiag.acceptedSteps,
    derivativeEvaluations: satDiag.derivativeEvaluations,
    simulate: satTimed.timing,
    phases: phaseMedians,
    pass: satPass,
  },
  memory: { runs: memory, primaryIncreaseMB: memoryIncrease, pass: memoryPass },
  startup,
  population,
  store,
  propose,
  fitting,
  targets: {
    odexRatio: TARGET_ODEX_RATIO,
    odexRatioAim: AIM_ODEX_RATIO,
    exactRatio: TARGET_EXACT_RATIO,
    saturableMs: TARGET_SATURABLE_MS,
    memoryMB: TARGET_MEMORY_MB,
    startupRatio: startup.target,
  },
  summaryMarkdown,
  wallSeconds: (performance.now() - wallStart) / 1000,
};
writeFileSync(join(artifacts, 'bench.json'), JSON.stringify(artifact, null, 2) + '\n');
console.log(`\nFigures written to tests/artifacts/bench.json (bench took ${artifact.wallSeconds.toFixed(0)} s).`);
