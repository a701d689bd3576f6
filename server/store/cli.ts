/**
 * `tidemark store …`: the scenario store from the command line — list, show (a version's
 * scenario, the history, a diff), export, import and backup. Called by cli-commands.ts; it
 * returns the outcome (exit code, stdout, stderr, a file for the program to write whole) as
 * the other commands do. Exit 0 on success, 1 when the store cannot be used or the input is
 * refused, 2 on a usage error; messages never carry stack traces.
 *
 * The store is the server's: TIDEMARK_DATA, else data/ in the project, or --data DIR.
 * list, show, export and backup open it read-only (they never write to it, and work while the
 * server runs); import opens it for writing and adds everything in one transaction.
 */
import Database from 'better-sqlite3';
import { closeSync, existsSync, fsyncSync, linkSync, openSync, readFileSync, renameSync, statSync, unlinkSync } from 'node:fs';
import { randomBytes } from 'node:crypto';
import { basename, dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describeChange, diffJson } from '../../models/scenario/diff.ts';
import { describeProblems } from '../../models/scenario/problems.ts';
import { sameFile } from '../same-file.ts';
import { visibleText } from '../terminal-text.ts';
import { fromUserFolder } from '../user-folder.ts';
import { storeFileName, storeFileOf } from './location.ts';
import { describeFailure, openStore, type Db } from './open.ts';
import type { ScenarioSummary, VersionInfo } from './records.ts';
import { listScenarios, listVersions, readVersion, scenarioSummary } from './scenarios.ts';
import { exportScenarios, importScenarios } from './transfer.ts';

/** What the store command gives back: as CliOutcome in cli-commands.ts (kept structural so that this file needs nothing from there). */
export interface StoreOutcome {
  code: number;
  stdout: string;
  stderr: string;
  file?: { path: string; text: string };
}

export interface StoreCliContext {
  /** The folder relative paths are read from. */
  folder: string;
  /** The environment (TIDEMARK_DATA). */
  env: Record<string, string | undefined>;
}

export const storeUsage = `usage: tidemark store ACTION [options]      (from the repository: npm run -s cli -- store …)

  list                     the stored scenarios, newest update first: id, name, tags, latest
                           version, updated, author
                           options: [--search TEXT] [--deleted include|only] [--json]
  show ID                  the scenario of the latest version as JSON (\`> file.json\` keeps it)
                           options: [--version V] [--history] [--diff A B] [--json]
                           --history: every version with its time, author, fingerprint and note
                           --diff A B: what changed from version A to version B, one line a field
  export FILE              every scenario (deleted ones too), or those named with --id ID
                           (repeatable), with all versions, runs (without full results) and issued
                           reports, into one JSON file (written whole, never over the store)
  import FILE              add the scenarios of an export file as new scenarios, all their versions
                           kept; the file is checked first (shape, fingerprints, report bytes) and
                           a file with any problem adds nothing
  backup FILE              a copy of the store that opens on its own (SQLite's VACUUM INTO),
                           checked with integrity_check; never over an existing file

options for every action:
  --data DIR               the data folder holding ${storeFileName} (default: TIDEMARK_DATA, else
                           data/ in the project)

Exit status: 0 success, 1 the store cannot be used or the input is refused, 2 usage error.`;

/** Options that take no value; --id may be repeated; --diff takes two values. */
const flags = new Set(['json', 'history']);
const known: Record<string, string[]> = {
  list: ['search', 'deleted', 'json', 'data'],
  show: ['version', 'history', 'diff', 'json', 'data'],
  export: ['id', 'data'],
  import: ['data'],
  backup: ['data'],
};

interface StoreArgs {
  action: string;
  positional: string[];
  options: Map<string, string[]>;
}

