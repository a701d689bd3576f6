/**
 * The population's covariates given row by row: the explicit choice between drawing them from
 * distributions and taking them from a table (or both, for different covariates), and the folded
 * "Covariate table" editor: a grid with one column per covariate (its unit in the header), rows and
 * columns added and removed, and CSV pasted or imported by the command line's rules
 * (models/population/covariate-csv.ts). A CSV with any bad cell applies nothing; its problems are
 * listed beside the lines they are on. Every cell carries its JSON path
 * (population.covariateTable.rows[i].name), so problems land beside it; an empty cell is refused
 * before sending (covariate-table-model.ts blankCellProblems). A column whose name breaks the
 * covariate-name rule (only possible from an opened file) is named under the grid and its cells
 * are read-only until it is renamed, since writing by its path would nest the value.
 *
 * What the other choice held when the user switched away from it is kept aside until it is
 * chosen again or discarded: switching never loses typed work. It is kept in the page's draft
 * of unsaved work too (draft.ts, KeptBeside), so a reload that restores the work restores it.
 */
import '../population-table.css';
import { parseCovariateCsv } from '../../models/population/covariate-csv.ts';
import { covariateNameProblem } from '../../models/scenario/covariate-name.ts';
import { fieldId, h } from './dom.ts';
import { button, selectField } from './fields.ts';
import type { FormHooks } from './model-form.ts';
import {
  cellText,
  cellValue,
  covariateSource,
  readKeptTable,
  relabel,
  renameKey,
  rowsPath,
  switchSource,
  tableColumns,
  type CovariateSource,
  type SetAside,
  type TableColumn,
  type TableRow,
  writeKeptTable,
} from './covariate-table-model.ts';
import type { KeptBeside } from './draft.ts';
import type { ScenarioStore } from './store.ts';

