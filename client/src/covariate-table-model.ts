/**
 * The covariate table as the page edits it, without the DOM: its columns (each covariate with
 * the unit its numbers are written in), what a cell shows and what typing in it writes, and the
 * switch between drawing covariates from distributions and taking them from the table. The
 * scenario holds rows of { name: value } (population.covariateTable.rows); the columns are read
 * from them each time, so nothing is stored twice.
 */
import { covariateNameProblem } from '../../models/scenario/covariate-name.ts';
import type { Problem } from '../../models/scenario/problems.ts';
import { isNumberText } from './quantity.ts';

export type TableRow = Record<string, unknown>;

export interface TableColumn {
  name: string;
  /** The unit of the column's numbers, e.g. "kg"; null for plain numbers or category words. */
  unit: string | null;
}

function isObject(v: unknown): v is TableRow {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/** "64 kg" → { number: "64", unit: "kg" }; anything else → null. */
export function splitNumberUnit(value: unknown): { number: string; unit: string } | null {
  if (typeof value !== 'string') return null;
  const m = /^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([^\d\s.+-].*?)\s*$/.exec(value);
  return m ? { number: m[1], unit: m[2] } : null;
}

/**
 * The table's columns, in the order they first appear in the rows. A column's unit is the one
 * its first number-with-unit is written in; `remembered` gives the unit of a column whose cells
 * hold none yet (a column just added, or emptied).
 */
export function tableColumns(rows: unknown, remembered: ReadonlyMap<string, string> = new Map()): TableColumn[] {
  const columns: TableColumn[] = [];
  for (const row of Array.isArray(rows) ? rows : []) {
    if (!isObject(row)) continue;
    for (const [name, value] of Object.entries(row)) {
      let c = columns.find((x) => x.name === name);
      if (!c) {
        c = { name, unit: null };
        columns.push(c);
      }
      if (c.unit === null) c.unit = splitNumberUnit(value)?.unit ?? null;
    }
  }
  for (const c of columns) if (c.unit === null) c.unit = remembered.get(c.name) ?? null;
  return columns;
}

/** What a cell shows: the number alone when it is written in the column's unit, else the value as stored. */
export function cellText(value: unknown, unit: string | null): string {
  if (value === undefined || value === null) return '';
  const split = splitNumberUnit(value);
  if (split && unit !== null && split.unit === unit) return split.number;
  return typeof value === 'string' ? value : String(value);
}

/**
 * What typing in a cell writes, by the command line's CSV rule: a number in a column with a unit
 * becomes "64 kg", a number without one stays a number, anything else (a category word, a
 * quantity with its own unit, a typo) is kept as typed for the server to read or name. A blank
 * cell is kept blank (the column stays in place) and refused before sending: blankCellProblems.
 */
export function cellValue(text: string, unit: string | null): string | number {
  const t = text.trim();
  if (t === '') return '';
  if (isNumberText(t)) return unit === null ? Number(t) : `${t} ${unit}`;
  return t;
}

/** A column's numbers relabelled to another unit (the numbers kept); other cells untouched. */
export function relabel(value: unknown, from: string | null, to: string | null): unknown {
  const split = splitNumberUnit(value);
  const number = typeof value === 'number' && from === null ? String(value) : split && split.unit === from ? split.number : null;
  if (number === null) return value;
  return to === null ? Number(number) : `${number} ${to}`;
}

/** The same row with one key renamed, keeping the key's place (object keys keep insertion order). */
export function renameKey(row: TableRow, from: string, to: string): TableRow {
  const out: TableRow = {};
  for (const [k, v] of Object.entries(row)) out[k === from ? to : k] = v;
  return out;
}

/** Where the virtual subjects' covariates come from: drawn, a table of rows, or both (different covariates). */
export type CovariateSource = 'distributions' | 'table' | 'both';

export function covariateSource(population: TableRow | null): CovariateSource {
  const table = population?.covariateTable !== undefined;
  const drawn = population?.covariates !== undefined;
  return table ? (drawn ? 'both' : 'table') : 'distributions';
}

/** What the other choice held when the user switched away from it, kept until used again or discarded. */
export interface SetAside {
  distributions?: unknown;
  table?: unknown;
}

/**
 * Switches the covariate source in `population` (changed in place). What the source switched away
 * from goes into `aside`, and what the new source held before comes back from it, so nothing typed
 * is lost; `fresh` makes a table when there was none.
 */
export function switchSource(population: TableRow, aside: SetAside, to: CovariateSource, fresh: () => TableRow): void {
  const wantDrawn = to !== 'table';
  const wantTable = to !== 'distributions';
  if (!wantDrawn && population.covariates !== undefined) {
    // An empty set of distributions holds no typed work: nothing to set aside.
    if (!isObject(population.covariates) || Object.keys(population.covariates).length > 0) aside.distributions = population.covariates;
    delete population.covariates;
  } else if (wantDrawn && population.covariates === undefined) {
    if (aside.distributions !== undefined) {
      population.covariates = aside.distributions;
      delete aside.distributions;
    } else if (to === 'both') {
      // Nothing drawn yet: an empty set to add distributions to, or "both" would read back as "table" (covariateSource).
      population.covariates = {};
    }
  }
  if (!wantTable && population.covariateTable !== undefined) {
    aside.table = population.covariateTable;
    delete population.covariateTable;
  } else if (wantTable && population.covariateTable === undefined) {
    population.covariateTable = aside.table ?? fresh();
    delete aside.table;
  }
}

/** Where the table's rows are in the scenario. */
export const rowsPath = 'population.covariateTable.rows';
/** The most empty cells named at once; the rest are counted in one line. */
const maxBlankProblems = 20;

function isBlank(value: unknown): boolean {
  return value === undefined || value === null || (typeof value === 'string' && value.trim() === '');
}

/**
 * The covariate table's empty cells, each at its own path with the row as the page numbers it
 * (from 1), found before the scenario is sent: the server would refuse an empty string, and a row
 * without a covariate would silently take the scenario subject's value. A cell shown in the grid
 * counts, so a row missing a column the other rows have is named too. Columns whose names break
 * the covariate-name rule are left to that rule's problem (their cells have no path of their own).
 */
export function blankCellProblems(scenario: unknown): Problem[] {
  const population = isObject(scenario) ? scenario.population : undefined;
  const table = isObject(population) ? population.covariateTable : undefined;
  const rows = isObject(table) ? table.rows : undefined;
  if (!Array.isArray(rows)) return [];
  const columns = tableColumns(rows).filter((c) => covariateNameProblem(c.name) === null);
  const problems: Problem[] = [];
  let more = 0;
  rows.forEach((row, i) => {
    for (const c of columns) {
      if (!isBlank(isObject(row) ? row[c.name] : undefined)) continue;
      if (problems.length < maxBlankProblems) problems.push({ path: `${rowsPath}[${i}].${c.name}`, message: `row ${i + 1}, ${c.name}: empty; every subject needs a value` });
      else more++;
    }
  });
  if (more > 0) problems.push({ path: rowsPath, message: `and ${more} more empty cell${more === 1 ? '' : 's'}` });
  return problems;
}

/**
 * What the table editor keeps beside the scenario, as the page's draft stores it: the set-aside
 * source and the units of columns with no number written yet (they are in no cell).
 */
export interface KeptTable {
  aside: SetAside;
  units: Map<string, string>;
}

/** The draft's form of KeptTable (JSON); undefined when there is nothing to keep. */
export function writeKeptTable(kept: KeptTable): { aside?: SetAside; units?: Record<string, string> } | undefined {
  const hasAside = kept.aside.distributions !== undefined || kept.aside.table !== undefined;
  if (!hasAside && kept.units.size === 0) return undefined;
  return { ...(hasAside ? { aside: kept.aside } : {}), ...(kept.units.size > 0 ? { units: Object.fromEntries(kept.units) } : {}) };
}

/** KeptTable read back from the draft, keeping only what has the right shape (a draft of another page version may differ). */
export function readKeptTable(value: unknown): KeptTable {
  const kept: KeptTable = { aside: {}, units: new Map() };
  if (!isObject(value)) return kept;
  const aside = value.aside;
  if (isObject(aside) && isObject(aside.distributions)) kept.aside.distributions = aside.distributions;
  if (isObject(aside) && isObject(aside.table)) kept.aside.table = aside.table;
  if (isObject(value.units)) for (const [name, unit] of Object.entries(value.units)) if (typeof unit === 'string' && unit !== '') kept.units.set(name, unit);
  return kept;
}
