/**
 * Load check (not part of `npm test`): `tsx scripts/load-check.ts [--seconds 20] [--concurrency 32] [--no-heavy]`.
 * Starts the real server (server/main.ts) as a child on a free loopback port, warms it,
 * then for the given time keeps `concurrency` light requests (the demo sample) and two
 * heavy ones (a saturable model over 1000 days on a 15-minute grid at a tight tolerance,
 * several seconds each) in flight, all against 127.0.0.1 only. It prints the light
 * requests' throughput, p50 and p99, the heavy ones' outcomes and the server's peak
 * resident memory (the child's, which covers its worker threads), stops the server, and
 * exits non-zero when the light p99 is 1 s or more or a light request failed.
 */
import { spawn } from 'node:child_process';
import { mkdtempSync, readFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { availableParallelism, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = fileURLToPath(new URL('..', import.meta.url));
const host = '127.0.0.1'; // the only address this script ever sends to
const p99LimitMs = 1000;

function option(name: string, fallback: number): number {
  const at = process.argv.indexOf(`--${name}`);
  const value = at >= 0 ? Number(process.argv[at + 1]) : fallback;
  if (!Number.isFinite(value) || value <= 0) throw new Error(`--${name} needs a positive number`);
  return value;
}
const seconds = option('seconds', 20);
const concurrency = Math.round(option('concurrency', 32));
const heavyLanes = process.argv.includes('--no-heavy') ? 0 : 2;

const readSample = (id: string) => JSON.parse(readFileSync(`${root}samples/${id}.json`, 'utf8')) as Record<string, unknown>;
const light = JSON.stringify(readSample('brennock-oral-bid'));
const skorvel = readSample('skorvel-saturable-dose-increase');
const heavy = JSON.stringify({
  ...skorvel,
  title: 'load check: long fine grid',
  doses: [{ ...(skorvel.doses as object[])[0], count: 1000 }],
  output: { ...(skorvel.output as object), end: '1000 day', step: '15 min' },
  solver: { method: 'dopri5', rtol: 1e-12, atol: 1e-14 },
});

function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const probe = createServer();
    probe.once('error', reject);
    probe.listen(0, host, () => {
      const address = probe.address();
      const port = typeof address === 'object' && address ? address.port : 0;
      probe.close(() => resolve(port));
    });
  });
}

const sleep = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));

/** Resident memory of a process from /proc (Linux): now and its high-water mark, in MB. */
function memoryOf(pid: number): { rss: number; peak: number } | null {
  try {
    const status = readFileSync(`/proc/${pid}/status`, 'utf8');
    const kb = (field: string) => Number(new RegExp(`^${field}:\\s+(\\d+) kB`, 'm').exec(status)?.[1] ?? NaN);
    return { rss: kb('VmRSS') / 1024, peak: kb('VmHWM') / 1024 };
  } catch {
    return null;
  }
}

/** CPU time a process has used, all threads, in seconds (Linux: /proc/<pid>/stat, 100 ticks a second). */
function cpuSecondsOf(pid: number): number {
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
    const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
    return (Number(fields[11]) + Number(fields[12])) / 100; // utime, stime
  } catch {
    return NaN;
  }
}

interface Outcome {
  status: number;
  ms: number;
  bytes: number;
  problem?: string;
}

async function post(base: string, body: string, signal: AbortSignal): Promise<Outcome> {
  const started = performance.now();
  try {
    const res = await fetch(`${base}api/simulate`, { method: 'POST', headers: { 'content-type': 'application/json' }, body, signal });
    const text = await res.text();
    const outcome: Outcome = { status: res.status, ms: performance.now() - started, bytes: text.length };
    if (res.status !== 200) outcome.problem = text.slice(0, 300);
    return outcome;
  } catch (e) {
    return { status: 0, ms: performance.now() - started, bytes: 0, problem: e instanceof Error ? e.message : String(e) };
  }
}

function percentile(sorted: number[], p: number): number {
  if (sorted.length === 0) return NaN;
  return sorted[Math.min(sorted.length - 1, Math.ceil((p / 100) * sorted.length) - 1)];
}

