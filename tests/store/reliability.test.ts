// The store when things go wrong: the built server killed (SIGKILL) in the middle of a burst
// of saves loses no acknowledged version and leaves a sound file; a file locked by another
// program, read-only, damaged or written by a newer schema gives a plain message while the
// server keeps serving the rest, never crashes, and never changes the file it refused.
// SQLite's promises relied on: an acknowledged (committed) transaction in WAL mode survives the
// process's death (sqlite.org "Write-Ahead Logging", "Atomic Commit"); PRAGMA integrity_check
// answers 'ok' for a sound file. `npx tsx scripts/store-kill-check.ts [rounds]` runs many more kill rounds.
import Database from 'better-sqlite3';
import { randomFillSync } from 'node:crypto';
import { chmodSync, closeSync, openSync, writeFileSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp, defaultServerLimits } from '../../server/app.ts';
import { loadSamples } from '../../server/samples.ts';
import { StoreHandle } from '../../server/store/handle.ts';
import { storeFileName } from '../../server/store/location.ts';
import { openStore } from '../../server/store/open.ts';
import { createScenario } from '../../server/store/scenarios.ts';
import { SimulationPool, type WorkerModule } from '../../server/worker-pool.ts';
import { brennock, buildServer, checkAcknowledged, fileHash, killRounds, removeFolder, repoRoot, startServer, tempFolder, variant } from './temp-store.ts';

let main: string;
let pool: SimulationPool;
const folders: string[] = [];
const limits = { ...defaultServerLimits, timeBudgetMs: 20_000 };

beforeAll(() => {
  main = buildServer();
  const worker: WorkerModule = { kind: 'built', url: new URL('dist/server/simulation-worker.js', `file://${repoRoot}`) };
  pool = new SimulationPool({ size: 2, timeBudgetMs: 20_000, maxQueue: 16, worker });
}, 180_000);
afterAll(async () => {
  await pool.close();
  for (const f of folders) {
    try {
      chmodSync(f, 0o755);
    } catch {
      /* already gone */
    }
    removeFolder(f);
  }
});

function folder(): string {
  const f = tempFolder();
  folders.push(f);
  return f;
}

/** A store file with `n` scenarios, closed cleanly. */
function storeWith(n: number, mode: 'wal' | 'delete' = 'wal'): { folder: string; file: string } {
  const f = folder();
  const file = join(f, storeFileName);
  const opened = openStore(file);
  if (!opened.ok) throw new Error(opened.message);
  for (let k = 0; k < n; k++) createScenario(opened.db, { scenario: variant(k), name: `kept ${k}` });
  if (mode === 'delete') opened.db.pragma('journal_mode = DELETE');
  opened.db.close();
  return { folder: f, file };
}

const appOn = (handle: StoreHandle) => createApp({ pool, samples: loadSamples(), clientDir: null, limits, store: handle });

describe('SIGKILL in the middle of a burst of saves', () => {
  it('keeps every acknowledged version with its JSON text, and the file passes the integrity check (3 rounds)', async () => {
    const data = folder();
    const rounds = await killRounds(main, data, 3, 20261202);
    for (const r of rounds) {
      expect(r.missing, `round ${r.round}`).toEqual([]);
      expect(r.integrity, `round ${r.round}`).toBe('ok');
      expect(r.inconsistent, `round ${r.round}`).toBe(0);
      expect(r.availableAfterRestart, `round ${r.round}`).toBe(true);
    }
    // The check means something only if saves were acknowledged and some were cut off.
    expect(rounds.reduce((s, r) => s + r.acknowledged, 0)).toBeGreaterThan(3 * 3);
    expect(rounds.reduce((s, r) => s + r.unanswered, 0)).toBeGreaterThan(0);
    // …and only if the check itself sees a version that is not there, or not as sent.
    const file = join(data, storeFileName);
    expect(checkAcknowledged(file, [{ id: 1, version: 99, json: '{}' }]).missing).toEqual(['1/99 missing']);
    expect(checkAcknowledged(file, [{ id: 1, version: 1, json: '{}' }]).missing).toEqual(['1/1 changed']);
  }, 60_000);
});