function parseStoreArgs(args: string[]): { ok: true; value: StoreArgs } | { ok: false; message: string } {
  const [action = '', ...rest] = args;
  const allowed = known[action];
  if (!allowed) return { ok: false, message: action === '' ? 'store needs an action: list, show, export, import or backup' : `unknown store action '${action}'` };
  const positional: string[] = [];
  const options = new Map<string, string[]>();
  for (let i = 0; i < rest.length; i++) {
    const a = rest[i];
    if (!a.startsWith('--')) {
      positional.push(a);
      continue;
    }
    const eq = a.indexOf('=');
    const name = eq < 0 ? a.slice(2) : a.slice(2, eq);
    if (!allowed.includes(name)) return { ok: false, message: `unknown option --${name} for store ${action}` };
    const values = options.get(name) ?? [];
    if (values.length > 0 && name !== 'id') return { ok: false, message: `option --${name} is given twice` };
    if (flags.has(name)) {
      if (eq >= 0) return { ok: false, message: `option --${name} takes no value` };
      values.push('yes');
    } else if (name === 'diff') {
      const a1 = rest[i + 1];
      const b1 = rest[i + 2];
      if (eq >= 0 || a1 === undefined || b1 === undefined) return { ok: false, message: 'option --diff needs two version numbers: --diff A B' };
      values.push(a1, b1);
      i += 2;
    } else {
      const value = eq < 0 ? rest[++i] : a.slice(eq + 1);
      if (value === undefined) return { ok: false, message: `option --${name} needs a value` };
      values.push(value);
    }
    options.set(name, values);
  }
  return { ok: true, value: { action, positional, options } };
}

/** The repository root: the nearest folder above this file holding package.json (as server/main.ts finds it). */
function projectRoot(): string {
  let dir = dirname(fileURLToPath(import.meta.url));
  while (!existsSync(join(dir, 'package.json')) && dirname(dir) !== dir) dir = dirname(dir);
  return dir;
}

/** A positive whole number (an id or a version), or null. */
function positive(text: string): number | null {
  return /^[1-9]\d{0,15}$/.test(text.trim()) ? Number(text.trim()) : null;
}

const plural = (n: number, word: string) => `${n} ${word}${n === 1 ? '' : 's'}`;
const usageError = (message: string): StoreOutcome => ({ code: 2, stdout: '', stderr: `${visibleText(message)}\n\n${storeUsage}\n` });
const refused = (message: string): StoreOutcome => ({ code: 1, stdout: '', stderr: `${message}\n` });

function table(headers: string[], rows: string[][]): string {
  const widths = headers.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i].length)));
  const line = (r: string[]) => r.map((s, i) => (i === r.length - 1 ? s : s.padEnd(widths[i]))).join('  ').trimEnd();
  return [line(headers), line(widths.map((w) => '-'.repeat(w))), ...rows.map(line)].join('\n') + '\n';
}

/** A cell of user text on one line, cut to `max` code points. */
function cell(text: string, max: number): string {
  const points = [...visibleText(text)];
  return points.length <= max ? points.join('') : `${points.slice(0, max - 1).join('')}…`;
}

/** Every scenario that matches, page by page (the store answers at most its list page at once). */
function allScenarios(db: Db, search: string | undefined, deleted: 'exclude' | 'include' | 'only'): ScenarioSummary[] {
  const out: ScenarioSummary[] = [];
  for (;;) {
    const page = listScenarios(db, { search, deleted, limit: 1000, offset: out.length });
    out.push(...page.scenarios);
    if (page.scenarios.length === 0 || out.length >= page.total) return out;
  }
}

function list(db: Db, o: Map<string, string[]>): StoreOutcome {
  const deletedText = o.get('deleted')?.[0] ?? 'exclude';
  if (deletedText !== 'exclude' && deletedText !== 'include' && deletedText !== 'only') return usageError(`--deleted must be include or only, not '${deletedText}'`);
  const search = o.get('search')?.[0];
  const scenarios = allScenarios(db, search, deletedText);
  if (o.has('json')) return { code: 0, stdout: JSON.stringify({ scenarios, total: scenarios.length }, null, 2) + '\n', stderr: '' };
  if (scenarios.length === 0) return { code: 0, stdout: '', stderr: search ? `no stored scenario matches '${visibleText(search)}'\n` : 'the store holds no scenarios\n' };
  const showDeleted = deletedText !== 'exclude';
  const rows = scenarios.map((s) => [
    String(s.id),
    cell(s.name, 50),
    cell(s.tags.join(', '), 30),
    String(s.latestVersion),
    s.updated.slice(0, 16).replace('T', ' '),
    ...(showDeleted ? [s.deleted ? 'deleted' : ''] : []),
    cell(s.author, 24),
  ]);
  const headers = ['id', 'name', 'tags', 'version', 'updated (UTC)', ...(showDeleted ? ['state'] : []), 'author'];
  const count = plural(scenarios.length, 'scenario');
  return { code: 0, stdout: table(headers, rows), stderr: `${count}\n` };
}

