/**
 * Runs one computation per message off the request thread and answers with the HTTP
 * status and the body text, so the main thread only forwards bytes.
 */
import { parentPort } from 'node:worker_threads';
import { normaliseScenario } from '../models/normalize.ts';
import { resultToJsonText } from '../models/result-format.ts';
import { simulateModel } from '../models/simulate.ts';
import type { Problem } from '../models/problems.ts';
import type { JobReply, JobRequest } from './jobs.ts';

function problems(status: number, list: Problem[]): Omit<JobReply, 'id'> {
  return { status, contentType: 'application/json', body: JSON.stringify({ problems: list }) };
}

export function runJob(job: Omit<JobRequest, 'id'>): Omit<JobReply, 'id'> {
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
  parentPort?.postMessage({ id: job.id, ...reply } satisfies JobReply);
});

parentPort?.postMessage({ ready: true });
