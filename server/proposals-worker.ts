/**
 * A worker thread of population proposals (proposals-threads.ts): started with the scenario,
 * the limits, the typical loading doses and the chunks, it prepares the same plan as every
 * other thread, takes chunks from the shared counter until none is left, and posts each
 * chunk's arrays (moved, not copied) on its port, adding 1 to the shared "posted" count and
 * waking the calling thread after each message.
 */
import { workerData } from 'node:worker_threads';
import { prepareProposals, runProposalChunk, type ProposalChunk } from '../models/regimen/population-proposals.ts';
import { readPropose } from '../models/regimen/settings.ts';
import { normaliseScenario, parseScenario } from '../models/scenario/normalize.ts';
import type { Outcome, Problem } from '../models/scenario/problems.ts';
import type { ProposalWorkerData, ProposalWorkerMessage } from './proposals-threads.ts';

const data = workerData as ProposalWorkerData;
const state = new Int32Array(data.state);

function post(message: ProposalWorkerMessage, transfer: ArrayBuffer[] = []): void {
  data.port.postMessage(message, transfer);
  Atomics.add(state, 1, 1);
  Atomics.notify(state, 1);
}

function buffers(c: ProposalChunk): ArrayBuffer[] {
  const a = c.approach;
  return [c.steady.buffer, a.intervals.buffer, a.code.buffer, a.metByInterval.buffer, a.firstLoaded.buffer].filter((b): b is ArrayBuffer => b instanceof ArrayBuffer);
}

/** The plan every thread reads alike from the same scenario. */
function prepared(): Outcome<Parameters<typeof runProposalChunk>[0]> {
  const parsed = parseScenario(data.input);
  if (!parsed.ok) return parsed;
  const model = normaliseScenario(parsed.value);
  if (!model.ok) return model;
  const settings = readPropose(parsed.value, model.value);
  if (!settings.ok) return settings;
  return prepareProposals(parsed.value, model.value, settings.value, data.limits, data.loadings);
}

function run(): Problem[] | null {
  const p = prepared();
  if (!p.ok) return p.problems;
  const chunkCount = data.chunks.length / 2;
  for (let c = Atomics.add(state, 0, 1); c < chunkCount; c = Atomics.add(state, 0, 1)) {
    const chunk = runProposalChunk(p.value, data.chunks[2 * c], data.chunks[2 * c + 1]);
    if (!chunk.ok) return chunk.problems;
    post({ kind: 'chunk', chunk: chunk.value }, buffers(chunk.value));
  }
  return null;
}

try {
  const problems = run();
  post(problems ? { kind: 'problems', problems } : { kind: 'finished' });
} catch (e) {
  post({ kind: 'problems', problems: [{ path: 'propose', message: `internal error in a proposals thread: ${e instanceof Error ? e.message : String(e)}` }] });
}
