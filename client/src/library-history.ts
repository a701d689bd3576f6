/**
 * The history of one stored scenario: its versions (choose any two for the readable list of
 * changes, or open an older one as edits on top of the latest), the runs recorded of it and
 * the reports issued, each with a link to the PDF as it was issued.
 */
import type { KeyFigures } from '../../models/result/key-figures.ts';
import { describeChange } from '../../models/scenario/diff.ts';
import { h } from './dom.ts';
import { localDateTime } from './draft.ts';
import { getDiff, getScenario, getVersion, listReports, listRuns, listVersions, reportPdfUrl, type ReportInfo, type RunInfo, type StoredScenario, type VersionInfo } from './library-api.ts';
import type { PageShell } from './library-save.ts';

export interface HistoryHooks {
  /** A sentence in the library's status line. */
  say(text: string): void;
  /** A version was put on screen (the panel closes). */
  opened(): void;
}

function num(v: number): string {
  if (v === 0) return '0';
  return Math.abs(v) >= 1e-3 && Math.abs(v) < 1e6 ? String(Number(v.toPrecision(4))) : v.toExponential(3);
}

/** A run's key figures in words: per compartment Cmax (at Tmax), Cmin and AUC, with units. */
export function keyFigureWords(figures: unknown): string {
  const k = figures as Partial<KeyFigures> | null;
  if (typeof k !== 'object' || k === null || typeof k.compartments !== 'object' || typeof k.units !== 'object') return figureWords(figures);
  const u = k.units;
  const lines = Object.entries(k.compartments).map(([id, c]) => `${id}: Cmax ${num(c.cmax)} ${u.concentration} at ${num(c.tmax)} ${u.time}, Cmin ${num(c.cmin)}, AUC ${num(c.auc)} ${u.auc}`);
  return lines.length ? lines.join('; ') : 'no compartment with a volume';
}

/** Any other figures: the first few numbers as "name value", found by walking the object. */
export function figureWords(figures: unknown, limit = 6): string {
  const out: string[] = [];
  const walk = (v: unknown, path: string) => {
    if (out.length >= limit) return;
    if (typeof v === 'number' && Number.isFinite(v)) out.push(`${path} ${num(v)}`);
    else if (typeof v === 'string' && path) out.push(`${path} ${v}`);
    else if (Array.isArray(v)) v.forEach((x, i) => walk(x, `${path}[${i}]`));
    else if (typeof v === 'object' && v !== null) for (const [k, x] of Object.entries(v)) walk(x, path ? `${path}.${k}` : k);
  };
  walk(figures, '');
  return out.length ? out.join(', ') : '—';
}

function table(caption: string, heads: string[], rows: HTMLTableRowElement[], testid: string): HTMLTableElement {
  return h('table', { class: 'library-table', 'data-testid': testid }, h('caption', { class: 'visually-hidden' }, caption), h('thead', {}, h('tr', {}, ...heads.map((t) => h('th', { scope: 'col' }, t)))), h('tbody', {}, ...rows));
}

const when = (iso: string) => h('time', { datetime: iso }, localDateTime(iso));

export class HistoryView {
  private serial = 0;

  constructor(
    private readonly host: HTMLElement,
    private readonly shell: PageShell,
    private readonly hooks: HistoryHooks,
  ) {
    host.hidden = true;
  }

  clear(): void {
    this.serial++;
    this.host.replaceChildren();
    this.host.hidden = true;
  }

  async show(id: number): Promise<void> {
    const serial = ++this.serial;
    const [stored, versions, runs, reports] = await Promise.all([getScenario(id), listVersions(id), listRuns(id), listReports(id)]);
    if (serial !== this.serial) return;
    this.host.hidden = false;
    if (!stored.ok || !versions.ok) {
      this.host.replaceChildren(h('p', {}, `The history could not be read: ${!stored.ok ? stored.message : !versions.ok ? versions.message : ''}`));
      return;
    }
    const s = stored.value;
    const diffHost = h('div', { class: 'diff-host', 'data-testid': 'diff' });
    this.host.replaceChildren(
      h('h3', {}, `“${s.name}”`, s.deleted ? ' (deleted)' : ''),
      s.notes ? h('p', { class: 'library-notes' }, s.notes) : '',
      h('h4', {}, 'Versions'),
      this.versions(s, versions.value.versions, diffHost),
      diffHost,
      h('h4', {}, 'Runs'),
      runs.ok ? this.runs(runs.value.runs) : h('p', {}, runs.message),
      h('h4', {}, 'Reports issued'),
      reports.ok ? this.reports(reports.value.reports) : h('p', {}, reports.message),
    );
  }