function history(versions: VersionInfo[]): string {
  const rows = versions.map((v) => [String(v.version), v.savedAt.replace('T', ' ').replace('Z', ''), cell(v.author, 24), v.fingerprint, String(v.bytes), cell(v.note, 60)]);
  return table(['version', 'saved (UTC)', 'author', 'fingerprint', 'bytes', 'note'], rows);
}

function show(db: Db, positional: string[], o: Map<string, string[]>): StoreOutcome {
  if (positional.length !== 1) return usageError(positional.length === 0 ? 'store show needs the scenario ID' : `unexpected argument '${positional[1]}'`);
  const id = positive(positional[0]);
  if (id === null) return usageError(`the scenario ID must be a whole number from 1, not '${positional[0]}'`);
  const summary = scenarioSummary(db, id);
  if (!summary) return refused(`there is no scenario ${id} in the store`);
  const json = o.has('json');
  const chosen = [o.has('history'), o.has('diff'), o.has('version')].filter(Boolean).length;
  if (chosen > 1) return usageError('give one of --version, --history and --diff');
  const name = `scenario ${id} '${visibleText(summary.name)}'${summary.deleted ? ' (deleted)' : ''}`;
  if (o.has('history')) {
    const versions = listVersions(db, id);
    return json ? { code: 0, stdout: JSON.stringify({ id, name: summary.name, versions }, null, 2) + '\n', stderr: '' } : { code: 0, stdout: history(versions), stderr: `${name}: ${plural(versions.length, 'version')}\n` };
  }
  if (o.has('diff')) {
    const [fromText, toText] = o.get('diff') as string[];
    const from = positive(fromText);
    const to = positive(toText);
    if (from === null || to === null) return usageError(`--diff needs two version numbers, not '${fromText}' '${toText}'`);
    const a = readVersion(db, id, from);
    const b = readVersion(db, id, to);
    const missing = !a ? from : !b ? to : null;
    if (missing !== null || !a || !b) return refused(`${name} has no version ${missing} (its latest is ${summary.latestVersion})`);
    const changes = diffJson(a.scenario, b.scenario);
    if (json) return { code: 0, stdout: JSON.stringify({ from, to, changes }, null, 2) + '\n', stderr: '' };
    const lines = changes.map((c) => visibleText(describeChange(c))).join('\n');
    const head = `${name}: version ${from} (${a.fingerprint}) → version ${to} (${b.fingerprint}): ${changes.length === 0 ? 'no changes' : plural(changes.length, 'change')}\n`;
    return { code: 0, stdout: changes.length ? lines + '\n' : '', stderr: head };
  }
  const versionText = o.get('version')?.[0];
  const version = versionText === undefined ? undefined : positive(versionText);
  if (version === null) return usageError(`--version must be a whole number from 1, not '${versionText}'`);
  const stored = readVersion(db, id, version);
  if (!stored) return refused(`${name} has no version ${version} (its latest is ${summary.latestVersion})`);
  const about = `${name}, version ${stored.version} of ${summary.latestVersion}, saved ${stored.savedAt}${stored.author ? ` by ${visibleText(stored.author)}` : ''}, fingerprint ${stored.fingerprint}\n`;
  const body = json ? { ...summary, version: { version: stored.version, fingerprint: stored.fingerprint, note: stored.note, author: stored.author, savedAt: stored.savedAt, bytes: stored.bytes }, scenario: stored.scenario } : stored.scenario;
  return { code: 0, stdout: JSON.stringify(body, null, 2) + '\n', stderr: json ? '' : about };
}

