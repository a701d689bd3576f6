/**
 * "Import CSV…" in the Measured levels panel: a levels file chosen (or its text pasted) is read
 * by the core's parser (models/levels/observations-csv.ts, the one the command line uses), with
 * an optional mapping of the file's own headers, and its rows replace or are added to the
 * scenario's inline `observations`. All or nothing: when any row is bad, every problem is
 * listed as `line N, column X: message` beside the control and nothing is imported; skipped
 * empty lines and columns not read are said, so no row goes unnoticed. The control is built
 * once and kept across the panel's re-renders, so its messages and mapping stay in place.
 */
import '../levels-import.css';
import { defaultHeaders, observationFields, observationsCsvColumns, parseObservationsCsv, type ObservationField } from '../../models/levels/observations-csv.ts';
import type { ObservationMapping } from '../../models/scenario/schema.ts';
import { h } from './dom.ts';
import type { ScenarioStore } from './store.ts';

/** A file larger than this is refused before it is read: 10,000 rows of levels take well under 1 MB. */
export const importMaxBytes = 2 * 1024 * 1024;
/** The schema's ceiling on a scenario's observations. */
const maxObservations = 10_000;

type Mode = 'replace' | 'append';

/** The text last read, kept so that a mapping can be chosen and the import tried again. */
interface Source {
  text: string;
  name: string;
}

const fieldWords: Record<ObservationField, string> = {
  time: 'Time',
  compartment: 'Compartment',
  concentration: 'Level',
  subject: 'Subject',
  belowLimit: 'Below limit',
  limit: 'Limit',
  label: 'Label',
};

/** "levels.csv line 4, column time: …" → "line 4, column time: …": the file is named once, above the list. */
function withoutFile(line: string, name: string): string {
  if (line.startsWith(`${name} line `)) return line.slice(name.length + 1);
  if (line.startsWith(`${name}: `)) return line.slice(name.length + 2);
  return line;
}

const sizeWords = (bytes: number) => (bytes >= 1024 * 1024 ? `${Number((bytes / (1024 * 1024)).toFixed(1))} MB` : `${Math.ceil(bytes / 1024)} kB`);

export class LevelsImport {
  readonly element: HTMLElement;
  private source: Source | null = null;
  private mapping: ObservationMapping = {};
  private mode: Mode = 'append';
  private readonly fileInput: HTMLInputElement;
  private readonly pasteBox: HTMLTextAreaElement;
  private readonly mappingHost: HTMLElement;
  private readonly status: HTMLElement;
  private readonly problems: HTMLElement;

  /** `imported` is told the words to announce once the observations are in the scenario. */
  constructor(
    private readonly store: ScenarioStore,
    private readonly imported: (words: string) => void,
  ) {
    this.fileInput = h('input', { type: 'file', accept: '.csv,text/csv,text/plain', class: 'visually-hidden', id: 'levels-import-file', 'data-testid': 'levels-import-file', tabindex: -1 });
    this.fileInput.addEventListener('change', () => void this.chosen());
    const choose = h('button', { type: 'button', 'data-focus-key': 'levels-import-choose', 'data-testid': 'levels-import-choose' }, 'Import CSV…');
    choose.addEventListener('click', () => this.fileInput.click());

    this.pasteBox = h('textarea', { rows: 6, spellcheck: 'false', 'aria-label': 'CSV text of levels', 'data-testid': 'levels-import-text', placeholder: 'subject,time [h],concentration [mg/L]\nP-017,23.75,4.1' });
    const pasteButton = h('button', { type: 'button', 'data-testid': 'levels-import-paste' }, 'Import the text');
    pasteButton.addEventListener('click', () => {
      this.source = null;
      this.read({ text: this.pasteBox.value, name: 'pasted text' });
    });

    const modes = (['append', 'replace'] as const).map((m) => {
      const id = `levels-import-${m}`;
      const radio = h('input', { type: 'radio', name: 'levels-import-mode', id, value: m, 'data-testid': id, checked: m === this.mode });
      radio.addEventListener('change', () => {
        if (radio.checked) this.mode = m;
      });
      return h('span', { class: 'levels-check' }, radio, h('label', { for: id }, m === 'append' ? 'add to the observations' : 'replace the observations'));
    });

    this.mappingHost = h('div', { class: 'levels-import-mapping' });
    this.status = h('p', { class: 'levels-import-status', role: 'status', 'aria-live': 'polite', 'data-testid': 'levels-import-status' });
    this.problems = h('div', { class: 'levels-import-problems', 'data-testid': 'levels-import-problems', hidden: true });
    this.element = h(
      'div',
      { class: 'levels-import', 'data-testid': 'levels-import' },
      h('div', { class: 'levels-import-row' }, choose, this.fileInput, h('fieldset', { class: 'levels-import-mode' }, h('legend', { class: 'visually-hidden' }, 'Imported rows'), ...modes)),
      h('p', { class: 'note' }, `Headers: ${observationFields.map((f) => defaultHeaders[f]).join(', ')} (time and concentration needed; a unit may follow in brackets, "concentration [mg/L]"); other names by a mapping. At most ${sizeWords(importMaxBytes)}; nothing is imported while any row is bad.`),
      h('details', { class: 'levels-import-paste' }, h('summary', {}, 'or paste the CSV text'), this.pasteBox, h('div', { class: 'run-row' }, pasteButton)),
      this.mappingHost,
      this.status,
      this.problems,
    );
  }

