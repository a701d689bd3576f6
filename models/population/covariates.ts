/**
 * A virtual subject's covariates: the scenario subject's, then a table row's, then draws from
 * the population's distributions — each draw by inverse CDF from one uniform number of the
 * subject's own stream, so a subject's covariates depend only on (seed, subject).
 */
import { covariateNameProblem } from '../scenario/covariate-name.ts';
import type { Problem } from '../scenario/problems.ts';
import { sexes, type Population, type Subject } from '../scenario/schema.ts';
import { convertToUnit, unitWritten } from '../scenario/units.ts';
import { readShare } from '../scenario/shares.ts';
import { readSubject } from '../subject/subject.ts';
import { drawFrom, type NumericDistribution } from './distributions.ts';
import { STREAMS, type SubjectRandom } from './random.ts';

/** One covariate drawn for every subject: a number in `unit` from a distribution, or a category. */
export type DrawnCovariate =
  | { name: string; kind: 'number'; unit: string | null; distribution: NumericDistribution }
  | { name: string; kind: 'category'; categories: string[]; cumulative: Float64Array };

export interface CovariatePlan {
  drawn: DrawnCovariate[];
  rows: Subject[] | null;
  draw: 'in turn' | 'at random';
}

const categoryOnly = new Set(['sex']);

/** Table cells named at most (a table may hold 100,000 rows). */
const maxRowProblems = 20;

/** Reads population.covariates and population.covariateTable; problems carry their JSON paths. */
export function readCovariatePlan(p: Population, problems: Problem[]): CovariatePlan {
  const drawn: DrawnCovariate[] = [];
  const fail = (path: string, message: string) => problems.push({ path, message });
  const r = { fail };
  for (const [name, d] of Object.entries(p.covariates ?? {})) {
    const path = `population.covariates.${name}`;
    const badName = covariateNameProblem(name);
    if (badName !== null) {
      fail(path, badName);
      continue;
    }
    if (['bmi', 'bsa', 'crcl', 'ibw', 'lbw'].includes(name)) {
      fail(path, `'${name}' is derived from the subject's other covariates; draw those instead`);
      continue;
    }
    const allowed: Record<string, string[]> = {
      normal: ['mean', 'sd', 'min', 'max'],
      'log-normal': ['median', 'cv', 'min', 'max'],
      uniform: ['min', 'max'],
      categories: ['shares'],
    };
    const extra = Object.keys(d).filter((k) => k !== 'distribution' && d[k as keyof typeof d] !== undefined && !allowed[d.distribution].includes(k));
    if (extra.length > 0) {
      fail(`${path}.${extra[0]}`, `is not used by a ${d.distribution} distribution (it takes ${allowed[d.distribution].join(', ')})`);
      continue;
    }
    if (d.distribution === 'categories') {
      const shares = Object.entries(d.shares ?? {});
      if (shares.length === 0) {
        fail(`${path}.shares`, 'is required: each category with its share, e.g. { "female": 0.5, "male": 0.5 }');
        continue;
      }
      const bad = shares.find(([, v]) => !(v >= 0 && Number.isFinite(v)));
      const total = shares.reduce((s, [, v]) => s + v, 0);
      if (bad) fail(`${path}.shares.${bad[0]}`, 'must be a share of at least 0');
      else if (!(total > 0)) fail(`${path}.shares`, 'needs at least one positive share');
      else if (name === 'sex' && shares.some(([k]) => k !== 'female' && k !== 'male')) fail(`${path}.shares`, "sex takes the categories 'female' and 'male'");
      else {
        let sum = 0;
        drawn.push({ name, kind: 'category', categories: shares.map(([k]) => k), cumulative: Float64Array.from(shares, ([, v]) => (sum += v) / total) });
      }
      continue;
    }
    if (categoryOnly.has(name)) {
      fail(`${path}.distribution`, `'${name}' is a category: use "categories" with shares`);
      continue;
    }
    const read = readNumeric(d, path, r);
    if (read) drawn.push({ name, kind: 'number', unit: read.unit, distribution: read.distribution });
  }
  const table = p.covariateTable;
  let rows: Subject[] | null = null;
  if (table) {
    if (!table.rows) fail('population.covariateTable.rows', table.file ? 'the table file is read by the command line (relative to the scenario file); over the API give the rows themselves' : 'is required: the covariate rows');
    else {
      rows = table.rows as Subject[];
      problems.push(...tableRowProblems(rows, new Set(drawn.map((c) => c.name))));
    }
  }
  return { drawn, rows, draw: table?.draw ?? 'in turn' };
}

/**
 * The problems of a covariate table's rows, each at `population.covariateTable.rows[i].name`
 * (at most 20): a column also drawn, a column a row lacks (every row needs every column the
 * table has: a row without one would quietly take the scenario subject's value), a bad cell.
 * Each row is read now as the subject it becomes, so a bad cell is named by its row and column
 * rather than by the first virtual subject that happens to take it. The command line maps these
 * paths to the lines of a table file (server/covariate-csv.ts).
 */