function exportTo(db: Db, store: string, positional: string[], o: Map<string, string[]>): StoreOutcome {
  if (positional.length !== 1) return usageError(positional.length === 0 ? 'store export needs the FILE to write' : `unexpected argument '${positional[1]}'`);
  const [out] = positional;
  if (sameFile(out, store) || sameFile(out, `${store}-wal`) || sameFile(out, `${store}-shm`)) return usageError(`refusing to write the export to '${out}': it is the store itself`);
  const ids: number[] = [];
  for (const text of o.get('id') ?? []) {
    const id = positive(text);
    if (id === null) return usageError(`--id must be a scenario id (a whole number from 1), not '${text}'`);
    if (!ids.includes(id)) ids.push(id);
  }
  const exported = exportScenarios(db, ids);
  if (!exported.ok) return refused(`${exported.message} in the store; nothing was written`);
  const s = exported.value.scenarios;
  const count = (f: (x: (typeof s)[number]) => number) => s.reduce((n, x) => n + f(x), 0);
  return {
    code: 0,
    stdout: '',
    stderr: `wrote ${plural(s.length, 'scenario')} (${plural(count((x) => x.versions.length), 'version')}, ${plural(count((x) => x.runs.length), 'run')}, ${plural(count((x) => x.reports.length), 'report')}) to ${visibleText(out)}\n`,
    file: { path: out, text: JSON.stringify(exported.value, null, 1) + '\n' },
  };
}

function readJsonFile(path: string): { ok: true; value: unknown } | { ok: false; message: string } {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    return { ok: false, message: `cannot read '${visibleText(path)}'${code === 'ENOENT' ? ': no such file' : code ? ` (${code})` : ''}` };
  }
  try {
    return { ok: true, value: JSON.parse(text) };
  } catch (e) {
    return { ok: false, message: `'${visibleText(path)}' is not valid JSON: ${visibleText((e as Error).message)}` };
  }
}

function importFrom(db: Db, store: string, positional: string[]): StoreOutcome {
  if (positional.length !== 1) return usageError(positional.length === 0 ? 'store import needs the export FILE to read' : `unexpected argument '${positional[1]}'`);
  const [file] = positional;
  const read = readJsonFile(file);
  if (!read.ok) return refused(read.message);
  const imported = importScenarios(db, read.value);
  if (!imported.ok) {
    const all = imported.problems;
    // The first 20: a file wrong throughout would otherwise fill the screen.
    const shown = all.slice(0, 20).map((p) => ({ path: visibleText(p.path), message: visibleText(p.message) }));
    const more = all.length > shown.length ? `\n(and ${all.length - shown.length} more)` : '';
    return refused(`${visibleText(file)}: refused, nothing was imported; the file has ${plural(all.length, 'problem')}:\n${describeProblems(shown)}${more}`);
  }
  const list = imported.value;
  const lines = list.map((s) => `  ${s.id}  ${cell(s.name, 60)}  (${plural(s.versions, 'version')}, ${plural(s.runs, 'run')}, ${plural(s.reports, 'report')})`).join('\n');
  return { code: 0, stdout: lines ? lines + '\n' : '', stderr: `imported ${plural(list.length, 'scenario')} from ${visibleText(file)} into ${visibleText(store)} as new scenarios\n` };
}

/** Flushes a written file to the disk (VACUUM INTO does not: SQLite leaves its output unsynced). */
function syncFile(path: string): void {
  const fd = openSync(path, 'r+');
  try {
    fsyncSync(fd);
  } finally {
    closeSync(fd);
  }
}

/** Puts `from` at `to` unless something is there already: link() fails on an existing name, where rename() would replace it. */
function placeWithoutReplacing(from: string, to: string): void {
  try {
    linkSync(from, to);
    unlinkSync(from);
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    // File systems without hard links: check, then rename (a race with another writer is left to chance there).
    if (code === 'EEXIST' || existsSync(to)) throw e;
    renameSync(from, to);
  }
}

/**
 * backup: VACUUM INTO rather than the online backup API (better-sqlite3's db.backup()).
 * VACUUM INTO copies in one read transaction, so the copy is a consistent snapshot even while
 * the server keeps saving (WAL lets both go on), and it runs synchronously as every command
 * here does; the backup API is asynchronous and restarts its page copy whenever another
 * connection writes, so on a busy store it can fall behind. The copy is also compacted (no
 * free pages). It is written to a temporary name beside the target, flushed (SQLite does not
 * fsync VACUUM INTO's output), checked with integrity_check, and only then given its name.
 */
