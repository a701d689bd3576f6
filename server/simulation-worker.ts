/**
 * Runs one computation per message off the request thread and answers with the HTTP
 * status and the body (JSON text, or the PDF bytes of a report), so the main thread only
 * forwards bytes.
 */
import { parentPort } from 'node:worker_threads';
import { normaliseScenario } from '../models/normalize.ts';
import { resultToJsonText } from '../models/result-format.ts';
import { simulateModel } from '../models/simulate.ts';
import type { Problem } from '../models/problems.ts';
import type { JobReply, JobRequest } from './jobs.ts';
import { buildReport } from './report/report.ts';

function problems(status: number, list: Problem[]): Omit<JobReply, 'id'> {
  return { status, contentType: 'application/json', body: JSON.stringify({ problems: list }) };
}

export function runJob(job: Omit<JobRequest, 'id'>): Omit<JobReply, 'id'> {
  if (job.kind === 'report') {
    const report = buildReport(job.reference === undefined ? { scenario: job.scenario } : { scenario: job.scenario, reference: job.reference }, { maxOutputPoints: job.maxOutputPoints });
    if (!report.ok) return problems(report.status, report.problems);
    return { status: 200, contentType: 'application/pdf', body: report.bytes };
  }
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
  if (job.kind === 'validate') {
    const m = model.value;
    const summary = {
      valid: true,
      compartments: m.compartments.length,
      transfers: m.transfers.length,
      administrations: m.administrations.length,
      outputPoints: points,
      linear: m.linear,
    };
    return { status: 200, contentType: 'application/json', body: JSON.stringify(summary) };
  }
  const result = simulateModel(model.value);
  if (!result.ok) return problems(422, result.problems);
  return { status: 200, contentType: 'application/json', body: resultToJsonText(result.value) };
}

parentPort?.on('message', (job: JobRequest) => {
  let reply: Omit<JobReply, 'id'>;
  try {
    reply = runJob(job);
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

parentPort?.postMessage({ ready: true });