  /** Another scenario was opened: what was said about the last import no longer applies. */
  reset(): void {
    this.forgetSource();
    this.mapping = {};
    this.status.textContent = '';
    this.status.classList.remove('levels-import-refused');
    this.showList([], null);
  }

  /** A text that was not read (too large, unreadable) leaves no mapping of the one before. */
  private forgetSource(): void {
    this.source = null;
    this.mappingHost.replaceChildren();
  }

  private async chosen(): Promise<void> {
    const file = this.fileInput.files?.[0];
    // The same file may be chosen again after it is fixed: clear the input so `change` fires.
    this.fileInput.value = '';
    if (!file) return;
    if (file.size > importMaxBytes) {
      this.forgetSource();
      this.refuse(file.name, [`the file is ${sizeWords(file.size)}; at most ${sizeWords(importMaxBytes)} is read (split it, or keep only the levels of this patient)`]);
      return;
    }
    let text: string;
    try {
      text = await file.text();
    } catch {
      this.forgetSource();
      this.refuse(file.name, ['the browser could not read the file']);
      return;
    }
    this.read({ text, name: file.name });
  }

  /** Reads a text with the mapping chosen; imports it when every row is good. */
  private read(source: Source): void {
    const bytes = new Blob([source.text]).size;
    if (bytes > importMaxBytes) {
      this.forgetSource();
      this.refuse(source.name, [`the text is ${sizeWords(bytes)}; at most ${sizeWords(importMaxBytes)} is read`]);
      return;
    }
    // A mapping names the headers of one file: entries the new file lacks are dropped.
    const columns = observationsCsvColumns(source.text, {});
    if (this.source?.name !== source.name || this.source.text !== source.text) this.keepMappingFor(columns?.headers ?? []);
    this.source = source;
    this.showMapping(columns?.headers ?? [], observationsCsvColumns(source.text, this.mapping)?.missing ?? []);
    const parsed = parseObservationsCsv(source.text, source.name, this.mapping);
    if (!parsed.ok) {
      this.refuse(source.name, parsed.errors.map((e) => withoutFile(e, source.name)));
      return;
    }
    const existing = this.store.scenario.observations;
    const fromFile = typeof existing === 'object' && existing !== null && !Array.isArray(existing);
    if (this.mode === 'append' && fromFile) {
      this.refuse(source.name, ['the scenario names a levels file, which only the command line reads; choose "replace the observations" to put these rows in its place']);
      return;
    }
    const kept = this.mode === 'append' && Array.isArray(existing) ? existing.length : 0;
    if (kept + parsed.observations.length > maxObservations) {
      this.refuse(source.name, [`${kept} observations and ${parsed.observations.length} more make more than the ${maxObservations.toLocaleString('en')} a scenario holds`]);
      return;
    }
    const replaced = this.mode === 'replace' && Array.isArray(existing) ? existing.length : 0;
    this.store.mutate((doc) => {
      const before = this.mode === 'append' && Array.isArray(doc.observations) ? (doc.observations as unknown[]) : [];
      doc.observations = [...before, ...parsed.observations];
    });
    const n = parsed.observations.length;
    // Replacing a file reference is said in words, with the file's name: the scenario no longer names it.
    const fileName = fromFile ? String((existing as { file?: unknown }).file ?? '') : '';
    const how =
      this.mode === 'append'
        ? kept
          ? `, after the ${kept} already there`
          : ''
        : fromFile
          ? `, in place of the scenario's levels file${fileName ? ` "${fileName}"` : ''} (no longer named)`
          : replaced
            ? `, in place of the ${replaced} there were`
            : '';
    const words = `Imported ${n} observation${n === 1 ? '' : 's'} from ${source.name}${how}.`;
    this.status.textContent = words;
    this.status.classList.remove('levels-import-refused');
    this.showList(parsed.notes.map((e) => withoutFile(e, source.name)), null);
    this.imported(words);
  }