function backupTo(db: Db, store: string, positional: string[]): StoreOutcome {
  if (positional.length !== 1) return usageError(positional.length === 0 ? 'store backup needs the FILE to write' : `unexpected argument '${positional[1]}'`);
  const [target] = positional;
  if (sameFile(target, store)) return usageError(`refusing to write the backup to '${target}': it is the store itself`);
  if (existsSync(target)) return refused(`'${visibleText(target)}' already exists; a backup is never written over a file: choose a new name`);
  if (!existsSync(dirname(target))) return refused(`cannot write the backup '${visibleText(target)}': the folder ${visibleText(dirname(target))} does not exist`);
  const temporary = join(dirname(target), `.${basename(target)}.${process.pid}-${randomBytes(6).toString('hex')}.tmp`);
  const fail = (what: string, e: unknown): StoreOutcome => {
    try {
      unlinkSync(temporary);
    } catch {
      // not created, or already gone
    }
    return refused(`the backup to '${visibleText(target)}' failed while ${what}: ${visibleText(e instanceof Error ? e.message : String(e))}; nothing was written there`);
  };
  try {
    db.prepare('VACUUM INTO ?').run(temporary);
  } catch (e) {
    return fail('copying the store', e);
  }
  let verdict: string;
  let scenarios: number;
  try {
    syncFile(temporary);
    const copy = new Database(temporary, { readonly: true, fileMustExist: true });
    try {
      verdict = String(copy.pragma('integrity_check', { simple: true }));
      scenarios = (copy.prepare('SELECT count(*) AS n FROM scenarios').get() as { n: number }).n;
    } finally {
      copy.close();
    }
  } catch (e) {
    return fail('checking the copy', e);
  }
  if (verdict !== 'ok') return fail('checking the copy', new Error(`integrity_check says ${verdict}`));
  try {
    placeWithoutReplacing(temporary, target);
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    return fail('naming it', code === 'EEXIST' ? new Error('the file appeared meanwhile; choose a new name') : e);
  }
  const bytes = statSync(target).size;
  return { code: 0, stdout: '', stderr: `backup of ${visibleText(store)} written to ${visibleText(target)} (VACUUM INTO; ${bytes} bytes, ${plural(scenarios, 'scenario')}); it opens on its own and integrity_check is ok\n` };
}

export function runStoreCli(args: string[], context: StoreCliContext): StoreOutcome {
  if (args.includes('--help') || args.includes('-h')) return { code: 0, stdout: storeUsage + '\n', stderr: '' };
  const parsed = parseStoreArgs(args);
  if (!parsed.ok) return usageError(parsed.message);
  const { action, options } = parsed.value;
  const positional = parsed.value.positional.map((p) => fromUserFolder(context.folder, p));
  const dataDir = options.get('data')?.[0];
  const store = dataDir !== undefined ? join(fromUserFolder(context.folder, dataDir), storeFileName) : storeFileOf(context.env, projectRoot());
  // Only import writes; a read-only opening also never creates a missing store.
  const opening = openStore(store, { readOnly: action !== 'import' });
  if (!opening.ok) return refused(visibleText(opening.message));
  if (action === 'import' && opening.readOnly) {
    opening.db.close();
    return refused(visibleText(opening.note ?? `the store ${store} cannot be written`));
  }
  const db = opening.db;
  try {
    switch (action) {
      case 'list':
        return positional.length > 0 ? usageError(`unexpected argument '${parsed.value.positional[0]}'`) : list(db, options);
      case 'show':
        return show(db, parsed.value.positional, options);
      case 'export':
        return exportTo(db, store, positional, options);
      case 'import':
        return importFrom(db, store, positional);
      default:
        return backupTo(db, store, positional);
    }
  } catch (e) {
    // A statement failed on an open store (damage found late, a lock): said plainly.
    return refused(visibleText(describeFailure(store, e).message));
  } finally {
    db.close();
  }
}
