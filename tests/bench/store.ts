/**
 * Scenario-store figures for `npm run bench` (alone: `npm run bench:store`), on a fresh
 * temporary store opened as the server opens it (WAL, synchronous = FULL: every save waits
 * for the disk):
 *  - saving a version of a typical scenario (samples/brennock-oral-bid.json), the whole
 *    saveVersion (its JSON text, fingerprint, the check of the base version, the insert and the
 *    scenario row's update): median and 95th percentile over consecutive saves; target < 5 ms
 *    at the median;
 *  - with 10,000 scenarios in the store (filled in one transaction): the page's list query
 *    (first 100 and the total), every scenario (the command line's pages of 1,000), and a
 *    search; target < 5 ms at the median for the first 100;
 *  - the history of a scenario with 1,000 versions (listVersions); target < 50 ms.
 * Each beside a reference measured in the same run, as a ratio: the same INSERT of the same
 * bytes through a plain better-sqlite3 statement in a plain table of another database opened
 * with the same settings (what the store's layer adds to the disk's own cost), and the same
 * SELECTs prepared once and returned as raw rows (what preparing and shaping the answer adds).
 */
import Database from 'better-sqlite3';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import { openStore, type Db } from '../../server/store/open.ts';
import { createScenario, listScenarios, listVersions, saveVersion } from '../../server/store/scenarios.ts';
import { summarise, timeIt, type Timing } from './timing.ts';

const here = dirname(fileURLToPath(import.meta.url));
const root = join(here, '..', '..');

export const storeTargets = { saveMs: 5, listMs: 5, historyMs: 50 } as const;

const SAVES = 200;
const SCENARIOS = 10_000;
const HISTORY = 1_000;

export interface Spread extends Timing {
  p95: number;
}

export interface StoreBench {
  folder: string;
  scenarioBytes: number;
  save: { ours: Spread; plainInsert: Spread; fingerprintMs: number; ratio: number };
  fill: { scenarios: number; seconds: number };
  listFirst100: { ours: Timing; raw: Timing; ratio: number; total: number };
  listAll: { ours: Timing; raw: Timing; ratio: number; rows: number };
  search: { ours: Timing; raw: Timing; ratio: number; text: string; matches: number };
  history: { ours: Timing; raw: Timing; ratio: number; versions: number };
  pass: { save: boolean; list: boolean; history: boolean };
}

function spread(samples: number[]): Spread {
  const s = [...samples].sort((a, b) => a - b);
  return { ...summarise(samples), p95: s[Math.min(s.length - 1, Math.ceil(0.95 * s.length) - 1)] };
}

/** Each call timed alone (a save is milliseconds: performance.now() around each is precise enough). */
function eachTimed(from: number, to: number, fn: (i: number) => void, samples: number[]): void {
  for (let i = from; i < to; i++) {
    const t0 = performance.now();
    fn(i);
    samples.push(performance.now() - t0);
  }
}

/** Saves are timed in alternating blocks, ours then the reference's, since both wait for a disk shared with whatever else runs. */
const SAVE_BLOCK = 20;

function opened(file: string): Db {
  const o = openStore(file);
  if (!o.ok) throw new Error(o.message);
  return o.db;
}

/** The saves: SAVES versions of the sample, each with another amount (prepared beforehand, untimed). */
function measureSaves(db: Db, plain: Db, sample: Record<string, unknown>): StoreBench['save'] {
  const doses = sample.doses as Record<string, unknown>[];
  const variants = Array.from({ length: SAVES + 20 }, (_, i) => ({ ...sample, doses: [{ ...doses[0], amount: `${400 + i} mg` }] }));
  const created = createScenario(db, { scenario: sample, name: 'Save bench', author: 'bench' });
  if (!created.ok) throw new Error(created.message);
  let base = 1;
  const save = (i: number) => {
    const saved = saveVersion(db, created.value.id, { scenario: variants[i], baseVersion: base, author: 'bench', note: `save ${i}` });
    if (!saved.ok) throw new Error(saved.message);
    base = saved.value.version;
  };
  // The reference: the same text in one plain INSERT, in a transaction of its own as each save is.
  plain.exec('CREATE TABLE plain (id INTEGER PRIMARY KEY, json TEXT NOT NULL)');
  const insert = plain.prepare('INSERT INTO plain (json) VALUES (?)');
  const texts = variants.map((v) => JSON.stringify(v));
  const put = plain.transaction((text: string) => insert.run(text));
  // Warm-up: the optimising compiler, the files' first pages.
  for (let i = 0; i < 20; i++) {
    save(SAVES + i);
    put.immediate(texts[SAVES + i]);
  }
  const ours: number[] = [];
  const reference: number[] = [];
  for (let from = 0; from < SAVES; from += SAVE_BLOCK) {
    eachTimed(from, from + SAVE_BLOCK, save, ours);
    eachTimed(from, from + SAVE_BLOCK, (i) => put.immediate(texts[i]), reference);
  }
  const fingerprintMs = timeIt(() => scenarioFingerprint(variants[0])).timing.median;
  const [o, r] = [spread(ours), spread(reference)];
  return { ours: o, plainInsert: r, fingerprintMs, ratio: o.median / r.median };
}