export function tableRowProblems(rows: readonly Subject[], drawnNames: ReadonlySet<string>): Problem[] {
  const problems: Problem[] = [];
  const fail = (path: string, message: string) => problems.push({ path, message });
  // Every column of the table, and the first row that gives it.
  const columns = new Map<string, number>();
  rows.forEach((row, i) => Object.keys(row).forEach((k) => columns.has(k) || columns.set(k, i)));
  for (let i = 0; i < rows.length && problems.length < maxRowProblems; i++) {
    const row = rows[i];
    const at = `population.covariateTable.rows[${i}]`;
    for (const k of Object.keys(row)) {
      if (drawnNames.has(k)) fail(`${at}.${k}`, `'${k}' is also drawn from population.covariates.${k}; give it in one place`);
    }
    for (const [k, first] of columns) {
      if (!(k in row)) fail(`${at}.${k}`, `is missing: row ${first} gives '${k}', and every row of the table needs every column it has (a subject without it would take the scenario subject's value unseen)`);
    }
    const sex = (row as Record<string, unknown>).sex;
    if (sex !== undefined && !(sexes as readonly unknown[]).includes(sex)) fail(`${at}.sex`, `sex takes the categories ${sexes.map((x) => `'${x}'`).join(' and ')}, not '${String(sex)}'`);
    for (const q of readSubject(row).problems) fail(q.path.replace(/^subject/, at), q.message);
  }
  return problems;
}

/** The table row subject i takes (`random` made for (seed, i)): in turn, or one drawn from its own stream. */
export function tableRowOf(plan: CovariatePlan, i: number, random: SubjectRandom): number | null {
  if (!plan.rows) return null;
  const n = plan.rows.length;
  return plan.draw === 'in turn' ? i % n : Math.min(n - 1, Math.floor(random.uniform(STREAMS.tableRow, 0) * n));
}

type Written = number | string | undefined;

/** A numeric distribution in the unit its location is written in. */
function readNumeric(
  d: NonNullable<Population['covariates']>[string],
  path: string,
  r: { fail(path: string, message: string): void },
): { unit: string | null; distribution: NumericDistribution } | null {
  const location = d.distribution === 'normal' ? d.mean : d.distribution === 'log-normal' ? d.median : (d.min ?? d.max);
  const locationField = d.distribution === 'normal' ? 'mean' : d.distribution === 'log-normal' ? 'median' : 'min';
  if (location === undefined) {
    r.fail(`${path}.${locationField}`, `is required by a ${d.distribution} distribution`);
    return null;
  }
  const unit = unitWritten(location);
  let failed = false;
  const value = (q: Written, field: string): number | null => {
    if (q === undefined) return null;
    const converted = unit === null ? convertToUnit(q, '1', 'a plain number, as the location is') : convertToUnit(q, unit, `a unit like '${unit}', as the location is`);
    if (!converted.ok) {
      r.fail(`${path}.${field}`, converted.message);
      failed = true;
      return null;
    }
    return converted.value;
  };
  const min = value(d.min, 'min');
  const max = value(d.max, 'max');
  if (min !== null && max !== null && !(min < max)) r.fail(`${path}.max`, 'must be greater than min');
  let distribution: NumericDistribution | null = null;
  if (d.distribution === 'normal') {
    const mean = value(d.mean, 'mean');
    const sd = value(d.sd, 'sd');
    if (d.sd === undefined) r.fail(`${path}.sd`, 'is required by a normal distribution');
    else if (sd !== null && !(sd >= 0)) r.fail(`${path}.sd`, 'must not be negative');
    if (mean !== null && sd !== null && sd >= 0) distribution = { kind: 'normal', mean, sd, min, max };
  } else if (d.distribution === 'log-normal') {
    const median = value(d.median, 'median');
    const cv = d.cv === undefined ? null : readShare(d.cv, `${path}.cv`, r, 'a coefficient of variation', 5);
    if (d.cv === undefined) r.fail(`${path}.cv`, 'is required by a log-normal distribution');
    if (median !== null && !(median > 0)) r.fail(`${path}.median`, 'must be positive');
    else if (median !== null && cv !== null) distribution = { kind: 'log-normal', median, cv, min, max };
  } else {
    if (d.min === undefined || d.max === undefined) r.fail(`${path}.${d.min === undefined ? 'min' : 'max'}`, 'is required by a uniform distribution');
    else if (min !== null && max !== null && min < max) distribution = { kind: 'uniform', min, max };
  }
  if (failed || !distribution || (min !== null && max !== null && !(min < max))) return null;
  return { unit, distribution };
}

/** The covariates of subject i (the random numbers come from `random`, made for (seed, i)). */
export function subjectCovariates(plan: CovariatePlan, base: Subject | undefined, i: number, random: SubjectRandom): Subject {
  const subject: Subject = { ...(base ?? {}) };
  const row = tableRowOf(plan, i, random);
  if (plan.rows && row !== null) Object.assign(subject, plan.rows[row]);
  plan.drawn.forEach((c, k) => {
    const u = random.uniform(STREAMS.covariates, k);
    if (c.kind === 'category') {
      let j = 0;
      while (j < c.categories.length - 1 && u > c.cumulative[j]) j++;
      (subject as Record<string, unknown>)[c.name] = c.categories[j];
    } else {
      const v = drawFrom(c.distribution, u);
      // Full precision: the normaliser reads back exactly the number drawn.
      (subject as Record<string, unknown>)[c.name] = c.unit === null ? v : `${v} ${c.unit}`;
    }
  });
  return subject;
}