async function main(): Promise<number> {
  const port = await freePort();
  const base = `http://${host}:${port}/`;
  const server = spawn(process.execPath, ['--import', 'tsx', 'server/main.ts'], {
    cwd: root,
    env: { ...process.env, HOST: host, PORT: String(port), TIDEMARK_DATA: mkdtempSync(join(tmpdir(), 'tidemark-load-data-')) },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let serverLog = '';
  server.stdout.on('data', (d: Buffer) => (serverLog += d.toString()));
  server.stderr.on('data', (d: Buffer) => (serverLog += d.toString()));
  const pid = server.pid as number;
  let exited = false;
  server.on('exit', () => (exited = true));
  const stop = async () => {
    if (!exited) server.kill('SIGTERM');
    for (let i = 0; i < 50 && !exited; i++) await sleep(100);
    if (!exited) server.kill('SIGKILL');
  };

  try {
    // Up: the page may be built on a first start; the workers load the engine.
    const upBy = Date.now() + 180_000;
    for (;;) {
      if (exited) throw new Error(`the server stopped while starting:\n${serverLog}`);
      if (Date.now() > upBy) throw new Error(`the server did not answer within 180 s:\n${serverLog}`);
      const ok = await fetch(`${base}api/limits`).then((r) => r.ok, () => false);
      if (ok && (await post(base, light, AbortSignal.timeout(60_000))).status === 200) break;
      await sleep(250);
    }
    // Warm every worker (each loads the engine on its own) with a few seconds of light load.
    const warmEnd = Date.now() + 5_000;
    await Promise.all(
      Array.from({ length: 8 }, async () => {
        while (Date.now() < warmEnd) await post(base, light, AbortSignal.timeout(60_000));
      }),
    );

    let memPeakSampled = 0;
    const sampler = setInterval(() => {
      const m = memoryOf(pid);
      if (m) memPeakSampled = Math.max(memPeakSampled, m.rss);
    }, 100);
    const idle = memoryOf(pid);
    const serverCpu0 = cpuSecondsOf(pid);
    const ownCpu0 = process.cpuUsage();

    // Every request ends by itself: the server's 30 s budget, and an abort as a backstop.
    const controller = new AbortController();
    const backstop = setTimeout(() => controller.abort(), (seconds + 45) * 1000);
    const started = performance.now();
    const running = () => performance.now() - started < seconds * 1000;
    const lights: Outcome[] = [];
    const heavies: Outcome[] = [];
    let lightsDone = 0;
    const lightLane = async () => {
      while (running()) lights.push(await post(base, light, controller.signal));
      lightsDone = performance.now();
    };
    const heavyLane = async () => {
      while (running()) heavies.push(await post(base, heavy, controller.signal));
    };
    await Promise.all([...Array.from({ length: heavyLanes }, heavyLane), ...Array.from({ length: concurrency }, lightLane)]);
    const elapsed = (lightsDone - started) / 1000;
    clearTimeout(backstop);
    clearInterval(sampler);
    const mem = memoryOf(pid);
    const serverCpu = cpuSecondsOf(pid) - serverCpu0;
    const ownCpu = process.cpuUsage(ownCpu0);
    const wall = (performance.now() - started) / 1000;

    const times = lights.map((o) => o.ms).sort((a, b) => a - b);
    const failed = lights.filter((o) => o.status !== 200);
    const p50 = percentile(times, 50);
    const p99 = percentile(times, 99);
    const mb = (x: number | undefined) => (x === undefined || !Number.isFinite(x) ? 'unavailable' : `${Math.round(x)} MB`);
    console.log(`load check: ${concurrency} light lanes (brennock demo) + ${heavyLanes} heavy lanes for ${seconds} s against ${base}`);
    console.log(`light: ${lights.length} requests in ${elapsed.toFixed(1)} s = ${(lights.length / elapsed).toFixed(1)} per s; p50 ${p50.toFixed(0)} ms, p99 ${p99.toFixed(0)} ms, max ${times[times.length - 1].toFixed(0)} ms; ${failed.length} not 200`);
    for (const f of failed.slice(0, 3)) console.log(`  failed light request: status ${f.status} ${f.problem ?? ''}`);
    heavies.forEach((h, i) => {
      const what = h.status === 200 ? `200 in ${(h.ms / 1000).toFixed(1)} s, ${(h.bytes / 2 ** 20).toFixed(1)} MB` : `${h.status} after ${(h.ms / 1000).toFixed(1)} s: ${h.problem ?? ''}`;
      console.log(`heavy ${i + 1}: ${what}`);
    });
    console.log(`CPU over ${wall.toFixed(1)} s: server ${serverCpu.toFixed(1)} s (${(serverCpu / wall).toFixed(2)} cores), this load generator ${((ownCpu.user + ownCpu.system) / 1e6).toFixed(1)} s; machine load average ${loadavg()[0].toFixed(1)} on ${availableParallelism()} cores`);
    console.log(`server memory (resident, all threads): idle ${mb(idle?.rss)}, peak sampled ${mb(memPeakSampled)}, high-water mark ${mb(mem?.peak)}`);
    const pass = p99 < p99LimitMs && failed.length === 0 && lights.length > 0;
    console.log(pass ? `PASS: light p99 under ${p99LimitMs} ms` : `FAIL: light p99 ${p99.toFixed(0)} ms (limit ${p99LimitMs} ms), ${failed.length} failed`);
    return pass ? 0 : 1;
  } finally {
    await stop();
  }
}

main().then(
  (code) => process.exit(code),
  (e: unknown) => {
    console.error(`load check could not run: ${e instanceof Error ? e.message : String(e)}`);
    process.exit(2);
  },
);