  private versions(s: StoredScenario, versions: VersionInfo[], diffHost: HTMLElement): HTMLElement {
    const latest = versions[0];
    const radio = (group: 'from' | 'to', v: number, checked: boolean) =>
      h('input', { type: 'radio', name: `diff-${group}`, value: v, checked, 'aria-label': `${group === 'from' ? 'From' : 'To'} version ${v}`, 'data-testid': `diff-${group}-${v}` });
    const rows = versions.map((v, i) => {
      const open = h('button', { type: 'button', 'data-testid': `version-open-${v.version}` }, v === latest ? 'Open' : 'Open as new edits');
      if (v !== latest) open.title = `Loads version ${v.version} on top of version ${latest.version}: saving makes version ${latest.version + 1}.`;
      open.addEventListener('click', () => void this.openVersion(s, v, latest));
      return h(
        'tr',
        { 'data-testid': `version-row-${v.version}` },
        h('td', { class: 'pick' }, radio('from', v.version, i === Math.min(1, versions.length - 1))),
        h('td', { class: 'pick' }, radio('to', v.version, i === 0)),
        h('th', { scope: 'row', class: 'num' }, `v${v.version}`),
        h('td', {}, when(v.savedAt)),
        h('td', {}, v.author || '—'),
        h('td', { class: 'note-cell' }, v.note || '—'),
        h('td', {}, h('code', {}, v.fingerprint)),
        h('td', {}, open),
      );
    });
    const compare = h('button', { type: 'button', 'data-testid': 'diff-show' }, 'Show the changes');
    const form = h('form', { class: 'versions-form' }, table('Versions, newest first', ['From', 'To', 'Version', 'Saved', 'By', 'Note', 'Fingerprint', ''], rows, 'library-versions'), h('div', { class: 'diff-bar' }, compare));
    const picked = (group: string) => Number((form.querySelector(`input[name="diff-${group}"]:checked`) as HTMLInputElement | null)?.value ?? NaN);
    compare.addEventListener('click', () => void this.diff(s.id, picked('from'), picked('to'), diffHost));
    return form;
  }

  private async diff(id: number, from: number, to: number, host: HTMLElement): Promise<void> {
    if (!Number.isFinite(from) || !Number.isFinite(to)) return;
    const answer = await getDiff(id, from, to);
    if (!answer.ok) {
      host.replaceChildren(h('p', {}, `The changes could not be listed: ${answer.message}`));
      return;
    }
    const { changes } = answer.value;
    const head = h('p', { class: 'diff-head' }, from === to ? `Version ${from} against itself: ` : `From version ${from} to version ${to}: `, changes.length === 0 ? 'no changes.' : `${changes.length} change${changes.length === 1 ? '' : 's'}.`);
    host.replaceChildren(head, changes.length ? h('ul', { class: 'diff-list' }, ...changes.map((c) => h('li', { class: `diff-${c.change}` }, describeChange(c)))) : '');
  }

  private async openVersion(s: StoredScenario, v: VersionInfo, latest: VersionInfo): Promise<void> {
    const answer = await getVersion(s.id, v.version);
    if (!answer.ok) {
      this.hooks.say(`Version ${v.version} could not be opened: ${answer.message}`);
      return;
    }
    // An older version goes on screen as edits on top of the latest: saving makes a new version, history is never rewritten.
    const message =
      v === latest
        ? `Opened “${s.name}” version ${v.version} from the library.`
        : `Opened version ${v.version} of “${s.name}” as unsaved changes on top of version ${latest.version}; saving makes version ${latest.version + 1}.`;
    this.hooks.opened();
    await this.shell.open(answer.value.scenario, { kind: 'stored', id: s.id, version: latest.version, name: s.name }, latest.fingerprint, true, message);
  }

  private runs(runs: RunInfo[]): HTMLElement {
    if (runs.length === 0) return h('p', { class: 'library-empty' }, 'No runs recorded yet. A run of a saved version is recorded when the screen matches it exactly.');
    const rows = runs.map((r) =>
      h(
        'tr',
        {},
        h('td', {}, when(r.startedAt)),
        h('td', { class: 'num' }, `v${r.version}`),
        h('td', {}, r.method),
        h('td', { class: 'num' }, `${num(r.durationMs)} ms`),
        h('td', { class: 'figures-cell' }, keyFigureWords(r.figures)),
        h('td', {}, r.warnings.length ? h('ul', { class: 'run-warnings' }, ...r.warnings.map((w) => h('li', {}, w))) : 'none'),
      ),
    );
    return table('Runs, newest first', ['Started', 'Version', 'Method', 'Took', 'Key figures', 'Warnings'], rows, 'library-runs');
  }

  private reports(reports: ReportInfo[]): HTMLElement {
    if (reports.length === 0) return h('p', { class: 'library-empty' }, 'No report issued yet.');
    const rows = reports.map((r) =>
      h(
        'tr',
        {},
        h('td', {}, when(r.issuedAt)),
        h('td', { class: 'num' }, `v${r.version}`),
        h('td', {}, r.requestedBy || '—'),
        h('td', {}, h('code', {}, r.fingerprint)),
        h('td', {}, h('a', { href: reportPdfUrl(r.id), target: '_blank', rel: 'noopener' }, 'PDF as issued')),
      ),
    );
    return table('Reports issued, newest first', ['Issued', 'Version', 'By', 'Fingerprint', ''], rows, 'library-reports');
  }
}
