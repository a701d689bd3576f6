/**
 * Self time per function from a V8 .cpuprofile (node --cpu-prof), largest first.
 * With a third argument, only samples taken inside a call of the function of that name
 * count (e.g. runEngine, runOdex, simulate), so start-up and module loading drop out.
 *
 *   node --import tsx tests/bench/profile-summary.ts <file.cpuprofile> [rows] [function]
 */
import { readFileSync } from 'node:fs';
import { relative } from 'node:path';

interface ProfileNode {
  id: number;
  callFrame: { functionName: string; url: string; lineNumber: number };
  children?: number[];
}

interface Profile {
  nodes: ProfileNode[];
  samples?: number[];
  timeDeltas?: number[];
}

const file = process.argv[2];
if (!file) throw new Error('usage: profile-summary.ts <file.cpuprofile> [rows] [function]');
const rowsWanted = Number(process.argv[3]) || 25;
const under = process.argv[4] ?? null;
const profile = JSON.parse(readFileSync(file, 'utf8')) as Profile;

const byId = new Map<number, ProfileNode>();
const parent = new Map<number, number>();
for (const n of profile.nodes) {
  byId.set(n.id, n);
  for (const c of n.children ?? []) parent.set(c, n.id);
}

const insideCache = new Map<number, boolean>();
function inside(id: number): boolean {
  if (under === null) return true;
  const cached = insideCache.get(id);
  if (cached !== undefined) return cached;
  const node = byId.get(id);
  const up = parent.get(id);
  const result = node?.callFrame.functionName === under || (up !== undefined && inside(up));
  insideCache.set(id, result);
  return result;
}

const self = new Map<string, number>();
let total = 0;
const samples = profile.samples ?? [];
const deltas = profile.timeDeltas ?? [];
for (let i = 0; i < samples.length; i++) {
  const node = byId.get(samples[i]);
  // A sample's delta is the time since the previous sample; attribute it to this one.
  const dt = deltas[i] ?? 0;
  if (!node || !inside(node.id)) continue;
  const { functionName, url } = node.callFrame;
  const where = url ? relative(process.cwd(), url.replace(/^file:\/\//, '')) : '';
  const key = `${functionName || '(anonymous)'} ${where}`.trim();
  self.set(key, (self.get(key) ?? 0) + dt);
  total += dt;
}
const rows = [...self.entries()].sort((a, b) => b[1] - a[1]).slice(0, rowsWanted);
console.log(`total sampled ${(total / 1000).toFixed(0)} ms${under ? ` inside ${under}()` : ''}`);
for (const [key, us] of rows) {
  console.log(`${((100 * us) / total).toFixed(1).padStart(5)}%  ${(us / 1000).toFixed(0).padStart(6)} ms  ${key}`);
}