  private keepMappingFor(headers: string[]): void {
    const known = new Set(headers.map((x) => x.toLowerCase()));
    this.mapping = Object.fromEntries(Object.entries(this.mapping).filter(([, v]) => typeof v === 'string' && known.has(v.toLowerCase())));
  }

  /** Nothing imported: the reason and every problem, beside the control. */
  private refuse(name: string, lines: string[]): void {
    this.status.textContent = `Nothing imported from ${name}: ${lines.length === 1 ? 'a problem' : `${lines.length} problems`}, listed below. The observations are as they were.`;
    this.status.classList.add('levels-import-refused');
    this.showList(lines, 'levels-import-errors');
  }

  private showList(lines: string[], errorClass: string | null): void {
    if (lines.length === 0) {
      this.problems.replaceChildren();
      this.problems.hidden = true;
      return;
    }
    const list = h('ul', { class: errorClass ?? 'levels-import-notes', 'data-testid': errorClass ? 'levels-import-errors' : 'levels-import-notes' }, ...lines.map((l) => h('li', {}, l)));
    this.problems.replaceChildren(list);
    this.problems.hidden = false;
  }

  /**
   * The mapping, offered from the file's own headers once a text has been read: open when a
   * needed column is missing under our names, folded otherwise.
   */
  private showMapping(headers: string[], missing: ObservationField[]): void {
    if (headers.length === 0) {
      this.mappingHost.replaceChildren();
      return;
    }
    const selects = observationFields.map((f) => {
      const id = `levels-import-map-${f}`;
      const select = h('select', { id, 'data-testid': id }, h('option', { value: '' }, `default: ${defaultHeaders[f]}`), ...headers.map((name) => h('option', { value: name, selected: this.mapping[f]?.toLowerCase() === name.toLowerCase() }, name)));
      select.addEventListener('change', () => {
        if (select.value === '') delete this.mapping[f];
        else this.mapping[f] = select.value;
      });
      const needed = missing.includes(f);
      return h('div', { class: `field${needed ? ' levels-import-needed' : ''}` }, h('label', { for: id }, fieldWords[f], needed ? h('span', { class: 'unit' }, ' (needed)') : null), select);
    });
    const again = h('button', { type: 'button', class: 'primary', 'data-testid': 'levels-import-again' }, 'Import with this mapping');
    again.addEventListener('click', () => {
      if (this.source) this.read(this.source);
    });
    const details = h(
      'details',
      { class: 'levels-import-map', 'data-testid': 'levels-import-mapping', open: missing.length > 0 },
      h('summary', {}, missing.length > 0 ? `Which column holds the ${missing.map((f) => fieldWords[f].toLowerCase()).join(' and the ')}?` : 'Column mapping'),
      h('div', { class: 'levels-import-map-fields' }, ...selects),
      h('div', { class: 'run-row' }, again),
    );
    this.mappingHost.replaceChildren(details);
  }
}
