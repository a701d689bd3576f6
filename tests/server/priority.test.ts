// A long job runs at lowered scheduling priority (nice +10 on its own) so that short jobs beside it get
// the CPU first, and its worker is back to normal when it ends. Read from the kernel's own
// account of this process's threads (/proc/self/task/<tid>/stat, field 19 is the nice
// value), so Linux only.
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { getPriority } from 'node:os';
import { afterAll, describe, expect, it } from 'vitest';
import { SimulationPool } from '../../server/worker-pool.ts';

/** Threads of this process whose nice value is `nice`. */
function threadsAtNice(nice: number): number {
  let count = 0;
  for (const tid of readdirSync('/proc/self/task')) {
    try {
      const stat = readFileSync(`/proc/self/task/${tid}/stat`, 'utf8');
      const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
      if (Number(fields[16]) === nice) count++; // field 19 of stat; the list starts at field 3
    } catch {
      // the thread ended while being read
    }
  }
  return count;
}

// Several seconds of work in little memory: a 40-compartment chain dosed by two drifting lines.
const n = 40;
const long = {
  title: 'long',
  compartments: Array.from({ length: n }, (_, i) => ({ id: `c${i}`, volume: `${5 + i} L` })),
  transfers: [
    ...Array.from({ length: n - 1 }, (_, i) => ({ from: `c${i}`, to: `c${i + 1}`, k: `${0.3 + 0.01 * i} 1/h` })),
    ...Array.from({ length: n - 1 }, (_, i) => ({ from: `c${i + 1}`, to: `c${i}`, k: `${0.05 + 0.001 * i} 1/h` })),
    { from: `c${n - 1}`, k: '0.1 1/h' },
  ],
  doses: [
    { into: 'c0', amount: '10 mg', every: '1 h', count: 60 },
    { into: `c${n / 2}`, amount: '5 mg', every: '1.0007 h', count: 60 },
  ],
  output: { end: '60 h', step: '1 h' },
};

const pool = new SimulationPool({ size: 1, timeBudgetMs: 120_000, maxQueue: 4, longJobMs: 100 });
afterAll(async () => {
  await pool.close();
});

describe.runIf(existsSync('/proc/thread-self'))('the priority of a long job', () => {
  it('is lowered while it runs and restored when it ends', async () => {
    // Ten below the process's own niceness (the suite may itself run under `nice`).
    const own = getPriority();
    const lowered = Math.min(19, own + 10);
    if (own >= 19) return;
    // Warm: the worker is loaded and a short job leaves nothing lowered.
    expect((await pool.run({ kind: 'validate', scenario: long, maxOutputPoints: 10_000 })).status).toBe(200);
    expect(threadsAtNice(lowered)).toBe(0);
    let seenLowered = 0;
    const watch = setInterval(() => (seenLowered = Math.max(seenLowered, threadsAtNice(lowered))), 20);
    const started = performance.now();
    const reply = await pool.run({ kind: 'simulate', scenario: long, maxOutputPoints: 10_000 });
    const ms = performance.now() - started;
    clearInterval(watch);
    expect(reply.status).toBe(200);
    // Only meaningful if the job outlasted the 100 ms threshold by a few samples.
    expect(ms).toBeGreaterThan(300);
    expect(seenLowered).toBe(1);
    expect(threadsAtNice(lowered)).toBe(0);
  }, 120_000);
});
