// The store's functions on a temporary database (server/store/): versions and the edit
// conflict, text that round-trips exactly, parameterised SQL, search, soft delete, the JSON
// text as saved, fingerprints against models/scenario/fingerprint.ts, runs and reports,
// foreign keys, the schema's record, the limits, and files left untouched when refused.
// The SQLite behaviours relied on are those of its documentation (sqlite.org: "Datatypes",
// "PRAGMA foreign_keys", "Write-Ahead Logging", "PRAGMA quick_check").
import Database from 'better-sqlite3';
import { createHash } from 'node:crypto';
import { openSync, closeSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { gunzipSync } from 'node:zlib';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { resultToJsonText } from '../../models/result/result-format.ts';
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import { formatPath } from '../../models/scenario/problems.ts';
import { simulate } from '../../models/simulate.ts';
import { latestSchemaVersion } from '../../server/store/migrations.ts';
import type { Db } from '../../server/store/open.ts';
import { openStore } from '../../server/store/open.ts';
import { clipText, metadataSchema, newScenarioSchema, newVersionSchema, storeLimits } from '../../server/store/records.ts';
import { linkOf } from '../../server/store/recording.ts';
import { recordReport, reportPdf, reportsOfScenario, reportsWithFingerprint } from '../../server/store/reports.ts';
import { listRuns, readRun, recordRun } from '../../server/store/runs.ts';
import {
  createScenario,
  listScenarios,
  listVersions,
  readVersion,
  saveVersion,
  scenarioSummary,
  setDeleted,
  updateMetadata,
  versionsWithFingerprint,
} from '../../server/store/scenarios.ts';
import { brennock, fileHash, tempStore, variant } from './temp-store.ts';

let store: ReturnType<typeof tempStore>;
let db: Db;
beforeEach(() => {
  store = tempStore();
  db = store.db;
});
afterEach(() => store.close());

function created(input: Parameters<typeof createScenario>[1]): number {
  const r = createScenario(db, input);
  if (!r.ok) throw new Error(r.message);
  return r.value.id;
}

const count = (table: string) => (db.prepare(`SELECT count(*) AS n FROM ${table}`).get() as { n: number }).n;

/**
 * Text that has broken stores before (common practice for such lists): both quotes, a
 * backslash, emoji (astral, UTF-16 pairs), a combining mark, a flag sequence and ZWJ
 * sequence, right-to-left scripts with a direction mark, NUL and other control characters,
 * the JSON-awkward line and paragraph separators.
 */
const awkward = [
  `it's a "quoted" name`,
  'back\\slash \\n \\u0041 C:\\data\\',
  'emoji 🧪💊🇳🇴 👩‍🔬',
  'combining e\u0301 and Z\u0324\u0354\u0367\u0311',
  'RTL \u05e9\u05dc\u05d5\u05dd \u0645\u0631\u062d\u0628\u0627 \u200f!',
  'controls \u0000 NUL \u0007 bell \n newline \r return \t tab \u001b esc \u007f del',
  'separators \u2028 \u2029 end',
];

describe('versions and the edit conflict', () => {
  it('creates version 1; a save from the latest makes 2; a stale base answers 409 with the latest and writes nothing', () => {
    const first = createScenario(db, { scenario: brennock });
    expect(first).toEqual({ ok: true, value: { id: 1, version: 1, fingerprint: scenarioFingerprint(brennock) } });
    const second = saveVersion(db, 1, { scenario: variant(1), baseVersion: 1, note: 'dose changed' });
    expect(second).toEqual({ ok: true, value: { id: 1, version: 2, fingerprint: scenarioFingerprint(variant(1)) } });
    const before = { versions: count('versions'), summary: scenarioSummary(db, 1) };
    const stale = saveVersion(db, 1, { scenario: variant(2), baseVersion: 1 });
    expect(stale.ok).toBe(false);
    if (stale.ok) return;
    expect(stale.status).toBe(409);
    expect(stale.path).toBe('baseVersion');
    expect(stale.latestVersion).toBe(2);
    expect(stale.message).toMatch(/version 2 was saved after version 1/);
    expect(count('versions')).toBe(before.versions);
    expect(scenarioSummary(db, 1)).toEqual(before.summary);
    expect(readVersion(db, 1)?.json).toBe(JSON.stringify(variant(1)));
    // A base from the future is as stale as one from the past.
    expect(saveVersion(db, 1, { scenario: variant(3), baseVersion: 3 })).toMatchObject({ ok: false, status: 409, latestVersion: 2 });
    expect(saveVersion(db, 99, { scenario: variant(3), baseVersion: 1 })).toMatchObject({ ok: false, status: 404 });
  });

  it('lists versions newest first, each with its note, author, fingerprint and UTF-8 byte length', () => {
    const id = created({ scenario: variant(1), note: 'first', author: 'Ana' });
    saveVersion(db, id, { scenario: variant(2), baseVersion: 1, note: 'second', author: 'Bo' });
    saveVersion(db, id, { scenario: variant(3, 'é'), baseVersion: 2, note: 'third', author: 'Cé' });
    const versions = listVersions(db, id);
    expect(versions.map((v) => v.version)).toEqual([3, 2, 1]);
    expect(versions.map((v) => v.note)).toEqual(['third', 'second', 'first']);
    expect(versions.map((v) => v.author)).toEqual(['Cé', 'Bo', 'Ana']);
    expect(versions.map((v) => v.fingerprint)).toEqual([variant(3, 'é'), variant(2), variant(1)].map(scenarioFingerprint));
    expect(versions[0].bytes).toBe(Buffer.byteLength(JSON.stringify(variant(3, 'é')), 'utf8'));
    expect(versions[0].bytes).toBe(JSON.stringify(variant(3, 'é')).length + 1); // é is 2 bytes in UTF-8
    expect(scenarioSummary(db, id)).toMatchObject({ latestVersion: 3, author: 'Cé', fingerprint: scenarioFingerprint(variant(3, 'é')) });
  });

  it("returns the JSON text exactly as saved (the input's key order, not sorted), each version its own", () => {
    // Keys deliberately out of order, with awkward text inside: the text kept is JSON.stringify of the input.
    const odd = { output: brennock.output, title: awkward.join(' | '), doses: brennock.doses, units: brennock.units, compartments: brennock.compartments, transfers: brennock.transfers };
    const id = created({ scenario: odd });
    saveVersion(db, id, { scenario: brennock, baseVersion: 1 });
    expect(readVersion(db, id, 1)?.json).toBe(JSON.stringify(odd));
    expect(readVersion(db, id, 1)?.scenario).toEqual(odd);
    expect(readVersion(db, id, 2)?.json).toBe(JSON.stringify(brennock));
    expect(readVersion(db, id)?.version).toBe(2);
    expect(readVersion(db, id, 3)).toBeNull();
    // The fingerprint is of the content, not of its key order (canonical JSON, fingerprint.ts).
    expect(readVersion(db, id, 1)?.fingerprint).toBe(scenarioFingerprint(odd));
  });

  it('changes name, tags and notes without a new version', () => {
    const id = created({ scenario: brennock, name: 'old', tags: ['a'] });
    const changed = updateMetadata(db, id, { name: 'new', tags: ['b', 'c'], notes: 'n' });
    expect(changed).toMatchObject({ ok: true, value: { name: 'new', tags: ['b', 'c'], notes: 'n', latestVersion: 1 } });
    expect(listVersions(db, id)).toHaveLength(1);
    expect(scenarioSummary(db, id)).toMatchObject({ name: 'new', tags: ['b', 'c'], notes: 'n' });
    expect(updateMetadata(db, 42, { name: 'x' })).toMatchObject({ ok: false, status: 404 });
  });
});

describe('text round-trips exactly', () => {
  it('keeps names, tags, notes, change notes and authors with quotes, backslashes, unicode and control characters', () => {
    for (const [k, text] of awkward.entries()) {
      const id = created({ scenario: variant(k), name: text, tags: [text, `${k}${text}`], notes: `${text}\n${text}`, note: text, author: text.slice(0, 100) });
      saveVersion(db, id, { scenario: variant(k + 100), baseVersion: 1, note: `again ${text}`, author: text.slice(0, 100) });
      const summary = scenarioSummary(db, id);
      expect(summary?.name).toBe(text);
      expect(summary?.tags).toEqual([text, `${k}${text}`]);
      expect(summary?.notes).toBe(`${text}\n${text}`);
      expect(summary?.author).toBe(text.slice(0, 100));
      expect(listVersions(db, id).map((v) => v.note)).toEqual([`again ${text}`, text]);
      // The same through the list (another query, another read path).
      expect(listScenarios(db, { limit: 1000 }).scenarios.find((s) => s.id === id)?.name).toBe(text);
    }
    // NUL survives inside SQLite TEXT: better-sqlite3 binds and reads with explicit lengths.
    expect(scenarioSummary(db, 6)?.name.includes('\u0000 NUL')).toBe(true);
  });

  it('keeps the same text inside the scenario JSON (JSON.stringify escapes control characters)', () => {
    const s = { ...brennock, title: awkward.join(''), description: '\u0000\u0007\n\r\t' };
    const id = created({ scenario: s });
    expect(readVersion(db, id)?.scenario).toEqual(s);
    expect(readVersion(db, id)?.json).toBe(JSON.stringify(s));
  });

  it('lone surrogates: the API schema refuses them with a path; inside the scenario JSON they survive as \\u escapes', () => {
    // A lone surrogate has no UTF-8 form; stored as TEXT it comes back as U+FFFD (what the
    // refusal prevents). The scenario's JSON text escapes it (well-formed JSON.stringify, ES2019), so it survives there.
    for (const [field, body] of [
      ['name', { scenario: 1, name: 'half \ud83e' }],
      ['notes', { scenario: 1, notes: '\udc00 alone' }],
      ['tags[1]', { scenario: 1, tags: ['fine', 'x\ud800'] }],
      ['note', { scenario: 1, note: '\ud800' }],
      ['author', { scenario: 1, author: '\udfff' }],
    ] as const) {
      const parsed = newScenarioSchema.safeParse(body);
      expect(parsed.success).toBe(false);
      expect(parsed.error?.issues.map((i) => formatPath(i.path))).toEqual([field]);
      expect(parsed.error?.issues[0].message).toMatch(/lone surrogate/);
    }
    expect(newVersionSchema.safeParse({ scenario: 1, baseVersion: 1, note: 'a\ud800' }).success).toBe(false);
    expect(metadataSchema.safeParse({ name: 'a\udc00b' }).success).toBe(false);
    // A well-formed pair is one character, not a lone half.
    expect(newScenarioSchema.safeParse({ scenario: 1, name: 'pair \ud83e\uddea' }).success).toBe(true);

    const s = { ...brennock, title: 'lone \ud800 half' };
    const id = created({ scenario: s });
    expect(readVersion(db, id)?.json).toContain('lone \\ud800 half');
    expect((readVersion(db, id)?.scenario as { title: string }).title).toBe('lone \ud800 half');
    // What SQLite does to one given straight to the functions, past the schema: not kept.
    const raw = created({ scenario: brennock, name: 'x\ud800y' });
    expect(scenarioSummary(db, raw)?.name).not.toBe('x\ud800y');
    expect(scenarioSummary(db, raw)?.name).toMatch(/^x\ufffd+y$/);
  });

  it('cuts a long title (the default name) and a requester over the limit without splitting a character pair', () => {
    const id = created({ scenario: { ...brennock, title: `${'x'.repeat(storeLimits.name - 1)}🧪 and more` } });
    expect(scenarioSummary(db, id)?.name).toBe('x'.repeat(storeLimits.name - 1));
    const fits = created({ scenario: { ...brennock, title: `${'x'.repeat(storeLimits.name - 2)}🧪 and more` } });
    expect(scenarioSummary(db, fits)?.name).toBe(`${'x'.repeat(storeLimits.name - 2)}🧪`);
    expect(linkOf({ scenario: '1', version: '2', by: `${'y'.repeat(storeLimits.author - 1)}🧪` })).toEqual({ id: 1, version: 2, by: 'y'.repeat(storeLimits.author - 1) });
    expect([clipText('ab🧪', 3), clipText('ab🧪', 4), clipText('abc', 2), clipText('', 5)]).toEqual(['ab', 'ab🧪', 'ab', '']);
  });

  it('stores an SQL-injection-looking name as text, and the tables survive', () => {
    const evil = "'); DROP TABLE scenarios; --";
    const id = created({ scenario: brennock, name: evil, tags: ["' OR 1=1 --"], notes: '"; DELETE FROM versions; --' });
    updateMetadata(db, id, { name: `${evil} 2` });
    expect(scenarioSummary(db, id)?.name).toBe(`${evil} 2`);
    expect(listScenarios(db, { search: "DROP TABLE scenarios; --'" }).total).toBe(0);
    expect(listScenarios(db, { search: "'); drop" }).scenarios.map((s) => s.id)).toEqual([id]);
    expect(listScenarios(db, { search: "' or 1=1" }).total).toBe(1);
    const tables = (db.prepare("SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name").all() as { name: string }[]).map((t) => t.name);
    expect(tables).toEqual(['reports', 'runs', 'scenarios', 'schema_version', 'versions']);
    expect(count('versions')).toBe(1);
  });
});

describe('search and deletion', () => {
  it('finds by name or tag, case-insensitively, non-ASCII letters included; LIKE wildcards are plain text', () => {
    const evora = created({ scenario: variant(1), name: 'Évora loading dose', tags: ['Renal'] });
    const studie = created({ scenario: variant(2), name: 'plain', tags: ['ÉTUDE Ørsted'] });
    const other = created({ scenario: variant(3), name: 'Other 100%', tags: [] });
    const ids = (search: string) => listScenarios(db, { search }).scenarios.map((s) => s.id).sort();
    expect(ids('évora')).toEqual([evora]);
    expect(ids('ÉVORA')).toEqual([evora]);
    expect(ids('LOADING')).toEqual([evora]);
    expect(ids('renal')).toEqual([evora]);
    expect(ids('étude')).toEqual([studie]);
    expect(ids('ørsted')).toEqual([studie]);
    expect(ids('  plain  ')).toEqual([studie]); // trimmed
    expect(ids('100%')).toEqual([other]);
    expect(ids('%')).toEqual([other]); // a literal percent sign, not "anything"
    expect(ids('_')).toEqual([]);
    expect(ids('evora')).toEqual([]); // no accent folding: é is not e
    expect(ids('')).toEqual([evora, studie, other]);
    expect(listScenarios(db, { search: 'E' }).total).toBe(3);
  });

  it('lists newest update first, pages with limit and offset, and counts all that match', () => {
    const base = Date.parse('2026-01-01T00:00:00.000Z');
    for (let k = 0; k < 5; k++) createScenario(db, { scenario: variant(k), name: `n${k}` }, new Date(base + k * 1000));
    saveVersion(db, 2, { scenario: variant(10), baseVersion: 1 }, new Date(base + 10_000));
    const all = listScenarios(db);
    expect(all.scenarios.map((s) => s.name)).toEqual(['n1', 'n4', 'n3', 'n2', 'n0']);
    expect(all.scenarios[0].updated).toBe('2026-01-01T00:00:10.000Z');
    const page = listScenarios(db, { limit: 2, offset: 1 });
    expect(page.scenarios.map((s) => s.name)).toEqual(['n4', 'n3']);
    expect(page.total).toBe(5);
  });

  it('soft-deletes and restores; deleted=exclude|include|only', () => {
    const a = created({ scenario: variant(1), name: 'kept' });
    const b = created({ scenario: variant(2), name: 'gone' });
    expect(setDeleted(db, b, true)).toEqual({ ok: true, value: { id: b, deleted: true } });
    const names = (deleted: 'exclude' | 'include' | 'only') => listScenarios(db, { deleted }).scenarios.map((s) => s.name).sort();
    expect(names('exclude')).toEqual(['kept']);
    expect(names('include')).toEqual(['gone', 'kept']);
    expect(names('only')).toEqual(['gone']);
    expect(listScenarios(db, {}).total).toBe(1); // exclude is the default
    // Deleted is soft: the row, its versions and its summary are still there.
    expect(scenarioSummary(db, b)?.deleted).toBe(true);
    expect(readVersion(db, b)?.json).toBe(JSON.stringify(variant(2)));
    expect(setDeleted(db, b, false)).toEqual({ ok: true, value: { id: b, deleted: false } });
    expect(names('exclude')).toEqual(['gone', 'kept']);
    expect(names('only')).toEqual([]);
    expect(scenarioSummary(db, a)?.deleted).toBe(false);
    expect(setDeleted(db, 99, true)).toMatchObject({ ok: false, status: 404 });
  });
});

describe('fingerprints, runs and reports', () => {
  it('keeps the fingerprint of models/scenario/fingerprint.ts, and finds the version and the report by it', () => {
    const id = created({ scenario: variant(1), name: 'printed' });
    saveVersion(db, id, { scenario: variant(2), baseVersion: 1 });
    const fingerprint = scenarioFingerprint(variant(1));
    expect(fingerprint).toMatch(/^[0-9a-f]{12}$/);
    expect(readVersion(db, id, 1)?.fingerprint).toBe(fingerprint);
    expect(versionsWithFingerprint(db, fingerprint)).toEqual([expect.objectContaining({ scenarioId: id, name: 'printed', version: 1, fingerprint })]);
    const pdf = new Uint8Array(Buffer.from('%PDF-1.3 a stand-in body \u0000\u00ff bytes', 'latin1'));
    const reportId = recordReport(db, { scenarioId: id, version: 1, fingerprint, pdf, issuedAt: '2026-12-02T14:03:11.123Z', requestedBy: 'Dr. Ó' });
    const sha256 = createHash('sha256').update(pdf).digest('hex');
    const expected = { id: reportId, scenarioId: id, name: 'printed', version: 1, fingerprint, sha256, issuedAt: '2026-12-02T14:03:11.123Z', requestedBy: 'Dr. Ó', bytes: pdf.length };
    expect(reportsWithFingerprint(db, fingerprint)).toEqual([expected]);
    expect(reportsWithFingerprint(db, ` ${fingerprint.toUpperCase()} `)).toEqual([expected]);
    expect(reportsWithFingerprint(db, scenarioFingerprint(variant(2)))).toEqual([]);
    expect(reportsOfScenario(db, id)).toEqual([expected]);
    expect(Buffer.from(reportPdf(db, reportId) ?? []).equals(Buffer.from(pdf))).toBe(true);
    expect(reportPdf(db, reportId + 1)).toBeNull();
  });

  it('records a run and reads the full result back through gzip, newest first', () => {
    const id = created({ scenario: brennock });
    const direct = simulate(brennock);
    if (!direct.ok) throw new Error('the sample must simulate');
    const text = resultToJsonText(direct.value);
    const first = recordRun(db, { scenarioId: id, version: 1, method: 'exact', startedAt: '2026-12-02T14:03:11.123Z', durationMs: 12.5, figures: { cmax: 9.1 }, warnings: ['w "1"'], resultJson: text });
    const second = recordRun(db, { scenarioId: id, version: 1, method: 'rk45', startedAt: '2026-12-02T14:03:12.000Z', durationMs: 3, figures: {}, warnings: [] });
    const run = readRun(db, first);
    expect(run).toMatchObject({ id: first, scenarioId: id, version: 1, method: 'exact', startedAt: '2026-12-02T14:03:11.123Z', durationMs: 12.5, figures: { cmax: 9.1 }, warnings: ['w "1"'] });
    expect(run?.result).toEqual(JSON.parse(text));
    // Kept compressed: the blob is gzip (RFC 1952 magic 1f 8b) and inflates to the very text.
    const blob = (db.prepare('SELECT result FROM runs WHERE id = ?').get(first) as { result: Buffer }).result;
    expect([blob[0], blob[1]]).toEqual([0x1f, 0x8b]);
    expect(gunzipSync(blob).toString('utf8')).toBe(text);
    expect(blob.length).toBeLessThan(Buffer.byteLength(text));
    expect(readRun(db, second)?.result).toBeNull();
    expect(listRuns(db, id).map((r) => r.id)).toEqual([second, first]);
    expect(readRun(db, second + 1)).toBeNull();
  });

  it('has foreign keys on: a run or a report for a missing version throws and writes nothing', () => {
    const id = created({ scenario: brennock });
    expect(db.pragma('foreign_keys', { simple: true })).toBe(1);
    const run = { scenarioId: id, version: 2, method: 'exact', startedAt: new Date().toISOString(), durationMs: 1, figures: {}, warnings: [] };
    expect(() => recordRun(db, run)).toThrow(/FOREIGN KEY/);
    expect(() => recordRun(db, { ...run, scenarioId: 77, version: 1 })).toThrow(/FOREIGN KEY/);
    expect(() => recordReport(db, { scenarioId: id, version: 5, fingerprint: 'abc', pdf: new Uint8Array([1]), issuedAt: '', requestedBy: '' })).toThrow(/FOREIGN KEY/);
    expect(count('runs')).toBe(0);
    expect(count('reports')).toBe(0);
  });
});

describe('the file', () => {
  it('records its schema once (one row per migration), in WAL mode with full sync, and a reopening adds nothing', () => {
    const rows = () => db.prepare('SELECT version, description FROM schema_version').all() as { version: number }[];
    expect(rows()).toHaveLength(1);
    expect(rows()[0].version).toBe(latestSchemaVersion);
    expect(db.pragma('journal_mode', { simple: true })).toBe('wal');
    expect(db.pragma('synchronous', { simple: true })).toBe(2); // FULL
    created({ scenario: brennock });
    db.close();
    const again = openStore(store.file);
    if (!again.ok) throw new Error(again.message);
    db = again.db;
    store = { ...store, db };
    expect(rows()).toHaveLength(1);
    expect(count('versions')).toBe(1);
  });

  it('leaves a damaged file and a newer one byte for byte as they were, in WAL and in rollback-journal mode', () => {
    for (let k = 0; k < 5; k++) created({ scenario: variant(k) });
    const root = (db.prepare("SELECT rootpage FROM sqlite_master WHERE name = 'versions'").get() as { rootpage: number }).rootpage;
    const pageSize = db.pragma('page_size', { simple: true }) as number;
    db.close();
    for (const mode of ['wal', 'delete'] as const) {
      for (const harm of ['damaged', 'newer'] as const) {
        const copy = join(store.folder, `${mode}-${harm}.sqlite`);
        const source = new Database(store.file);
        source.exec(`VACUUM INTO '${copy}'`);
        source.close();
        const setup = new Database(copy);
        setup.pragma(`journal_mode = ${mode}`);
        if (harm === 'newer') setup.prepare('INSERT INTO schema_version VALUES (99, ?, ?)').run('from the future', new Date().toISOString());
        setup.close();
        if (harm === 'damaged') {
          const fd = openSync(copy, 'r+');
          writeSync(fd, Buffer.alloc(pageSize, 0xa5), 0, pageSize, (root - 1) * pageSize);
          closeSync(fd);
        }
        const before = fileHash(copy);
        const opened = openStore(copy);
        expect(opened.ok, `${mode} ${harm}`).toBe(false);
        if (opened.ok) continue;
        expect(opened.transient).toBe(false);
        expect(opened.message).toMatch(harm === 'newer' ? /newer Tidemark \(schema 99/ : /quick check/);
        expect(opened.message).toMatch(/left untouched/);
        expect(fileHash(copy), `${mode} ${harm}`).toBe(before);
      }
    }
    db = new Database(store.file);
    store = { ...store, db };
  });
});

describe('limits', () => {
  const at = (n: number, ch = 'x') => ch.repeat(n);
  it('accepts each text at its limit and refuses one past it, naming the field', () => {
    const ok = { scenario: 1, name: at(storeLimits.name), tags: Array.from({ length: storeLimits.tags }, (_, k) => `${k}${at(storeLimits.tag - 2)}`), notes: at(storeLimits.notes), note: at(storeLimits.note), author: at(storeLimits.author) };
    expect(newScenarioSchema.safeParse(ok).success).toBe(true);
    const refused: [string, Record<string, unknown>][] = [
      ['name', { name: at(storeLimits.name + 1) }],
      ['name', { name: '   ' }],
      ['tags', { tags: Array.from({ length: storeLimits.tags + 1 }, (_, k) => `t${k}`) }],
      ['tags[3]', { tags: ['a', 'b', 'c', at(storeLimits.tag + 1)] }],
      ['tags[0]', { tags: [' '] }],
      ['notes', { notes: at(storeLimits.notes + 1) }],
      ['note', { note: at(storeLimits.note + 1) }],
      ['author', { author: at(storeLimits.author + 1) }],
      ['name', { name: 5 }],
    ];
    for (const [path, change] of refused) {
      const parsed = newScenarioSchema.safeParse({ ...ok, ...change });
      expect(parsed.success, path).toBe(false);
      expect(parsed.error?.issues.map((i) => formatPath(i.path)), path).toEqual([path]);
    }
    expect(newVersionSchema.safeParse({ scenario: 1, baseVersion: 0 }).error?.issues.map((i) => formatPath(i.path))).toEqual(['baseVersion']);
    expect(newVersionSchema.safeParse({ scenario: 1, baseVersion: 1.5 }).error?.issues.map((i) => formatPath(i.path))).toEqual(['baseVersion']);
  });

  it('refuses a scenario whose JSON is over the limit (413, path scenario) and writes nothing', () => {
    const huge = { ...brennock, description: at(storeLimits.scenarioChars) };
    const r = createScenario(db, { scenario: huge });
    expect(r).toMatchObject({ ok: false, status: 413, path: 'scenario' });
    expect(count('scenarios')).toBe(0);
    const id = created({ scenario: brennock });
    expect(saveVersion(db, id, { scenario: huge, baseVersion: 1 })).toMatchObject({ ok: false, status: 413, path: 'scenario' });
    expect(createScenario(db, { scenario: undefined })).toMatchObject({ ok: false, path: 'scenario' });
    expect(count('versions')).toBe(1);
  });
});
