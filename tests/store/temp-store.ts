// Shared by the store's tests and scripts/store-kill-check.ts: a store on a temporary file,
// scenarios that differ by a counter, a file's hash, and the built server as a process.
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import Database from 'better-sqlite3';
import type { Db } from '../../server/store/open.ts';
import { openStore } from '../../server/store/open.ts';
import { storeFileName } from '../../server/store/location.ts';
import { mulberry32 } from '../helpers/mulberry32.ts';

export const repoRoot = fileURLToPath(new URL('../../', import.meta.url));

export type Scenario = Record<string, unknown>;

/** The brennock sample, a valid scenario. */
export const brennock = JSON.parse(readFileSync(join(repoRoot, 'samples', 'brennock-oral-bid.json'), 'utf8')) as Scenario;

/** A valid scenario that differs from brennock (and from every other n) in its title and dose. */
export function variant(n: number, tag = ''): Scenario {
  const s = structuredClone(brennock);
  s.title = `Brennock variant ${tag}${n}`;
  const doses = s.doses as { amount: string }[];
  doses[0].amount = `${100 + (n % 700)} mg`;
  return s;
}

/** A new empty folder of its own under the system's temporary folder. */
export function tempFolder(): string {
  return mkdtempSync(join(tmpdir(), 'tidemark-store-test-'));
}

export function removeFolder(folder: string): void {
  rmSync(folder, { recursive: true, force: true });
}

/** A fresh store in a folder of its own; throws when it does not open. */
export function tempStore(): { folder: string; file: string; db: Db; close: () => void } {
  const folder = tempFolder();
  const file = join(folder, storeFileName);
  const opened = openStore(file);
  if (!opened.ok) throw new Error(opened.message);
  return {
    folder,
    file,
    db: opened.db,
    close: () => {
      if (opened.db.open) opened.db.close();
      removeFolder(folder);
    },
  };
}

export function fileHash(file: string): string {
  return createHash('sha256').update(readFileSync(file)).digest('hex');
}

/** A port free right now on the loopback (as tests/server/built.test.ts picks one). */
export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const probe = createServer();
    probe.once('error', reject);
    probe.listen(0, '127.0.0.1', () => {
      const a = probe.address();
      probe.close(() => resolve(typeof a === 'object' && a ? a.port : 0));
    });
  });
}

/** dist/server/main.js, built when older than its sources. */
export function buildServer(): string {
  const built = spawnSync(process.execPath, ['scripts/build-server.mjs', '--if-stale', '--quiet'], { cwd: repoRoot, encoding: 'utf8', timeout: 180_000 });
  if (built.status !== 0) throw new Error(`the server build failed: ${built.stdout}${built.stderr}`);
  return join(repoRoot, 'dist', 'server', 'main.js');
}

export interface ServerProcess {
  base: string;
  child: ChildProcess;
  log: () => string;
  /** Resolves with the exit code or signal once the process has ended. */
  exited: Promise<string>;
  stop: (signal?: NodeJS.Signals) => Promise<string>;
}

