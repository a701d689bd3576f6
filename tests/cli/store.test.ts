/**
 * `tidemark store …` through the built program, as a user runs it: list, show, history and
 * diff of a store filled through server/store's own functions; export, then import into a
 * fresh store, gives the same scenarios, versions (the same JSON bytes), fingerprints and
 * report bytes; a changed export is refused with the JSON path of what changed and adds
 * nothing; a backup opens on its own and passes SQLite's integrity_check.
 */
import Database from 'better-sqlite3';
import { spawn, spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { describeChange, diffJson } from '../../models/scenario/diff.ts';
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import { openStore, type Db } from '../../server/store/open.ts';
import { recordReport, reportPdf, reportsOfScenario } from '../../server/store/reports.ts';
import { listRuns, recordRun } from '../../server/store/runs.ts';
import { createScenario, listScenarios, listVersions, readVersion, saveVersion, setDeleted } from '../../server/store/scenarios.ts';
import { importScenarios } from '../../server/store/transfer.ts';

const root = fileURLToPath(new URL('../../', import.meta.url)).replace(/\/$/, '');
const program = join(root, 'dist/server/cli.js');
const sample = JSON.parse(readFileSync(join(root, 'samples/brennock-oral-bid.json'), 'utf8')) as { doses: { amount: string }[]; [k: string]: unknown };

let dir: string;
/** The filled store's folder, and the folder of the store the export is imported into. */
let filled: string;
let fresh: string;

function cleanEnv(): NodeJS.ProcessEnv {
  const env = { ...process.env };
  for (const key of Object.keys(env)) if (key === 'INIT_CWD' || key.startsWith('npm_') || key === 'TIDEMARK_DATA') delete env[key];
  return env;
}

/** The built program as a child process, not waited for: independent commands run at once. */
function store(args: string[], env: NodeJS.ProcessEnv = cleanEnv()): Promise<{ code: number | null; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    const child = spawn('node', [program, 'store', ...args], { cwd: dir, env });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (d) => (stdout += d));
    child.stderr.on('data', (d) => (stderr += d));
    child.on('close', (code) => resolve({ code, stdout, stderr }));
  });
}

const noStack = (text: string) => expect(text).not.toContain('    at ');

function opened(folder: string): Db {
  const o = openStore(join(folder, 'tidemark.sqlite'));
  if (!o.ok) throw new Error(o.message);
  return o.db;
}

/** Every byte value, so that base64 in the export must carry them all (not a real PDF: the store keeps bytes as sent). */
const pdfBytes = Uint8Array.from({ length: 1024 }, (_, i) => (i * 7 + 3) % 256);

beforeAll(() => {
  const build = spawnSync('node', ['scripts/build-server.mjs', '--if-stale', '--quiet'], { cwd: root, encoding: 'utf8', timeout: 180_000 });
  expect(build.status, build.stderr).toBe(0);
  dir = mkdtempSync(join(tmpdir(), 'tidemark-store-cli-'));
  filled = join(dir, 'filled');
  fresh = join(dir, 'fresh');
  const db = opened(filled);
  const at = (minute: number) => new Date(Date.UTC(2026, 11, 2, 9, minute, 0, 123));
  // 1: three versions (a dose amount changed, then a dose added), a run and a report of version 2.
  const one = createScenario(db, { scenario: sample, name: 'Brennock "twice daily" — Ærø', tags: ['oral', 'brennock'], notes: 'line one\nline two', author: 'Ana', note: 'from the sample' }, at(0));
  if (!one.ok) throw new Error(one.message);
  const v2 = { ...sample, doses: [{ ...sample.doses[0], amount: '500 mg' }] };
  const v3 = { ...v2, doses: [...v2.doses, { into: 'gut', amount: '1000 mg', at: '0 h', label: 'loading' }] };
  expect(saveVersion(db, one.value.id, { scenario: v2, baseVersion: 1, author: 'Bo', note: 'higher dose' }, at(1)).ok).toBe(true);
  expect(saveVersion(db, one.value.id, { scenario: v3, baseVersion: 2, author: 'Ana', note: 'loading dose' }, at(2)).ok).toBe(true);
  recordRun(db, { scenarioId: one.value.id, version: 2, method: 'exact (matrix exponential)', startedAt: at(3).toISOString(), durationMs: 12.5, figures: { cmax: 9.1 }, warnings: ['a warning'], resultJson: '{"big":true}' });
  recordReport(db, { scenarioId: one.value.id, version: 2, fingerprint: scenarioFingerprint(v2), pdf: pdfBytes, issuedAt: at(4).toISOString(), requestedBy: 'Cy' });
  // 2: a key that is no plain identifier and a "__proto__" key must survive as they are.
  const two = createScenario(db, { scenario: JSON.parse('{"title":"Odd keys","__proto__":{"polluted":true},"serum creatinine":"x"}'), tags: ['test'] }, at(5));
  expect(two.ok).toBe(true);
  // 3: deleted.
  const three = createScenario(db, { scenario: { ...sample, title: 'Withdrawn regimen' }, author: 'Di' }, at(6));
  if (!three.ok) throw new Error(three.message);
  setDeleted(db, three.value.id, true, at(7));
  db.close();
}, 180_000);

