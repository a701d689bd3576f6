/**
 * Memory probe, run in its own process by run.ts: the benchmark model with an output
 * step that gives one million reported times. Peak resident set size is read from
 * process.resourceUsage().maxRSS (kilobytes, high-water mark of the whole process) after
 * the scenario is built, after simulate(), and after the JSON conversion. Prints one JSON
 * line on stdout.
 *
 * Usage: node --import tsx tests/bench/memory-child.ts <method> [json|no-json]
 *   method: auto | exact | dopri5 | dop853 (the linear model), or saturable (the
 *   saturable variant with 'auto'); adaptive methods run at their default tolerances.
 */
import { resultToJsonText } from '../../models/result/result-format.ts';
import { simulate } from '../../models/simulate.ts';
import { halvexin, linearScenario, saturableScenario } from './scenario.ts';

const POINTS = 1_000_000;

function mb(kb: number): number {
  return kb / 1024;
}

const method = process.argv[2] ?? 'auto';
const withJson = process.argv[3] !== 'no-json';
// end/step + 1 grid times: a step of end/(POINTS − 1) gives exactly POINTS of them.
const step = halvexin.end / (POINTS - 1);
let scenario: Record<string, unknown>;
if (method === 'saturable') scenario = saturableScenario({ method: 'auto' }, step);
else if (method === 'auto' || method === 'exact' || method === 'dopri5' || method === 'dop853') scenario = linearScenario({ method }, step);
else throw new Error(`unknown method '${method}'`);

// With --expose-gc (run.ts passes it): collect before the baseline, and after simulate() to
// see what the result itself retains (its typed arrays), independent of GC timing.
const gc = (globalThis as { gc?: () => void }).gc;
gc?.();
const baselineRss = process.memoryUsage().rss / 2 ** 20;
const baselinePeak = mb(process.resourceUsage().maxRSS);

const t0 = performance.now();
const outcome = simulate(scenario);
const simulateMs = performance.now() - t0;
if (!outcome.ok) {
  process.stdout.write(JSON.stringify({ error: outcome.problems }) + '\n');
  process.exit(1);
}
const afterSimulatePeak = mb(process.resourceUsage().maxRSS);
const result = outcome.value;
gc?.();
const retained = process.memoryUsage();
const afterSimulateRss = retained.rss / 2 ** 20;
const rows = result.times.length;

let jsonMs: number | null = null;
let jsonPeak: number | null = null;
let jsonChars: number | null = null;
if (withJson) {
  const t1 = performance.now();
  const text = resultToJsonText(result);
  jsonMs = performance.now() - t1;
  jsonPeak = mb(process.resourceUsage().maxRSS);
  jsonChars = text.length;
}

process.stdout.write(
  JSON.stringify({
    kind: method === 'saturable' ? 'saturable' : 'linear',
    method,
    path: result.diagnostics.path,
    gridPoints: Math.floor(halvexin.end / step + 1e-9) + 1,
    rows,
    baselineRssMB: baselineRss,
    baselinePeakMB: baselinePeak,
    simulatePeakMB: afterSimulatePeak,
    simulateRetainedRssMB: afterSimulateRss,
    retainedHeapMB: retained.heapUsed / 2 ** 20,
    retainedArrayBuffersMB: retained.arrayBuffers / 2 ** 20,
    gcExposed: gc !== undefined,
    simulateMs,
    jsonPeakMB: jsonPeak,
    jsonMs,
    jsonChars,
  }) + '\n',
);