/** SCENARIOS scenarios in one transaction (one wait for the disk), each saved through createScenario. */
function fill(db: Db, sample: Record<string, unknown>): StoreBench['fill'] {
  const t0 = performance.now();
  const start = Date.UTC(2026, 0, 1);
  db.transaction(() => {
    for (let i = 0; i < SCENARIOS; i++) {
      const scenario = { ...sample, title: `Regimen ${String(i).padStart(5, '0')}` };
      const made = createScenario(db, { scenario, tags: [`ward-${i % 17}`, i % 2 ? 'oral' : 'infusion'], author: `user-${i % 9}` }, new Date(start + i * 60_000));
      if (!made.ok) throw new Error(made.message);
    }
  })();
  return { scenarios: SCENARIOS, seconds: (performance.now() - t0) / 1000 };
}

/** HISTORY versions of one scenario, in one transaction. */
function fillHistory(db: Db, sample: Record<string, unknown>): number {
  const made = createScenario(db, { scenario: sample, name: 'Long history', author: 'bench' });
  if (!made.ok) throw new Error(made.message);
  db.transaction(() => {
    for (let v = 1; v < HISTORY; v++) {
      const saved = saveVersion(db, made.value.id, { scenario: { ...sample, title: `Long history, version ${v + 1}` }, baseVersion: v, note: `change ${v}` });
      if (!saved.ok) throw new Error(saved.message);
    }
  })();
  return made.value.id;
}

const timed = (fn: () => unknown): Timing => timeIt(fn, { minReps: 15, maxReps: 200, budgetMs: 1500 }).timing;

export function measureStore(): StoreBench {
  const folder = mkdtempSync(join(tmpdir(), 'tidemark-store-bench-'));
  try {
    const sampleText = readFileSync(join(root, 'samples', 'brennock-oral-bid.json'), 'utf8');
    const sample = JSON.parse(sampleText) as Record<string, unknown>;
    const db = opened(join(folder, 'tidemark.sqlite'));
    // The reference database: the same pragmas as openStore sets, no schema of ours.
    const plain = new Database(join(folder, 'plain.sqlite'));
    plain.pragma('journal_mode = WAL');
    plain.pragma('synchronous = FULL');
    const save = measureSaves(db, plain, sample);
    plain.close();

    const filled = fill(db, sample);
    const historyId = fillHistory(db, sample);

    const columns = 'id, name, tags, notes, created_at, deleted_at, latest_version, updated_at, latest_fingerprint, latest_author';
    const rawPage = db.prepare(`SELECT ${columns} FROM scenarios WHERE deleted_at IS NULL ORDER BY updated_at DESC, id DESC LIMIT ? OFFSET ?`);
    const rawCount = db.prepare('SELECT count(*) AS n FROM scenarios WHERE deleted_at IS NULL');
    const first = listScenarios(db, { limit: 100 });
    const listFirst100Ours = timed(() => listScenarios(db, { limit: 100 }));
    const listFirst100Raw = timed(() => [rawPage.all(100, 0), rawCount.get()]);

    const everyPage = () => {
      let n = 0;
      for (let offset = 0; ; offset += 1000) {
        const page = listScenarios(db, { limit: 1000, offset });
        n += page.scenarios.length;
        if (page.scenarios.length === 0 || n >= page.total) return n;
      }
    };
    const rows = everyPage();
    const listAllOurs = timed(everyPage);
    const rawAll = db.prepare(`SELECT ${columns} FROM scenarios WHERE deleted_at IS NULL ORDER BY updated_at DESC, id DESC`);
    const listAllRaw = timed(() => rawAll.all());

    const text = 'ward-7';
    const matches = listScenarios(db, { search: text }).total;
    const searchOurs = timed(() => listScenarios(db, { search: text }));
    const rawSearch = db.prepare(`SELECT ${columns} FROM scenarios WHERE deleted_at IS NULL AND instr(search_text, ?) > 0 ORDER BY updated_at DESC, id DESC LIMIT 100 OFFSET 0`);
    const rawSearchCount = db.prepare('SELECT count(*) AS n FROM scenarios WHERE deleted_at IS NULL AND instr(search_text, ?) > 0');
    const searchRaw = timed(() => [rawSearch.all(text), rawSearchCount.get(text)]);

    const versions = listVersions(db, historyId).length;
    const historyOurs = timed(() => listVersions(db, historyId));
    const rawHistory = db.prepare('SELECT version, fingerprint, note, author, saved_at, length(CAST(scenario_json AS BLOB)) AS bytes FROM versions WHERE scenario_id = ? ORDER BY version DESC');
    const historyRaw = timed(() => rawHistory.all(historyId));
    db.close();

    return {
      folder,
      scenarioBytes: Buffer.byteLength(JSON.stringify(sample)),
      save,
      fill: filled,
      listFirst100: { ours: listFirst100Ours, raw: listFirst100Raw, ratio: listFirst100Ours.median / listFirst100Raw.median, total: first.total },
      listAll: { ours: listAllOurs, raw: listAllRaw, ratio: listAllOurs.median / listAllRaw.median, rows },
      search: { ours: searchOurs, raw: searchRaw, ratio: searchOurs.median / searchRaw.median, text, matches },
      history: { ours: historyOurs, raw: historyRaw, ratio: historyOurs.median / historyRaw.median, versions },
      pass: { save: save.ours.median < storeTargets.saveMs, list: listFirst100Ours.median < storeTargets.listMs, history: historyOurs.median < storeTargets.historyMs },
    };
  } finally {
    rmSync(folder, { recursive: true, force: true });
  }
}

