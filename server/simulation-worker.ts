/**
 * Runs one computation per message off the request thread and answers with the HTTP
 * status and the body (JSON text, or the PDF bytes of a report), so the main thread only
 * forwards bytes.
 */
import { readlinkSync } from 'node:fs';
import { parentPort } from 'node:worker_threads';
import { scheduleOf } from '../models/building/events.ts';
import type { Model } from '../models/building/model.ts';
import { normaliseScenario } from '../models/scenario/normalize.ts';
import { hasPopulation, planPopulation } from '../models/population/population.ts';
import { resultToJsonText } from '../models/result/result-format.ts';
import { outputRows } from '../models/result/output-rows.ts';
import { simulateModel } from '../models/simulate.ts';
import type { Problem } from '../models/scenario/problems.ts';
import type { JobReply, JobRequest } from './jobs.ts';

type ReportModule = typeof import('./report/report.ts');
/**
 * The report writer (pdfkit, its fonts, the drawing code) is loaded by the first report job,
 * not at start: a worker that only simulates never pays for it.
 */
let reportModule: ReportModule | null = null;
type LevelsModule = typeof import('./levels-jobs.ts');
/** NCA, fitting and regimen proposals: loaded by the first such job, like the report writer. */
let levelsModule: LevelsModule | null = null;

function problems(status: number, list: Problem[]): Omit<JobReply, 'id'> {
  return { status, contentType: 'application/json', body: JSON.stringify({ problems: list }) };
}

// What one item of a result costs in JSON text, measured on the bundled samples and the
// 100k-dose case (a number 15–18 bytes with its comma, a dose event about 95, one dosing
// interval's figures 250–460 per compartment with a volume). The estimate leans low: it
// refuses what is surely too large before any work; the text itself is measured after.
const bytesPerValue = 16;
const bytesPerAdministration = 90;
const bytesPerIntervalFigures = 250;
const bytesFixed = 16_384;

export interface AnswerSize {
  /** Reported rows: the requested times merged with breakpoints (two rows at a bolus). */
  rows: number;
  /** Requested times alone. */
  requested: number;
  /** Numbers per row: the time, each compartment's amount, and its concentration when it has a volume. */
  columns: number;
  /** Estimated JSON bytes of the whole answer, and of the requested grid alone. */
  bytes: number;
  gridBytes: number;
}

/** The size of a model's answer, from its schedule, before anything is simulated. */
export function answerSize(model: Model): AnswerSize {
  let withVolume = 0;
  for (const c of model.compartments) if (c.volume !== null) withVolume++;
  const columns = 1 + model.compartments.length + withVolume;
  const rows = outputRows(model.outputTimes, scheduleOf(model)).times.length;
  const requested = model.outputTimes.length;
  const doses = model.administrations.length;
  const bytes = bytesFixed + rows * columns * bytesPerValue + doses * (bytesPerAdministration + withVolume * bytesPerIntervalFigures);
  return { rows, requested, columns, bytes, gridBytes: requested * columns * bytesPerValue };
}

const megabytes = (bytes: number) => `${Math.round((bytes / 2 ** 20) * 10) / 10} MB`;

/** A problem when the answer would exceed the server's size limit, naming what makes it large. */
export function answerSizeProblem(model: Model, maxBytes: number): Problem | null {
  const size = answerSize(model);
  if (size.bytes <= maxBytes) return null;
  const limit = `this server answers at most ${megabytes(maxBytes)}`;
  if (size.gridBytes > maxBytes) {
    return {
      path: 'output.step',
      message: `asks for ${size.requested} reported times × ${size.columns} columns, an answer of about ${megabytes(size.bytes)}; ${limit} (coarsen output.step, shorten output.end, or use the command line)`,
    };
  }
  return {
    path: 'doses',
    message: `${model.administrations.length} administrations with ${size.rows} reported rows × ${size.columns} columns make an answer of about ${megabytes(size.bytes)}; ${limit} (give fewer doses, coarsen output.step, or use the command line)`,
  };
}