/** Starts the built server on the data folder and waits until /api/samples answers. */
export async function startServer(main: string, dataFolder: string): Promise<ServerProcess> {
  const port = await freePort();
  const child = spawn(process.execPath, [main], {
    cwd: repoRoot,
    env: { ...process.env, PORT: String(port), HOST: '127.0.0.1', TIDEMARK_DATA: dataFolder },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let text = '';
  child.stdout?.on('data', (d: Buffer) => (text += d.toString()));
  child.stderr?.on('data', (d: Buffer) => (text += d.toString()));
  const exited = new Promise<string>((resolve) => child.once('exit', (code, signal) => resolve(signal ?? String(code))));
  const base = `http://127.0.0.1:${port}`;
  const server: ServerProcess = {
    base,
    child,
    log: () => text,
    exited,
    stop: async (signal = 'SIGTERM') => {
      if (child.exitCode === null && child.signalCode === null) child.kill(signal);
      return exited;
    },
  };
  for (let i = 0; i < 300; i++) {
    if (child.exitCode !== null) break;
    const res = await fetch(`${base}/api/samples`).catch(() => null);
    if (res?.status === 200) return server;
    await new Promise((r) => setTimeout(r, 50));
  }
  await server.stop('SIGKILL');
  throw new Error(`the built server never answered: ${text}`);
}

/** POST or PUT JSON to the server; the status and parsed body (null when not JSON). */
export async function sendJson(base: string, method: string, path: string, body: unknown): Promise<{ status: number; body: any }> {
  const res = await fetch(`${base}${path}`, { method, headers: { 'content-type': 'application/json' }, body: JSON.stringify(body) });
  const text = await res.text();
  let parsed: unknown = null;
  try {
    parsed = JSON.parse(text);
  } catch {
    /* not JSON */
  }
  return { status: res.status, body: parsed };
}

/** A version the server acknowledged (200 or 201), with the JSON text it must keep. */
export interface Acknowledged {
  id: number;
  version: number;
  json: string;
}

export interface BurstOutcome {
  acknowledged: Acknowledged[];
  /** Requests sent but not answered when the server died. */
  unanswered: number;
  /** Answers other than 200/201 (a 409 after an unanswered save, say). */
  refused: number;
}

/**
 * Saves as fast as `clients` loops can, each creating a scenario and then saving new versions
 * of it (a new scenario every few saves), until the server dies: `kill` is called after
 * `killAfterMs`. Every 200/201 is recorded with the JSON text sent.
 */
export async function saveUntilKilled(base: string, clients: number, killAfterMs: number, kill: () => void, tag: string): Promise<BurstOutcome> {
  const outcome: BurstOutcome = { acknowledged: [], unanswered: 0, refused: 0 };
  let dead = false;
  /** One save; false when the server did not answer. */
  const save = async (c: number, k: number, current: { id: number; version: number } | null): Promise<{ id: number; version: number } | null | false> => {
    const scenario = variant(k, `${tag}-${c}-`);
    let answer: { status: number; body: any };
    try {
      answer = current ? await sendJson(base, 'PUT', `/api/scenarios/${current.id}`, { scenario, baseVersion: current.version, note: `k ${k}` }) : await sendJson(base, 'POST', '/api/scenarios', { scenario, name: `${tag} ${c} ${k}` });
    } catch {
      outcome.unanswered++;
      return false;
    }
    if (answer.status !== 200 && answer.status !== 201) {
      outcome.refused++;
      return null;
    }
    const saved = answer.body as { id: number; version: number };
    outcome.acknowledged.push({ id: saved.id, version: saved.version, json: JSON.stringify(scenario) });
    return { id: saved.id, version: saved.version };
  };
  // Each client's first save warms the server's validation workers; the clock starts after them.
  const first = await Promise.all(Array.from({ length: clients }, (_, c) => save(c, 0, null)));
  const loop = async (c: number) => {
    let current = first[c] || null;
    for (let k = 1; !dead; k++) {
      // A new scenario every fifth save, else the next version of the current one.
      const next = await save(c, k, k % 5 === 0 ? null : current);
      if (next === false) return;
      current = next;
    }
  };
  const timer = setTimeout(() => {
    dead = true;
    kill();
  }, killAfterMs);
  await Promise.all(Array.from({ length: clients }, (_, c) => loop(c)));
  clearTimeout(timer);
  return outcome;
}

/** What a check of the file finds: acknowledged versions missing or changed, and SQLite's integrity check. */
export function checkAcknowledged(file: string, acknowledged: readonly Acknowledged[]): { missing: string[]; integrity: string; inconsistent: number } {
  const db = new Database(file, { readonly: true, fileMustExist: true });
  try {
    const read = db.prepare('SELECT scenario_json FROM versions WHERE scenario_id = ? AND version = ?');
    const missing: string[] = [];
    for (const a of acknowledged) {
      const row = read.get(a.id, a.version) as { scenario_json: string } | undefined;
      if (!row) missing.push(`${a.id}/${a.version} missing`);
      else if (row.scenario_json !== a.json) missing.push(`${a.id}/${a.version} changed`);
    }
    const integrity = String(db.pragma('integrity_check', { simple: true }));
    // Each save updates the scenario's row in the same transaction as its version: they must agree.
    const inconsistent = (db.prepare('SELECT count(*) AS n FROM scenarios s WHERE s.latest_version <> (SELECT max(version) FROM versions v WHERE v.scenario_id = s.id)').get() as { n: number }).n;
    return { missing, integrity, inconsistent };
  } finally {
    db.close();
  }
}

export interface KillRound {
  round: number;
  killAfterMs: number;
  acknowledged: number;
  unanswered: number;
  refused: number;
  /** Acknowledged versions (of every round so far) missing or changed after the restart. */
  missing: string[];
  integrity: string;
  inconsistent: number;
  /** What GET /api/store said after the restart. */
  availableAfterRestart: boolean;
}

/**
 * Rounds of: saves from `clients` loops, SIGKILL of the built server after a random 50–400 ms,
 * a restart on the same file, and a check that every version acknowledged so far is there
 * with the JSON text sent, that SQLite's integrity check says ok, and that the server says
 * the store is available. One data folder for all rounds, so each restart recovers the last.
 */
export async function killRounds(main: string, folder: string, rounds: number, seed: number, onRound?: (r: KillRound) => void): Promise<KillRound[]> {
  const random = mulberry32(seed);
  const file = join(folder, storeFileName);
  const all: Acknowledged[] = [];
  const results: KillRound[] = [];
  let server = await startServer(main, folder);
  try {
    for (let round = 1; round <= rounds; round++) {
      const killAfterMs = 50 + Math.floor(random() * 351);
      const victim = server;
      const burst = await saveUntilKilled(victim.base, 3, killAfterMs, () => victim.child.kill('SIGKILL'), `r${round}`);
      const ended = await victim.exited;
      if (ended !== 'SIGKILL') throw new Error(`the server ended with ${ended}, not by the kill: ${victim.log()}`);
      all.push(...burst.acknowledged);
      server = await startServer(main, folder);
      const status = (await (await fetch(`${server.base}/api/store`)).json()) as { available: boolean };
      const check = checkAcknowledged(file, all);
      const result: KillRound = { round, killAfterMs, acknowledged: burst.acknowledged.length, unanswered: burst.unanswered, refused: burst.refused, ...check, availableAfterRestart: status.available };
      results.push(result);
      onRound?.(result);
    }
  } finally {
    await server.stop('SIGTERM');
  }
  return results;
}