function isObject(v: unknown): v is TableRow {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/** Rows drawn as inputs; a longer table (up to 100,000 rows) is kept whole but not drawn. */
const maxShownRows = 500;

/** Suggested columns, in order, with the unit their numbers usually come in. */
const suggested: [name: string, unit: string | null][] = [
  ['weight', 'kg'],
  ['height', 'cm'],
  ['age', 'year'],
  ['sex', null],
  ['serumCreatinine', 'mg/dL'],
];

/**
 * What this page keeps beside the scenario: the set-aside source, the units of columns with no
 * number written yet, the CSV being pasted (kept across re-renders) and whether the table is unfolded.
 */
const state = {
  aside: {} as SetAside,
  units: new Map<string, string>(),
  paste: { open: false, text: '', source: '', problems: [] as string[] },
  unfolded: false,
};

/** Told when what the editor keeps beside the scenario changes without a change to it (a discard), so the draft is rewritten; one keeper per page. */
let asideChanged: () => void = () => undefined;

/**
 * The set-aside source (and the units of columns with no number yet) as the page's draft keeps
 * them beside the scenario: written with the draft of unsaved work and given back when that
 * draft is restored after a reload. `rerender` redraws the forms once they are back.
 */
export function covariateTableKept(rerender: () => void): KeptBeside {
  return {
    read: () => writeKeptTable(state),
    restore: (value) => {
      const kept = readKeptTable(value);
      state.aside = kept.aside;
      state.units = kept.units;
      asideChanged();
      rerender();
    },
    onChange: (fn) => {
      asideChanged = fn;
    },
  };
}

/** A new scenario was opened: what was kept for the old one goes. */
export function forgetCovariateTable(): void {
  state.aside = {};
  state.units.clear();
  state.paste = { open: false, text: '', source: '', problems: [] };
  state.unfolded = false;
}

/** The id of the note under the grid naming a column's bad name. */
function columnProblemId(k: number): string {
  return fieldId(`covariate-column-${k}-name-problem`);
}

const sourceWords: Record<CovariateSource, string> = {
  distributions: 'drawn from distributions',
  table: 'taken from a table of rows',
  both: 'both (the table for some covariates, distributions for others)',
};

export class CovariateTableEditor {
  constructor(
    private readonly store: ScenarioStore,
    private readonly hooks: FormHooks,
  ) {}

  private get population(): TableRow | null {
    const p = this.store.scenario.population;
    return isObject(p) ? p : null;
  }

  get source(): CovariateSource {
    return covariateSource(this.population);
  }

  private get table(): TableRow | null {
    const t = this.population?.covariateTable;
    return isObject(t) ? t : null;
  }

  private get rows(): TableRow[] {
    const rows = this.table?.rows;
    return Array.isArray(rows) ? rows.map((r) => (isObject(r) ? r : {})) : [];
  }

  // ---- the choice of source ----
  /** Three radio buttons: where the virtual subjects' covariates come from. */
  sourceSwitch(): HTMLElement {
    const current = this.source;
    const choices = (Object.keys(sourceWords) as CovariateSource[]).map((s) => {
      const id = fieldId(`population-covariate-source-${s}`);
      const radio = h('input', { type: 'radio', name: 'population-covariate-source', id, value: s, checked: s === current, 'data-focus-key': `covariate-source:${s}`, 'data-testid': `covariate-source-${s}` });
      radio.addEventListener('change', () => {
        if (radio.checked) this.switchTo(s);
      });
      return h('span', { class: 'source-choice' }, radio, h('label', { for: id }, sourceWords[s]));
    });
    return h('div', { class: 'covariate-source', role: 'radiogroup', 'aria-label': 'Where the covariates come from' }, h('span', { class: 'source-title' }, 'Covariates are'), ...choices);
  }

  /** The note saying what is kept aside for the choice not in use, with a button to discard it. */
  asideNote(kind: 'distributions' | 'table'): HTMLElement | null {
    const kept = state.aside[kind];
    if (kept === undefined) return null;
    const plural = (n: number, word: string) => `${n} ${word}${n === 1 ? '' : 's'}`;
    const names = Object.keys(isObject(kept) ? kept : {});
    const what =
      kind === 'distributions'
        ? `${plural(names.length, 'covariate distribution')}${names.length ? ` (${names.join(', ')})` : ''}`
        : `a covariate table of ${plural(isObject(kept) && Array.isArray(kept.rows) ? kept.rows.length : 0, 'row')}${isObject(kept) && typeof kept.file === 'string' ? ` (file ${kept.file})` : ''}`;
    const discard = button(kind === 'distributions' ? 'Discard them' : 'Discard it', { class: 'quiet small', 'data-testid': `discard-aside-${kind}`, 'data-focus-key': `discard-aside-${kind}` }, () => {
      delete state.aside[kind];
      asideChanged();
      this.hooks.rerender(`key:covariate-source:${this.source}`);
      this.hooks.announce(`Discarded the ${kind === 'distributions' ? 'covariate distributions' : 'covariate table'} set aside.`);
    });
    return h(
      'p',
      { class: 'note aside-note', 'data-testid': `aside-${kind}` },
      `Set aside: ${what}, typed before the switch. Not used, and not in a saved or exported scenario, while ${kind === 'distributions' ? 'only the table is' : 'only distributions are'} chosen; kept in this browser with the unsaved work, so restoring that work after a reload brings ${kind === 'distributions' ? 'them' : 'it'} back. Choose “${kind === 'distributions' ? sourceWords.distributions : sourceWords.table}” to use ${kind === 'distributions' ? 'them' : 'it'} again. `,
      discard,
    );
  }

  private switchTo(to: CovariateSource): void {
    const from = this.source;
    if (to === from) return;
    this.store.mutate((doc) => switchSource(doc.population as TableRow, state.aside, to, () => this.freshTable()));
    if (to !== 'distributions') state.unfolded = true;
    this.hooks.clearErrors();
    this.hooks.rerender(`key:covariate-source:${to}`);
    const kept = to === 'table' && state.aside.distributions !== undefined ? ' The distributions are set aside until you choose them again or discard them.' : to === 'distributions' && state.aside.table !== undefined ? ' The table is set aside until you choose it again or discard it.' : '';
    this.hooks.announce(`Covariates are now ${sourceWords[to]}.${kept}`);
  }

  /** A first table: the scenario subject as its one row, with a column for each drawn covariate too. */
  private freshTable(): TableRow {
    const subject = isObject(this.store.scenario.subject) ? this.store.scenario.subject : {};
    const row: TableRow = {};
    for (const [k, v] of Object.entries(subject)) if (typeof v === 'string' || typeof v === 'number') row[k] = v;
    const drawn = isObject(state.aside.distributions) ? Object.keys(state.aside.distributions) : [];
    for (const k of drawn) if (!(k in row)) row[k] = '';
    if (Object.keys(row).length === 0) row.weight = '';
    return { rows: [row] };
  }

  // ---- the folded table ----
  section(): HTMLElement {
    const source = this.source;
    const table = this.table;
    const rows = this.rows;
    const columns = tableColumns(rows, state.units);
    const used = source !== 'distributions';
    const details = h('details', { class: 'population-extra covariate-table-section', 'data-testid': 'population-covariate-table' });
    details.open = used || state.unfolded;
    details.addEventListener('toggle', () => {
      state.unfolded = details.open;
    });
    const title = used && table && Array.isArray(table.rows) ? `Covariate table (${rows.length} row${rows.length === 1 ? '' : 's'} × ${columns.length} covariate${columns.length === 1 ? '' : 's'})` : 'Covariate table';
    const fileInput = this.fileInput();
    const parts: (HTMLElement | null)[] = [h('summary', { 'data-focus-key': 'population-extra:covariate-table' }, title)];
    if (!used) {
      parts.push(h('p', { class: 'hint' }, `Not in use: the covariates are ${sourceWords.distributions}. Choose “${sourceWords.table}” under Covariates, or paste or import a CSV here to switch to it.`), this.asideNote('table'));
    } else {
      parts.push(h('p', { class: 'hint' }, 'One row per subject type. Numbers are written in the unit in the column’s header; a word is a category (sex: female or male).'));
      if (table && typeof table.file === 'string' && !Array.isArray(table.rows)) parts.push(this.fileNote(table.file, fileInput));
      else parts.push(this.grid(columns, rows), this.drawRow());
    }
    parts.push(this.csvTools(fileInput));
    details.append(...parts.filter((x): x is HTMLElement => x !== null));
    return details;
  }

  /** The scenario names a CSV file: the command line reads it; the page offers to bring its rows in. */
  private fileNote(file: string, fileInput: HTMLInputElement): HTMLElement {
    return h(
      'div',
      { class: 'file-note', 'data-path': rowsPath, 'data-testid': 'covariate-table-file', tabindex: '-1' },
      h('p', {}, 'This scenario names the covariate file ', h('code', {}, file), '. The command line reads it, relative to the scenario file; the page cannot open files by name. To run the population here, import its contents: its rows are then written into the scenario in place of the file name.'),
      h('div', { class: 'row-actions' }, button(`Import ${file.split(/[\\/]/).pop() ?? file}…`, { 'data-testid': 'covariate-table-file-import', 'data-focus-key': 'covariate-table-file-import' }, () => fileInput.click())),
    );
  }

  private grid(columns: TableColumn[], rows: TableRow[]): HTMLElement {
    const nameProblems = columns.map((c, k) => {
      const problem = covariateNameProblem(c.name);
      return problem === null ? null : h('p', { class: 'csv-problem', id: columnProblemId(k), 'data-testid': `covariate-column-problem-${k}` }, `Column ${k + 1}: ${problem}. Rename it in its header; its cells cannot be edited until then.`);
    });
    const head = h(
      'tr',
      {},
      h('th', { scope: 'col', class: 'row-number' }, '#'),
      ...columns.map((c, k) => this.headerCell(c, k)),
      h('th', { scope: 'col' }, h('span', { class: 'visually-hidden' }, 'Remove row')),
    );
    const body = rows.slice(0, maxShownRows).map((row, i) =>
      h(
        'tr',
        {},
        h('th', { scope: 'row', class: 'row-number' }, String(i + 1)),
        ...columns.map((c, k) => h('td', {}, this.cell(row, i, c, k))),
        h('td', { class: 'remove-cell' }, button('×', { class: 'quiet small', 'data-focus-key': `remove-table-row-${i}`, 'aria-label': `Remove row ${i + 1}`, title: `Remove row ${i + 1}` }, () => this.removeRow(i))),
      ),
    );
    const table = h(
      'table',
      { class: 'fig covariate-table', 'data-testid': 'covariate-table' },
      h('thead', {}, head),
      h('tbody', {}, ...body),
    );
    const empty =
      rows.length === 0
        ? h('p', { class: 'empty' }, 'No rows: add one, or paste or import a CSV.')
        : rows.length > maxShownRows
          ? h('p', { class: 'note', 'data-testid': 'covariate-table-not-shown' }, `Rows ${maxShownRows + 1}–${rows.length} are in the scenario and are used, but not drawn here (the page draws the first ${maxShownRows}). Paste or import a CSV to replace the whole table.`)
          : null;
    return h(
      'div',
      {},
      // The wrapper carries the rows' path, so a problem with the rows as a whole is shown under the grid.
      h('div', { class: 'table-scroll', 'data-path': rowsPath, tabindex: '-1' }, table),
      ...nameProblems.filter((x): x is HTMLParagraphElement => x !== null),
      empty,
      h(
        'div',
        { class: 'row-actions' },
        button('Add row', { 'data-testid': 'add-table-row', 'data-focus-key': 'add-table-row' }, () => this.addRow()),
        button('Add column', { 'data-testid': 'add-table-column', 'data-focus-key': 'add-table-column' }, () => this.addColumn()),
      ),
    );
  }

  private headerCell(c: TableColumn, k: number): HTMLElement {
    const name = h('input', { type: 'text', class: 'column-name', value: c.name, 'aria-label': `Name of column ${k + 1}`, 'data-focus-key': `table-column-name-${k}`, 'data-testid': `table-column-name-${k}`, autocomplete: 'off', spellcheck: 'false', maxlength: '40' });
    name.addEventListener('change', () => this.renameColumn(c.name, name.value.trim(), k, name));
    const unit = h('input', { type: 'text', class: 'column-unit', value: c.unit ?? '', placeholder: 'unit', 'aria-label': `Unit of ${c.name}`, title: 'The unit of this column’s numbers (empty: plain numbers or words). Changing it relabels the numbers; it does not convert them.', 'data-focus-key': `table-column-unit-${k}`, 'data-testid': `table-column-unit-${k}`, autocomplete: 'off', spellcheck: 'false', maxlength: '20' });
    unit.addEventListener('change', () => this.setColumnUnit(c, unit.value.trim(), k));
    if (covariateNameProblem(c.name) !== null) name.setAttribute('aria-describedby', columnProblemId(k));
    const remove = button('×', { class: 'quiet small', 'aria-label': `Remove column ${c.name}`, title: `Remove column ${c.name}`, 'data-focus-key': `remove-table-column-${k}` }, () => this.removeColumn(c.name));
    return h('th', { scope: 'col', class: 'column-head' }, name, h('div', { class: 'column-unit-line' }, unit, remove));
  }

  private cell(row: TableRow, i: number, c: TableColumn, k: number): HTMLElement {
    if (covariateNameProblem(c.name) !== null) {
      // Its path would nest ("rows[0].a.b"): shown, not bound, until the column is renamed.
      return h('input', { type: 'text', value: cellText(row[c.name], c.unit), readonly: true, 'aria-label': `Row ${i + 1}, ${c.name} (read-only until the column is renamed)`, 'aria-describedby': columnProblemId(k), class: 'table-cell' });
    }
    const path = `${rowsPath}[${i}].${c.name}`;
    const input = h('input', {
      type: 'text',
      id: fieldId(path),
      'data-path': path,
      value: cellText(row[c.name], c.unit),
      'aria-label': `Row ${i + 1}, ${c.name}${c.unit ? ` (${c.unit})` : ''}`,
      autocomplete: 'off',
      spellcheck: 'false',
      class: 'table-cell',
    });
    input.addEventListener('input', () => {
      // The unit is remembered, so it outlives the column's last number being cleared (and a reload, via the draft).
      if (c.unit !== null) state.units.set(c.name, c.unit);
      this.store.set(path, cellValue(input.value, c.unit));
    });
    return input;
  }

  private drawRow(): HTMLElement {
    return h(
      'div',
      { class: 'row' },
      selectField(this.store, {
        path: 'population.covariateTable.draw',
        label: 'Rows taken',
        absentValue: 'in turn',
        options: [
          ['in turn', 'in turn (subject i takes row i, wrapping round)'],
          ['at random', 'at random (each subject draws a row)'],
        ],
        hint: 'At random, a subject’s row depends only on the seed and the subject’s number.',
        wide: true,
      }),
    );
  }

  // ---- rows and columns ----
  private mutateRows(change: (rows: TableRow[], table: TableRow) => void): void {
    this.store.mutate((doc) => {
      const pop = doc.population as TableRow;
      if (!isObject(pop.covariateTable)) pop.covariateTable = { rows: [] };
      const table = pop.covariateTable as TableRow;
      if (!Array.isArray(table.rows)) table.rows = [];
      change(table.rows as TableRow[], table);
    });
    this.hooks.clearErrors();
  }

  private addRow(): void {
    const columns = tableColumns(this.rows, state.units);
    this.mutateRows((rows) => rows.push(Object.fromEntries(columns.map((c) => [c.name, '']))));
    const i = this.rows.length - 1;
    this.hooks.rerender(columns.length > 0 ? `path:${rowsPath}[${i}].${columns[0].name}` : 'key:add-table-row');
    this.hooks.announce(`Added row ${i + 1}; type its values.`);
  }

  private removeRow(i: number): void {
    this.mutateRows((rows) => rows.splice(i, 1));
    this.hooks.rerender(this.rows.length > 0 ? `key:remove-table-row-${Math.min(i, this.rows.length - 1)}` : 'key:add-table-row');
    this.hooks.announce(`Removed row ${i + 1}.`);
  }

  private addColumn(): void {
    const taken = new Set([...tableColumns(this.rows).map((c) => c.name), ...Object.keys(isObject(this.population?.covariates) ? (this.population.covariates as TableRow) : {})]);
    const [name, unit] = suggested.find(([n]) => !taken.has(n)) ?? [`covariate${taken.size + 1}`, null];
    if (unit) state.units.set(name, unit);
    this.mutateRows((rows) => {
      if (rows.length === 0) rows.push({});
      for (const r of rows) r[name] = '';
    });
    const k = tableColumns(this.rows, state.units).findIndex((c) => c.name === name);
    this.hooks.rerender(`key:table-column-name-${k}`);
    this.hooks.announce(`Added column ${name}${unit ? ` in ${unit}` : ''}; rename it if needed and type its values.`);
  }

  private removeColumn(name: string): void {
    this.mutateRows((rows) => rows.forEach((r) => delete r[name]));
    state.units.delete(name);
    this.hooks.rerender('key:add-table-column');
    this.hooks.announce(`Removed column ${name}.`);
  }

  private renameColumn(from: string, to: string, k: number, input: HTMLInputElement): void {
    const head = input.closest('th');
    head?.querySelectorAll('.field-error').forEach((e) => e.remove());
    input.removeAttribute('aria-invalid');
    if (to === from) return;
    // The name as typed stays in the box, with the reason beside it, so it can be mended; the column keeps its name meanwhile.
    const refuse = (why: string) => {
      const id = `${fieldId(`covariate-column-${k}`)}-error`;
      head?.append(h('p', { class: 'field-error', id, role: 'alert' }, why));
      input.setAttribute('aria-invalid', 'true');
      input.setAttribute('aria-describedby', id);
      this.hooks.announce(why);
    };
    const problem = covariateNameProblem(to);
    if (problem !== null) return refuse(`${problem}. Column ${from} keeps its name.`);
    if (tableColumns(this.rows).some((c) => c.name === to)) return refuse(`There is already a column named ${to}; choose another name.`);
    const unit = state.units.get(from);
    if (unit !== undefined) {
      state.units.delete(from);
      state.units.set(to, unit);
    }
    this.mutateRows((rows) => rows.forEach((r, i) => (rows[i] = renameKey(r, from, to))));
    this.hooks.rerender(`key:table-column-name-${k}`);
    this.hooks.announce(`Renamed column ${from} to ${to}.`);
  }

  /** A new unit relabels the column's numbers (64 kg → 64 lb): the numbers as typed are kept. */
  private setColumnUnit(c: TableColumn, typed: string, k: number): void {
    const to = typed === '' ? null : typed;
    if (to === c.unit) return;
    if (to === null) state.units.delete(c.name);
    else state.units.set(c.name, to);
    this.mutateRows((rows) => rows.forEach((r) => c.name in r && (r[c.name] = relabel(r[c.name], c.unit, to))));
    this.hooks.rerender(`key:table-column-unit-${k}`);
    this.hooks.announce(to === null ? `Column ${c.name} now holds plain numbers.` : `Column ${c.name}'s numbers are now in ${to} (relabelled, not converted).`);
  }

  // ---- CSV ----
  /** The file chooser behind "Import CSV…": its text is read as pasted text is, named by the file. */
  private fileInput(): HTMLInputElement {
    const input = h('input', { type: 'file', accept: '.csv,text/csv,text/plain', class: 'visually-hidden', 'data-testid': 'covariate-csv-file', tabindex: '-1', 'aria-hidden': 'true' });
    input.addEventListener('change', () => {
      const file = input.files?.[0];
      if (file) void file.text().then((text) => this.readCsv(text, file.name));
    });
    return input;
  }

  private csvTools(fileInput: HTMLInputElement): HTMLElement {
    const tools = h(
      'div',
      { class: 'row-actions csv-actions' },
      button(state.paste.open ? 'Hide the CSV box' : 'Paste CSV', { 'data-testid': 'covariate-csv-paste', 'data-focus-key': 'covariate-csv-paste', 'aria-expanded': state.paste.open ? 'true' : 'false' }, () => {
        state.paste.open = !state.paste.open;
        this.hooks.rerender(state.paste.open ? 'key:covariate-csv-text' : 'key:covariate-csv-paste');
      }),
      button('Import CSV…', { 'data-testid': 'covariate-csv-import', 'data-focus-key': 'covariate-csv-import' }, () => fileInput.click()),
      fileInput,
    );
    return h('div', { class: 'csv-tools' }, tools, state.paste.open ? this.pasteBox() : null);
  }

  private pasteBox(): HTMLElement {
    const id = 'covariate-csv-text';
    const area = h('textarea', { id, rows: 6, spellcheck: 'false', 'data-focus-key': id, 'data-testid': id, placeholder: 'weight [kg],age [year],sex\n64,47,female\n83,55,male', 'aria-describedby': `${id}-hint` });
    area.value = state.paste.text;
    area.addEventListener('input', () => {
      state.paste.text = area.value;
      state.paste.source = '';
    });
    const rowsNow = this.source !== 'distributions' ? this.rows.length : 0;
    const parts: (HTMLElement | null)[] = [
      h('label', { for: id }, 'CSV text'),
      h(
        'p',
        { class: 'hint', id: `${id}-hint` },
        `As the command line reads a covariate file: a header of covariate names, each with its unit in brackets (weight [kg]), then one line per row; quote a field holding a comma. The rows replace ${rowsNow > 0 ? `the table’s ${rowsNow} row${rowsNow === 1 ? '' : 's'}` : 'the table'}; nothing is applied while any line has a problem.`,
      ),
      area,
      h(
        'div',
        { class: 'row-actions' },
        button('Use these rows', { 'data-testid': 'covariate-csv-apply', 'data-focus-key': 'covariate-csv-apply' }, () => this.readCsv(area.value, state.paste.source)),
        button('Cancel', { class: 'quiet', 'data-focus-key': 'covariate-csv-cancel' }, () => {
          state.paste = { open: false, text: '', source: '', problems: [] };
          this.hooks.rerender('key:covariate-csv-paste');
        }),
      ),
      this.problemList(),
    ];
    return h('div', { class: 'csv-box' }, ...parts.filter((x): x is HTMLElement => x !== null));
  }

  /** Each problem beside the line it is on: the line as written under its number, then the message. */
  private problemList(): HTMLElement | null {
    const problems = state.paste.problems;
    if (problems.length === 0) return null;
    const lines = state.paste.text.split(/\r\n|\n|\r/);
    const items = problems.map((message) => {
      const m = /\bline (\d+)\b/.exec(message);
      const n = m ? Number(m[1]) : null;
      const written = n === null ? null : h('code', { class: 'csv-line' }, h('span', { class: 'csv-line-number', 'aria-hidden': 'true' }, String(n)), lines[n - 1] ?? '');
      return h('li', {}, written, h('span', { class: 'csv-problem' }, message));
    });
    return h(
      'div',
      { class: 'csv-problems', role: 'alert', 'data-testid': 'covariate-csv-problems' },
      h('p', { class: 'csv-problems-title' }, `Nothing was applied: ${problems.length} problem${problems.length === 1 ? '' : 's'} to fix in the text above.`),
      h('ul', {}, ...items),
    );
  }

  /** Reads CSV text (pasted, or a file's): all rows good → they replace the table's; any bad → nothing changes, the problems are listed. */
  private readCsv(text: string, source: string): void {
    const read = parseCovariateCsv(text, source);
    if (!read.ok) {
      state.paste = { open: true, text, source, problems: read.errors };
      state.unfolded = true;
      this.hooks.rerender('key:covariate-csv-text');
      this.hooks.announce(`The CSV was not applied: ${read.errors.length} problem${read.errors.length === 1 ? '' : 's'}, listed under the text.`);
      return;
    }
    const wasDistributions = this.source === 'distributions';
    this.store.mutate((doc) => {
      const pop = doc.population as TableRow;
      if (wasDistributions) switchSource(pop, state.aside, 'table', () => ({ rows: [] }));
      const { file: _file, rows: _rows, ...rest } = isObject(pop.covariateTable) ? pop.covariateTable : {};
      pop.covariateTable = { ...rest, rows: read.rows };
    });
    for (const c of tableColumns(read.rows)) if (c.unit) state.units.set(c.name, c.unit);
    state.paste = { open: false, text: '', source: '', problems: [] };
    state.unfolded = true;
    this.hooks.clearErrors();
    this.hooks.rerender('key:covariate-csv-paste');
    this.hooks.announce(`The covariate table now holds ${read.rows.length} row${read.rows.length === 1 ? '' : 's'}${source ? ` from ${source}` : ''}.${wasDistributions ? ' Covariates are now taken from the table; the distributions are set aside.' : ''}`);
  }
}