describe('a file locked by another program', () => {
  it('a rollback-journal file under BEGIN EXCLUSIVE: unavailable naming the lock, the rest serves; available once released, without a restart', async () => {
    const { file } = storeWith(1, 'delete');
    const locker = new Database(file);
    locker.exec('BEGIN EXCLUSIVE');
    const handle = new StoreHandle(file, { busyTimeoutMs: 100, retryAfterMs: 300 });
    try {
      const app = appOn(handle);
      const status = (await request(app).get('/api/store').expect(200)).body;
      expect(status.available).toBe(false);
      expect(status.message).toMatch(/is locked by another program/);
      const list = await request(app).get('/api/scenarios').expect(503);
      expect(list.body.problems[0].message).toMatch(/locked by another program/);
      await request(app).post('/api/scenarios').send({ scenario: brennock }).expect(503);
      await request(app).get('/api/samples').expect(200);
      // A retry while still locked fails the same way, and nothing crashes.
      await new Promise((r) => setTimeout(r, 350));
      expect((await request(app).get('/api/store').expect(200)).body.available).toBe(false);
      locker.exec('COMMIT');
      await new Promise((r) => setTimeout(r, 350));
      expect((await request(app).get('/api/store').expect(200)).body).toMatchObject({ available: true, readOnly: false });
      expect((await request(app).get('/api/scenarios').expect(200)).body.total).toBe(1);
      await request(app).post('/api/scenarios').send({ scenario: brennock }).expect(201);
    } finally {
      handle.close();
      locker.close();
    }
  });

  it('a WAL store while another connection writes: reads go on, a save answers 503 naming the lock and writes nothing; after release it saves', async () => {
    const { file } = storeWith(2);
    const handle = new StoreHandle(file, { busyTimeoutMs: 100, retryAfterMs: 300 });
    const locker = new Database(file);
    try {
      const app = appOn(handle);
      locker.exec('BEGIN EXCLUSIVE'); // in WAL mode the same as IMMEDIATE: the write lock
      expect((await request(app).get('/api/store').expect(200)).body.available).toBe(true);
      expect((await request(app).get('/api/scenarios').expect(200)).body.total).toBe(2);
      const refused = await request(app).post('/api/scenarios').send({ scenario: brennock }).expect(503);
      expect(refused.body.problems[0].message).toMatch(/is locked by another program .*Saving is off until the lock is released/);
      await request(app).put('/api/scenarios/1').send({ scenario: brennock, baseVersion: 1 }).expect(503);
      locker.exec('COMMIT');
      await request(app).post('/api/scenarios').send({ scenario: brennock }).expect(201);
      const after = await request(app).get('/api/scenarios').expect(200);
      expect(after.body.total).toBe(3);
      expect((await request(app).get('/api/scenarios/1/versions').expect(200)).body.versions).toHaveLength(1);
    } finally {
      handle.close();
      locker.close();
    }
  });
});

describe('a read-only file', () => {
  it('reads work, saves answer 503 with the reason, and the file is unchanged', async () => {
    const { folder: f, file } = storeWith(2);
    const before = fileHash(file);
    // chmod stops writes for an ordinary user only: root passes every permission check
    // (access(2), open(2)), so as root the test opens the store read-only on purpose, the way
    // the handle does when it finds the file or its folder not writable.
    const asRoot = process.getuid?.() === 0;
    let handle: StoreHandle;
    if (asRoot) {
      handle = new StoreHandle(file, { readOnly: true });
    } else {
      chmodSync(file, 0o444);
      chmodSync(f, 0o555);
      handle = new StoreHandle(file);
    }
    try {
      const app = appOn(handle);
      const status = (await request(app).get('/api/store').expect(200)).body;
      expect(status).toMatchObject({ available: true, readOnly: true });
      const list = await request(app).get('/api/scenarios').expect(200);
      expect(list.body.scenarios.map((s: { name: string }) => s.name).sort()).toEqual(['kept 0', 'kept 1']);
      expect((await request(app).get('/api/scenarios/1').expect(200)).body.scenario).toEqual(variant(0));
      const message = asRoot ? /open for reading only; saving is off/ : /cannot be written; it is open for reading only and saving is off/;
      for (const res of [
        await request(app).post('/api/scenarios').send({ scenario: brennock }),
        await request(app).put('/api/scenarios/1').send({ scenario: brennock, baseVersion: 1 }),
        await request(app).patch('/api/scenarios/1').send({ name: 'x' }),
        await request(app).delete('/api/scenarios/1'),
      ]) {
        expect(res.status).toBe(503);
        expect(res.body.problems[0].message).toMatch(message);
      }
      const sim = await request(app).post('/api/simulate?scenario=1&version=1').send(variant(0)).expect(200);
      expect(sim.headers['x-tidemark-run']).toMatch(/^not recorded; .*reading only/);
    } finally {
      handle.close();
      if (!asRoot) {
        chmodSync(f, 0o755);
        chmodSync(file, 0o644);
      }
    }
    expect(fileHash(file)).toBe(before);
  });
});

