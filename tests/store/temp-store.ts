// Shared by the store's tests and scripts/store-kill-check.ts: a store on a temporary file,
// scenarios that differ by a counter, a file's hash, and the built server as a process.
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Db } from '../../server/store/open.ts';
import { openStore } from '../../server/store/open.ts';
import { storeFileName } from '../../server/store/location.ts';

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