afterAll(() => {
  rmSync(dir, { recursive: true, force: true });
});

describe('list and show', () => {
  it('list: a table of the scenarios not deleted, --json equal to the store query, --deleted only, --search on tags', async () => {
    const [table, json, only, search] = await Promise.all([
      store(['list', '--data', filled]),
      store(['list', '--json', '--deleted', 'include', '--data', filled]),
      store(['list', '--deleted', 'only', '--data', filled]),
      // The search folds case (name or tag); the store given through TIDEMARK_DATA instead of --data.
      store(['list', '--search', 'BRENNOCK', '--json'], { ...cleanEnv(), TIDEMARK_DATA: filled }),
    ]);
    expect(table.code, table.stderr).toBe(0);
    const lines = table.stdout.trimEnd().split('\n');
    expect(lines[0]).toMatch(/^id\s+name\s+tags\s+version\s+updated \(UTC\)\s+author$/);
    // Newest update first; the deleted one left out.
    expect(lines.slice(2).map((l) => l.split(/\s{2,}/)[1])).toEqual(['Odd keys', 'Brennock "twice daily" — Ærø']);
    expect(lines[3]).toMatch(/^1\s+Brennock "twice daily" — Ærø\s+oral, brennock\s+3\s+2026-12-02 09:02\s+Ana$/);

    const db = opened(filled);
    expect(JSON.parse(json.stdout)).toEqual(listScenarios(db, { deleted: 'include' }));
    db.close();
    expect(only.stdout).toMatch(/Withdrawn regimen .*deleted/);
    expect(only.stdout).not.toContain('Odd keys');
    expect((JSON.parse(search.stdout) as { scenarios: { id: number }[] }).scenarios.map((s) => s.id)).toEqual([1]);
  });

  it('show: the latest or a given version as JSON, the history, and the diff lines of models/scenario/diff.ts', async () => {
    const [latest, first, history, diff, missing, noVersion, usage, none] = await Promise.all([
      store(['show', '1', '--data', filled]),
      store(['show', '1', '--version', '1', '--data', filled]),
      store(['show', '1', '--history', '--data', filled]),
      store(['show', '1', '--diff', '1', '3', '--data', filled]),
      store(['show', '99', '--data', filled]),
      store(['show', '1', '--version', '7', '--data', filled]),
      store(['show', 'abc', '--data', filled]),
      store(['list', '--data', join(dir, 'nowhere')]),
    ]);
    const db = opened(filled);
    expect(latest.code, latest.stderr).toBe(0);
    expect(JSON.parse(latest.stdout)).toEqual(readVersion(db, 1)?.scenario);
    expect(latest.stderr).toContain('version 3 of 3');
    expect(JSON.parse(first.stdout)).toEqual(sample);

    const rows = history.stdout.trimEnd().split('\n').slice(2);
    const versions = listVersions(db, 1);
    expect(rows).toHaveLength(3);
    versions.forEach((v, k) => {
      expect(rows[k]).toContain(v.fingerprint);
      expect(rows[k]).toContain(v.note);
      expect(rows[k].startsWith(`${v.version} `)).toBe(true);
    });
    expect(rows[2]).toMatch(/^1\s+2026-12-02 09:00:00\.123\s+Ana\s+[0-9a-f]{12}\s+\d+\s+from the sample$/);

    const expected = diffJson(readVersion(db, 1, 1)?.scenario, readVersion(db, 1, 3)?.scenario).map(describeChange);
    expect(expected).toEqual(['doses[0].amount: "400 mg" → "500 mg"', 'doses[1]: added {"into":"gut","amount":"1000 mg","at":"0 h","label":"loading"}']);
    expect(diff.stdout).toBe(expected.join('\n') + '\n');
    expect(diff.stderr).toContain('2 changes');
    db.close();

    expect([missing.code, missing.stderr]).toEqual([1, 'there is no scenario 99 in the store\n']);
    expect(noVersion.code).toBe(1);
    expect(noVersion.stderr).toContain('has no version 7 (its latest is 3)');
    expect(usage.code).toBe(2);
    expect(usage.stderr).toContain("the scenario ID must be a whole number from 1, not 'abc'");
    // A store that is not there: openStore's message, nothing created.
    expect([none.code, none.stderr]).toEqual([1, `there is no store at ${join(dir, 'nowhere', 'tidemark.sqlite')}\n`]);
    expect(existsSync(join(dir, 'nowhere'))).toBe(false);
    [latest, history, diff, missing, usage, none].forEach((r) => noStack(r.stderr));
  });
});