export async function runJob(job: Omit<JobRequest, 'id'>): Promise<Omit<JobReply, 'id'>> {
  if (job.kind === 'report') {
    reportModule ??= await import('./report/report.ts');
    const report = reportModule.buildReport(job.reference === undefined ? { scenario: job.scenario } : { scenario: job.scenario, reference: job.reference }, { maxOutputPoints: job.maxOutputPoints, ...(job.stored ? { stored: job.stored } : {}) });
    if (!report.ok) return problems(report.status, report.problems);
    return { status: 200, contentType: 'application/pdf', body: report.bytes };
  }
  if (job.kind === 'nca' || job.kind === 'fit' || job.kind === 'propose') {
    levelsModule ??= await import('./levels-jobs.ts');
    return levelsModule.runLevelsJob(job);
  }
  return computeJob(job);
}

/** Simulate and validate: synchronous once the worker has started. */
function computeJob(job: Omit<JobRequest, 'id'>): Omit<JobReply, 'id'> {
  const model = normaliseScenario(job.scenario);
  if (!model.ok) return problems(400, model.problems);
  const points = model.value.outputTimes.length;
  if (points > job.maxOutputPoints) {
    return problems(400, [
      {
        path: 'output.step',
        message: `asks for ${points} reported times; this server answers at most ${job.maxOutputPoints} (use the command line for larger runs)`,
      },
    ]);
  }
  const tooLarge = job.maxResponseBytes === undefined ? null : answerSizeProblem(model.value, job.maxResponseBytes);
  if (tooLarge) return problems(422, [tooLarge]);
  if (job.kind === 'validate') {
    const m = model.value;
    // A population section is checked as a population run would read it.
    const plan = hasPopulation(job.scenario) ? planPopulation(job.scenario) : null;
    if (plan && !plan.ok) return problems(400, plan.problems);
    const summary = {
      valid: true,
      compartments: m.compartments.length,
      transfers: m.transfers.length,
      administrations: m.administrations.length,
      outputPoints: points,
      linear: m.linear,
      population: plan?.ok ? { subjects: plan.value.subjects, varying: plan.value.varying.length, targets: plan.value.targets.length, regimens: plan.value.regimens.length } : null,
    };
    return { status: 200, contentType: 'application/json', body: JSON.stringify(summary) };
  }
  const result = simulateModel(model.value);
  if (!result.ok) return problems(422, result.problems);
  const text = resultToJsonText(result.value);
  // The estimate above leans low; the text itself is the measure.
  const bytes = job.maxResponseBytes === undefined ? 0 : Buffer.byteLength(text, 'utf8');
  if (job.maxResponseBytes !== undefined && bytes > job.maxResponseBytes) {
    return problems(422, [
      {
        path: 'output.step',
        message: `the answer came to ${megabytes(bytes)}; this server answers at most ${megabytes(job.maxResponseBytes)} (coarsen output.step, give fewer doses, or use the command line)`,
      },
    ]);
  }
  return { status: 200, contentType: 'application/json', body: text };
}

// The pool hands a worker one job at a time, so a report job awaiting its module never
// overlaps another job here.
parentPort?.on('message', async (job: JobRequest) => {
  let reply: Omit<JobReply, 'id'>;
  try {
    reply = await runJob(job);
  } catch (e) {
    reply = problems(500, [{ path: '', message: `internal error: ${e instanceof Error ? e.message : String(e)}` }]);
  }
  if (typeof reply.body === 'string') {
    parentPort?.postMessage({ id: job.id, ...reply } satisfies JobReply);
  } else {
    // A fresh buffer of its own, so that it can be moved to the HTTP thread instead of copied.
    const body = new Uint8Array(reply.body);
    parentPort?.postMessage({ id: job.id, ...reply, body } satisfies JobReply, [body.buffer]);
  }
});

/**
 * This thread's id in the kernel (Linux: /proc/thread-self is <pid>/task/<tid>), so that
 * the pool can lower the scheduling priority of this thread alone while it runs a long
 * job; null where there is no such file.
 */
function kernelThreadId(): number | null {
  try {
    const tid = Number(readlinkSync('/proc/thread-self').split('/').pop());
    return Number.isInteger(tid) && tid > 0 ? tid : null;
  } catch {
    return null;
  }
}

parentPort?.postMessage({ ready: true, tid: kernelThreadId() });