/** A file of random bytes, and a real store with the root page of its versions table overwritten. */
function damagedFiles(): { name: string; folder: string; file: string; message: RegExp }[] {
  const noise = folder();
  const noiseFile = join(noise, storeFileName);
  writeFileSync(noiseFile, randomFillSync(Buffer.alloc(64 * 1024)));
  const damaged = storeWith(6);
  const probe = new Database(damaged.file, { readonly: true });
  const root = (probe.prepare("SELECT rootpage FROM sqlite_master WHERE name = 'versions'").get() as { rootpage: number }).rootpage;
  const pageSize = probe.pragma('page_size', { simple: true }) as number;
  probe.close();
  const fd = openSync(damaged.file, 'r+');
  writeSync(fd, randomFillSync(Buffer.alloc(pageSize)), 0, pageSize, (root - 1) * pageSize);
  closeSync(fd);
  return [
    { name: 'random bytes', folder: noise, file: noiseFile, message: /is damaged or is not a Tidemark database/ },
    { name: 'page overwritten', folder: damaged.folder, file: damaged.file, message: /failed SQLite's quick check/ },
  ];
}

describe('a damaged file', () => {
  it('random bytes, or a page overwritten: a plain message, 503 for the store, the rest served, the file unchanged', async () => {
    for (const c of damagedFiles()) {
      const before = fileHash(c.file);
      const handle = new StoreHandle(c.file, { retryAfterMs: 0 });
      try {
        const app = appOn(handle);
        for (let k = 0; k < 2; k++) {
          const status = (await request(app).get('/api/store').expect(200)).body;
          expect(status.available, c.name).toBe(false);
          expect(status.message, c.name).toMatch(c.message);
          expect(status.message, c.name).toMatch(/left untouched/);
          const save = await request(app).post('/api/scenarios').send({ scenario: brennock }).expect(503);
          expect(save.body.problems[0].message, c.name).toMatch(c.message);
          await request(app).get('/api/scenarios').expect(503);
          expect((await request(app).get('/api/samples').expect(200)).body.length).toBeGreaterThan(0);
        }
      } finally {
        handle.close();
      }
      expect(fileHash(c.file), c.name).toBe(before);
    }
  });
});

describe('the built server on a file of a newer schema', () => {
  it('says so naming "newer", serves the rest, stays up past the retry interval (no crash loop), and leaves the file unchanged', async () => {
    const newer = storeWith(1);
    const writer = new Database(newer.file);
    writer.prepare('INSERT INTO schema_version VALUES (99, ?, ?)').run('from a later Tidemark', new Date().toISOString());
    writer.close();
    const before = fileHash(newer.file);
    const server = await startServer(main, newer.folder);
    try {
      const message = /was written by a newer Tidemark \(schema 99; this one knows up to 1\)\. It was left untouched/;
      const status = (await (await fetch(`${server.base}/api/store`)).json()) as { available: boolean; message?: string };
      expect(status.available).toBe(false);
      expect(status.message).toMatch(message);
      const save = await fetch(`${server.base}/api/scenarios`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ scenario: brennock }) });
      expect(save.status).toBe(503);
      expect(((await save.json()) as { problems: { message: string }[] }).problems[0].message).toMatch(message);
      expect((await fetch(`${server.base}/api/samples`)).status).toBe(200);
      // Past the handle's retry interval (3 s): a refusal that is not a lock is not tried again.
      await new Promise((r) => setTimeout(r, 3200));
      expect(((await (await fetch(`${server.base}/api/store`)).json()) as { available: boolean }).available).toBe(false);
      expect((await fetch(`${server.base}/api/samples`)).status).toBe(200);
      expect(server.child.exitCode).toBeNull();
      expect(server.log().match(/Saving is off: the store .* was written by a newer Tidemark/g)).toHaveLength(1);
    } finally {
      await server.stop('SIGTERM');
    }
    expect(fileHash(newer.file)).toBe(before);
  }, 30_000);
});