export function storeReport(b: StoreBench): string {
  const ms = (v: number) => (v < 1 ? v.toFixed(3) : v < 10 ? v.toFixed(2) : v.toFixed(1));
  const x = (v: number) => `${v.toFixed(v < 10 ? 2 : 1)}×`;
  const verdict = (ok: boolean) => (ok ? 'PASS' : 'FAIL');
  const row = (name: string, ours: string, reference: string, ratio: string, target: string) =>
    `  ${name.padEnd(44)} ${ours.padStart(22)}  ${reference.padStart(22)}  ${ratio.padStart(7)}  ${target}`;
  return [
    `  store on ${b.folder} (WAL, synchronous = FULL); scenario ${b.scenarioBytes} bytes of JSON; medians unless said`,
    row('', 'ours (ms)', 'reference (ms)', 'ratio', 'target'),
    row(
      `save a version (${SAVES} saves), median / p95`,
      `${ms(b.save.ours.median)} / ${ms(b.save.ours.p95)}`,
      `${ms(b.save.plainInsert.median)} / ${ms(b.save.plainInsert.p95)}`,
      x(b.save.ratio),
      `< ${storeTargets.saveMs} ms: ${verdict(b.pass.save)}`,
    ),
    `  ${''.padEnd(44)} reference: the same JSON text in a plain INSERT, one transaction each, same pragmas; fingerprint alone ${ms(b.save.fingerprintMs)} ms`,
    `  filled ${b.fill.scenarios.toLocaleString('en')} scenarios through createScenario in one transaction: ${b.fill.seconds.toFixed(2)} s`,
    row(`list: first 100 and the total (${b.listFirst100.total.toLocaleString('en')})`, ms(b.listFirst100.ours.median), ms(b.listFirst100.raw.median), x(b.listFirst100.ratio), `< ${storeTargets.listMs} ms: ${verdict(b.pass.list)}`),
    row(`list: all ${b.listAll.rows.toLocaleString('en')} (pages of 1,000)`, ms(b.listAll.ours.median), ms(b.listAll.raw.median), x(b.listAll.ratio), '(context)'),
    row(`search '${b.search.text}' (${b.search.matches} match), first 100`, ms(b.search.ours.median), ms(b.search.raw.median), x(b.search.ratio), '(context)'),
    row(`history of ${b.history.versions.toLocaleString('en')} versions (listVersions)`, ms(b.history.ours.median), ms(b.history.raw.median), x(b.history.ratio), `< ${storeTargets.historyMs} ms: ${verdict(b.pass.history)}`),
    '  reference for the reads: the same SELECT prepared once, rows as SQLite returns them (ours prepares at each call and shapes the answer);',
    '  for all scenarios, one SELECT of every row (ours reads pages of 1,000, as the command line does, each page with its count)',
  ].join('\n');
}