describe('export and import', () => {
  it('a store exported and imported into a fresh one has the same scenarios, versions (byte for byte), fingerprints, runs and report bytes', async () => {
    const exported = await store(['export', 'all.json', '--data', filled]);
    expect(exported.code, exported.stderr).toBe(0);
    expect(exported.stderr).toBe(`wrote 3 scenarios (5 versions, 1 run, 1 report) to ${join(dir, 'all.json')}\n`);
    const file = JSON.parse(readFileSync(join(dir, 'all.json'), 'utf8')) as { tidemarkStore: number; scenarios: { name: string; deleted: string | null }[] };
    expect(file.tidemarkStore).toBe(1);
    expect(file.scenarios.map((s) => [s.name, s.deleted])).toEqual([
      ['Brennock "twice daily" — Ærø', null],
      ['Odd keys', null],
      ['Withdrawn regimen', '2026-12-02T09:07:00.123Z'],
    ]);

    // The fresh store gets one scenario first, so that the imported ones take other ids.
    const target = opened(fresh);
    createScenario(target, { scenario: { title: 'Already here' } });
    target.close();
    const imported = await store(['import', 'all.json', '--data', fresh]);
    expect(imported.code, imported.stderr).toBe(0);
    expect(imported.stdout.trimEnd().split('\n').map((l) => l.trim().split(/\s{2,}/)[0])).toEqual(['2', '3', '4']);

    const a = opened(filled);
    const b = opened(fresh);
    const before = listScenarios(a, { deleted: 'include' }).scenarios;
    const after = listScenarios(b, { deleted: 'include' }).scenarios.filter((s) => s.name !== 'Already here');
    expect(after.map(({ id: _, ...rest }) => rest)).toEqual(before.map(({ id: _, ...rest }) => rest));
    const idIn = (db: Db, name: string) => listScenarios(db, { deleted: 'include', search: name }).scenarios[0].id;
    for (const s of before) {
      const to = idIn(b, s.name);
      expect(listVersions(b, to)).toEqual(listVersions(a, s.id));
      for (const v of listVersions(a, s.id)) {
        const x = readVersion(a, s.id, v.version);
        const y = readVersion(b, to, v.version);
        expect(y?.json).toBe(x?.json);
        expect(scenarioFingerprint(y?.scenario)).toBe(v.fingerprint);
      }
      expect(listRuns(b, to).map(({ id: _, scenarioId: __, ...r }) => r)).toEqual(listRuns(a, s.id).map(({ id: _, scenarioId: __, ...r }) => r));
      const reportsA = reportsOfScenario(a, s.id);
      const reportsB = reportsOfScenario(b, to);
      expect(reportsB.map(({ id: _, scenarioId: __, ...r }) => r)).toEqual(reportsA.map(({ id: _, scenarioId: __, ...r }) => r));
      reportsB.forEach((r, k) => expect(Buffer.from(reportPdf(b, r.id) as Uint8Array).equals(Buffer.from(reportPdf(a, reportsA[k].id) as Uint8Array))).toBe(true));
    }
    // The odd keys kept as keys (not as the object's prototype).
    const odd = readVersion(b, idIn(b, 'Odd keys'));
    expect(odd?.json).toBe('{"title":"Odd keys","__proto__":{"polluted":true},"serum creatinine":"x"}');
    const report = reportsOfScenario(b, idIn(b, 'Brennock'))[0];
    expect(report.sha256).toBe(createHash('sha256').update(pdfBytes).digest('hex'));
    a.close();
    b.close();
  });

  it('a changed export is refused with the JSON path of what changed, and the store is unchanged; the store file is never the export target', async () => {
    const original = JSON.parse(readFileSync(join(dir, 'all.json'), 'utf8')) as { scenarios: { versions: { scenario: { doses: { amount: string }[] } }[]; reports: { pdfBase64: string }[] }[] };
    const storeFile = join(fresh, 'tidemark.sqlite');
    const db = opened(fresh);
    const count = () => (db.prepare('SELECT (SELECT count(*) FROM scenarios) + (SELECT count(*) FROM versions) + (SELECT count(*) FROM reports) AS n').get() as { n: number }).n;
    const rowsBefore = count();

    // A dose changed in the first scenario's second version (its recorded fingerprint kept).
    const dose = structuredClone(original);
    dose.scenarios[0].versions[1].scenario.doses[0].amount = '5000 mg';
    writeFileSync(join(dir, 'dose.json'), JSON.stringify(dose));

    // A report's bytes changed, and a shape error in the last scenario: the first scenarios are not added either.
    const bytes = structuredClone(original);
    const pdf = Buffer.from(bytes.scenarios[0].reports[0].pdfBase64, 'base64');
    pdf[100] ^= 1;
    bytes.scenarios[0].reports[0].pdfBase64 = pdf.toString('base64');
    (bytes.scenarios[2].versions[0] as { scenario: unknown }).scenario = [1, 2];
    writeFileSync(join(dir, 'bytes.json'), JSON.stringify(bytes));
    const [refusedDose, refusedBytes, overStore] = await Promise.all([
      store(['import', 'dose.json', '--data', fresh]),
      store(['import', 'bytes.json', '--data', fresh]),
      store(['export', storeFile, '--data', fresh]),
    ]);
    expect(refusedDose.code).toBe(1);
    expect(refusedDose.stderr).toMatch(/^.*dose\.json: refused, nothing was imported; the file has 1 problem:\nscenarios\[0\]\.versions\[1\]\.fingerprint: is [0-9a-f]{12} but the scenario's fingerprint is [0-9a-f]{12}: the scenario was changed after export\n$/);
    expect(refusedBytes.code).toBe(1);
    // The shape is checked first: its problem alone is named until it is mended.
    expect(refusedBytes.stderr).toContain('scenarios[2].versions[0].scenario: the scenario must be a JSON object');
    (bytes.scenarios[2].versions[0] as { scenario: unknown }).scenario = original.scenarios[2].versions[0].scenario;
    expect(importScenarios(db, bytes)).toEqual({ ok: false, problems: [{ path: 'scenarios[0].reports[0].sha256', message: expect.stringMatching(/the report was changed after export$/) }] });
    expect(count()).toBe(rowsBefore);

    expect(overStore.code).toBe(2);
    expect(overStore.stderr).toContain(`refusing to write the export to '${storeFile}': it is the store itself`);
    expect(count()).toBe(rowsBefore);
    expect(db.pragma('integrity_check', { simple: true })).toBe('ok');
    db.close();
    [refusedDose, refusedBytes, overStore].forEach((r) => noStack(r.stderr));
  });
});

describe('backup', () => {
  it('writes a copy that opens on its own and passes integrity_check, never over an existing file or the store', async () => {
    mkdirSync(join(dir, 'backups'));
    const made = await store(['backup', 'backups/copy.sqlite', '--data', filled]);
    expect(made.code, made.stderr).toBe(0);
    expect(made.stderr).toContain('integrity_check is ok');
    const copy = new Database(join(dir, 'backups', 'copy.sqlite'), { readonly: true, fileMustExist: true });
    expect(copy.pragma('integrity_check', { simple: true })).toBe('ok');
    const a = opened(filled);
    const table = 'SELECT scenario_id, version, scenario_json, fingerprint FROM versions ORDER BY scenario_id, version';
    expect(copy.prepare(table).all()).toEqual(a.prepare(table).all());
    expect(copy.prepare('SELECT pdf FROM reports').all()).toEqual(a.prepare('SELECT pdf FROM reports').all());
    a.close();
    copy.close();

    const [again, overStore] = await Promise.all([store(['backup', 'backups/copy.sqlite', '--data', filled]), store(['backup', join(filled, 'tidemark.sqlite'), '--data', filled])]);
    expect([again.code, again.stderr]).toEqual([1, `'${join(dir, 'backups', 'copy.sqlite')}' already exists; a backup is never written over a file: choose a new name\n`]);
    expect(overStore.code).toBe(2);
    expect(overStore.stderr).toContain('it is the store itself');
  });
});
