/**
 * Scenario JSON → normalised Model, or every problem found, each with its JSON path.
 * Structural checks come from the zod schema; meaning (names that exist, units of the
 * right dimension, positive volumes, consistent infusion fields) is checked here.
 */
import type { z } from 'zod';
import { limits } from './limits.ts';
import type {
  Adjustment,
  Administration,
  DoseLineSummary,
  Kinetics,
  Model,
  ModelCompartment,
  ModelThreshold,
  ModelTransfer,
} from '../building/model.ts';
import { formatPath, type Outcome, type Problem } from './problems.ts';
import { scenarioSchema, type AdjustedQuantity, type ModelQuantity, type Quantity, type Scenario, type Subject } from './schema.ts';
import { logitNormalSpread, logNormalSpread } from '../subject/variability.ts';
import { readShare } from './shares.ts';
import { readClock, readInstant, refuseDateTime } from './instants.ts';
import { readObservations } from './observations.ts';
import type { Clock } from '../levels/clock.ts';

type VariationKind = NonNullable<AdjustedQuantity['variation']>;
import { applyRelation } from '../subject/relations.ts';
import { readSubject, type Covariates } from '../subject/subject.ts';
import { checkUnitSystem, convertQuantity, unitWritten, type Dimension, type UnitSystem } from './units.ts';

const fixedStepMethods = new Set(['euler', 'heun', 'rk4', 'abm2']);

/** Reads quantities, collecting problems instead of stopping at the first. */
class Reader {
  readonly problems: Problem[] = [];
  readonly adjustments: Adjustment[] = [];
  constructor(
    readonly units: UnitSystem,
    readonly covariates: Covariates = {},
    /** A virtual subject's standard normal effect on the quantity at a path (0 for the typical subject). */
    readonly effect: ((path: string) => number) | null = null,
  ) {}

  fail(path: string, message: string): void {
    this.problems.push({ path, message });
  }

  /** Converts q (for a quantity with covariate relations, its value for this subject); records a problem and returns null when it is unreadable or out of range. */
  read(
    q: ModelQuantity | undefined,
    dimension: Dimension,
    path: string,
    range: 'positive' | 'non-negative' | 'any' = 'positive',
  ): number | null {
    if (q === undefined) return null;
    if (typeof q === 'object') {
      const typical = this.read(q.typical, dimension, `${path}.typical`, range);
      return typical === null ? null : this.adjust(q, typical, path);
    }
    const converted = convertQuantity(q, dimension, this.units);
    if (!converted.ok) {
      this.fail(path, converted.message);
      return null;
    }
    const v = converted.value;
    if (range === 'positive' && !(v > 0)) {
      this.fail(path, 'must be positive');
      return null;
    }
    if (range === 'non-negative' && !(v >= 0)) {
      this.fail(path, 'must not be negative');
      return null;
    }
    return v;
  }

  /**
   * The typical value times each relation's multiplier for this subject, then its own departure
   * from that median when the quantity varies between subjects and a virtual subject is read.
   */
  adjust(q: AdjustedQuantity, typical: number, path: string, fraction = false): number | null {
    let value = typical;
    const words: string[] = [];
    let failed = false;
    (q.covariates ?? []).forEach((relation, j) => {
      const applied = applyRelation(relation, this.covariates, `${path}.covariates[${j}]`);
      if (!applied.ok) {
        this.problems.push(applied.problem);
        failed = true;
        return;
      }
      value *= applied.applied.multiplier;
      words.push(applied.applied.words);
    });
    const variation = readVariation(q, path, fraction, typical, this);
    if (failed || variation === undefined) return null;
    if (variation) {
      words.push(variation.words);
      const z = this.effect?.(path) ?? 0;
      // z = 0 is the typical subject, and a spread of 0 no variation: the value is left exactly as it is.
      if (z !== 0 && variation.spread !== 0) value = variation.kind === 'log-normal' ? value * Math.exp(variation.spread * z) : logistic(logit(value) + variation.spread * z);
    }
    this.adjustments.push({ path, name: q.name ?? null, typical, value, relations: words });
    return value;
  }
}

function logit(p: number): number {
  return Math.log(p / (1 - p));
}

function logistic(x: number): number {
  return 1 / (1 + Math.exp(-x));
}

/**
 * The quantity's between-subject variability: null when it has none, undefined after a problem.
 * Log-normal: the log has SD √ln(1 + cv²), the exact relation (not the small-cv cv itself).
 * Logit-normal (fractions): the logit's SD that gives the fraction this cv at its typical value.
 */
function readVariation(q: AdjustedQuantity, path: string, fraction: boolean, typical: number, r: Reader): { kind: VariationKind; spread: number; words: string } | null | undefined {
  if (q.covariates === undefined && q.cv === undefined) {
    r.fail(path, 'needs `covariates`, `cv` or both besides `typical`; otherwise write the quantity itself');
    return undefined;
  }
  if (q.cv === undefined) {
    if (q.variation !== undefined) r.fail(`${path}.variation`, 'needs `cv`, the coefficient of variation');
    return q.variation === undefined ? null : undefined;
  }
  const cv = readShare(q.cv, `${path}.cv`, r, 'a coefficient of variation', 5);
  if (cv === null) return undefined;
  const kind: VariationKind = q.variation ?? (fraction ? 'logit-normal' : 'log-normal');
  if (fraction && kind === 'log-normal') {
    r.fail(`${path}.variation`, 'a fraction varies logit-normally (log-normal values could exceed 1); write "logit-normal" or leave it out');
    return undefined;
  }
  if (!fraction && kind === 'logit-normal') {
    r.fail(`${path}.variation`, 'logit-normal is for fractions such as bioavailability; this quantity varies log-normally');
    return undefined;
  }
  const percent = `${Number((cv * 100).toPrecision(6))}%`;
  if (kind === 'log-normal') return { kind, spread: logNormalSpread(cv), words: `cv ${percent} (log-normal)` };
  const found = cachedLogitSpread(typical, cv);
  if (!found.ok) {
    r.fail(`${path}.cv`, found.message);
    return undefined;
  }
  return { kind, spread: found.spread, words: `cv ${percent} at the typical value (logit-normal)` };
}

/** Logit spreads by (typical, cv): a root search per quantity, not per subject. */
const logitSpreads = new Map<string, ReturnType<typeof logitNormalSpread>>();

function cachedLogitSpread(typical: number, cv: number): ReturnType<typeof logitNormalSpread> {
  const key = `${typical}|${cv}`;
  let found = logitSpreads.get(key);
  if (!found) {
    if (logitSpreads.size > 1000) logitSpreads.clear();
    found = logitNormalSpread(typical, cv);
    logitSpreads.set(key, found);
  }
  return found;
}

/**
 * A list or an object given where either is allowed (`observations`): that option's own problems,
 * each at its own path, rather than one "must be a list or …" for the whole field.
 */
function listOptionIssues(issue: z.core.$ZodIssue): z.core.$ZodIssue[] | null {
  if (issue.code !== 'invalid_union' || typeof issue.input !== 'object' || issue.input === null || issue.path[0] !== 'observations') return null;
  const list = Array.isArray(issue.input);
  const inside = issue.errors.find((option) => option.length > 0 && option.every((i) => (list ? typeof i.path[0] === 'number' : i.path.length > 0)));
  return inside ? inside.map((i) => ({ ...i, path: [...issue.path, ...i.path] }) as z.core.$ZodIssue) : null;
}

function zodProblems(error: z.ZodError): Problem[] {
  return error.issues.flatMap((issue) => listOptionIssues(issue) ?? [issue]).map((issue) => {
    const path = formatPath(issue.path);
    if (issue.code === 'unrecognized_keys') {
      // A field renamed in this version is named with its new spelling.
      if (issue.keys.length === 1 && issue.keys[0] === 'until' && /^doses\[\d+\]$/.test(path)) {
        return { path: `${path}.until`, message: '`until` is now called `through`: repeat while the dose time is at or before it' };
      }
      const keys = issue.keys.map((k) => `'${k}'`).join(', ');
      return { path, message: `unknown field${issue.keys.length > 1 ? 's' : ''} ${keys}` };
    }
    if ((issue.code === 'invalid_type' || issue.code === 'invalid_union') && issue.input === undefined) {
      return { path, message: 'is required' };
    }
    return { path, message: plainWords(issue) };
  });
}

function kindOf(value: unknown): string {
  if (value === null) return 'null';
  if (Array.isArray(value)) return 'a list';
  if (typeof value === 'string') return `the text '${value.length > 40 ? `${value.slice(0, 40)}…` : value}'`;
  if (typeof value === 'object') return 'an object';
  return `${typeof value === 'number' ? 'the number' : 'the value'} ${String(value)}`;
}

const typeWords: Record<string, string> = {
  number: 'a number',
  string: 'text',
  object: 'an object with named fields',
  array: 'a list',
  boolean: 'true or false',
};

/** zod's own messages ("Too big: expected number to be <=1") in the words of the scenario format. */
function plainWords(issue: z.core.$ZodIssue): string {
  switch (issue.code) {
    case 'too_big':
      if (issue.origin === 'array') return `may hold at most ${issue.maximum} entries`;
      if (issue.origin === 'string') return `may be at most ${issue.maximum} characters long`;
      return `must be at most ${issue.maximum}${issue.inclusive === false ? ' (exclusive)' : ''}`;
    case 'too_small':
      if (issue.origin === 'array') return `needs at least ${issue.minimum} ${Number(issue.minimum) === 1 ? 'entry' : 'entries'}`;
      if (issue.origin === 'string') return Number(issue.minimum) === 1 ? 'must not be empty' : `must be at least ${issue.minimum} characters long`;
      return `must be at least ${issue.minimum}`;
    case 'invalid_type':
      if (issue.expected === 'int') return `must be a whole number, got ${kindOf(issue.input)}`;
      return `must be ${typeWords[issue.expected] ?? issue.expected}, got ${kindOf(issue.input)}`;
    case 'invalid_value':
      return `must be one of ${issue.values.map((v) => `'${String(v)}'`).join(', ')}, got ${kindOf(issue.input)}`;
    default:
      return issue.message;
  }
}

export function parseScenario(input: unknown): Outcome<Scenario> {
  const parsed = scenarioSchema.safeParse(input, { reportInput: true });
  return parsed.success ? { ok: true, value: parsed.data } : { ok: false, problems: zodProblems(parsed.error) };
}

/** Validates and normalises a scenario (any JSON value) into a Model. */
export function normaliseScenario(input: unknown): Outcome<Model> {
  const parsed = parseScenario(input);
  if (!parsed.ok) return parsed;
  return buildModel(parsed.value);
}

/** What differs for one virtual subject of a population: its covariates and its effects. */
export interface SubjectVariant {
  /** The subject's covariates, in place of the scenario's `subject`. */
  subject: Subject;
  /** The standard normal effect on the varying quantity at a JSON path. */
  effect: (path: string) => number;
  /** The output times, when the caller has them already (they do not depend on the subject). */
  outputTimes?: Float64Array;
  /** The doses, when the caller has them already (only when they do not depend on the subject: dosesDependOnSubject). */
  doses?: { administrations: Administration[]; lines: DoseLineSummary[] };
}

export function buildModel(s: Scenario, variant?: SubjectVariant): Outcome<Model> {
  const unitCheck = checkUnitSystem(s.units);
  if (unitCheck.problems.length > 0) {
    return { ok: false, problems: unitCheck.problems.map((p) => ({ path: `units.${p.field}`, message: p.message })) };
  }
  const subjectGiven = variant ? variant.subject : s.subject;
  const subject = readSubject(subjectGiven);
  const r = new Reader(unitCheck.units, subject.covariates, variant?.effect ?? null);
  r.problems.push(...subject.problems);

  const compartments = readCompartments(s, r);
  const index = new Map(compartments.map((c, i) => [c.id, i]));
  const transfers = readTransfers(s, r, compartments, index);

  const clock = readClock(s, r);
  const start = readInstant(s.output.start, 'output.start', clock, r) ?? 0;
  const end = readInstant(s.output.end, 'output.end', clock, r);
  if (end !== null && !(end > start)) r.fail('output.end', 'must be after output.start');
  const longest = longestSpan(r.units);
  const spanOk = end !== null && end > start && end - start <= longest;
  if (end !== null && end > start && !spanOk) {
    r.fail('output.end', `makes a span of ${end - start} ${r.units.time}, beyond the longest Tidemark simulates (${limits.spanHours.toExponential()} h, about 114,000 years)`);
  }
  const span = spanOk && end !== null ? { start, end } : null;

  const doses = span ? (variant?.doses ?? readDoses(s, r, compartments, index, span, clock)) : null;
  const outputTimes = span ? (variant?.outputTimes ?? readOutputTimes(s, r, span, clock)) : null;
  const observations = span ? readObservations(s, r, compartments, span, clock) : [];
  const thresholds = readThresholds(s, r, compartments, index);
  const solver = readSolver(s, r);

  if (r.problems.length > 0 || !span || !doses || !outputTimes || !solver) {
    return { ok: false, problems: r.problems };
  }
  return {
    ok: true,
    value: {
      title: s.title,
      units: r.units,
      compartments,
      transfers,
      administrations: doses.administrations,
      doseLines: doses.lines,
      start: span.start,
      end: span.end,
      outputTimes,
      thresholds,
      solver,
      linear: transfers.every((t) => t.kinetics.kind === 'first-order'),
      subject: subjectGiven === undefined ? null : { covariates: subject.covariates, adjustments: r.adjustments },
      clock,
      observations,
    },
  };
}

/** A fraction from 0 to 1, written as a number or as a percentage ("85%"). */
function readFraction(value: number | string | AdjustedQuantity, path: string, r: Reader): number | null {
  if (typeof value === 'object') {
    const typical = readFraction(value.typical, `${path}.typical`, r);
    const adjusted = typical === null ? null : r.adjust(value, typical, path, true);
    if (adjusted !== null && adjusted > 1) {
      r.fail(path, `is ${Number(adjusted.toPrecision(6))} for this subject (typical ${typical} with its covariate relations); a bioavailability cannot exceed 1`);
      return null;
    }
    return adjusted;
  }
  const percent = typeof value === 'string' ? /^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(%?)\s*$/.exec(value) : null;
  if (typeof value === 'string' && !percent) {
    r.fail(path, `expected a fraction from 0 to 1 or a percentage such as "85%", got '${value.trim()}'`);
    return null;
  }
  const fraction = percent ? Number(percent[1]) / (percent[2] === '%' ? 100 : 1) : (value as number);
  if (fraction >= 0 && fraction <= 1) return fraction;
  const written = percent ? `'${(value as string).trim()}'` : String(value);
  const hint = !percent?.[2] && fraction > 1 && fraction <= 100 ? `; ${written} looks like a percentage — write "${fraction}%" or ${fraction / 100}` : '';
  r.fail(path, `must be a fraction from 0 to 1 (or a percentage from 0% to 100%), got ${written}${hint}`);
  return null;
}

/**
 * A dose amount, per dose or per body size: "5 mg/kg" times the subject's weight, "100 mg/m2"
 * times its body surface area (Du Bois); per size without the subject's size is a problem here.
 */
function readDoseAmount(q: Quantity, path: string, r: Reader): number | null {
  const perSize = perBodySize(q);
  if (!perSize || typeof q !== 'string') return r.read(q, 'amount', path, 'non-negative');
  const size = perSize[2] === 'kg' ? 'weight' : 'bsa';
  const covariate = r.covariates[size];
  if (!covariate || typeof covariate.value !== 'number') {
    r.fail(path, size === 'weight' ? `is per kg of body weight, but the scenario gives no subject.weight` : `is per m² of body surface area, but the scenario gives no subject.weight and subject.height to derive it from`);
    return null;
  }
  const perUnit = r.read(q.replace(/\/\s*(kg|m\^?2)\s*$/, ''), 'amount', path, 'non-negative');
  return perUnit === null ? null : perUnit * covariate.value;
}

/** The match of a per-body-size amount ("5 mg/kg", "100 mg/m2"): [unit, per dose, kg or m2]; null for a plain amount. */
function perBodySize(q: Quantity): RegExpExecArray | null {
  const unit = unitWritten(q);
  return unit === null || typeof q !== 'string' ? null : /^(.*)\/\s*(kg|m\^?2)$/.exec(unit);
}

/**
 * Whether a dose reads the subject — an amount per body size, or a bioavailability or lag with
 * covariate relations or variability (an object); else every subject gets the same doses.
 */
export function dosesDependOnSubject(s: Scenario): boolean {
  return s.doses.some((d) => perBodySize(d.amount) !== null || typeof d.bioavailability === 'object' || typeof d.lag === 'object');
}

/** limits.spanHours in the scenario's time unit. */
function longestSpan(units: UnitSystem): number {
  const hour = convertQuantity('1 h', 'time', units);
  return hour.ok ? limits.spanHours * hour.value : limits.spanHours;
}

function readCompartments(s: Scenario, r: Reader): ModelCompartment[] {
  const seen = new Map<string, number>();
  return s.compartments.map((c, i) => {
    const previous = seen.get(c.id);
    if (previous !== undefined) {
      r.fail(`compartments[${i}].id`, `'${c.id}' is already used by compartments[${previous}]`);
    } else {
      seen.set(c.id, i);
    }
    return {
      id: c.id,
      label: c.label ?? c.id,
      volume: r.read(c.volume, 'volume', `compartments[${i}].volume`),
    };
  });
}

function noSuchCompartment(id: string, compartments: ModelCompartment[]): string {
  const names = compartments.map((c) => `'${c.id}'`).join(', ');
  return `no compartment named '${id}' (compartments are ${names})`;
}

function readTransfers(
  s: Scenario,
  r: Reader,
  compartments: ModelCompartment[],
  index: Map<string, number>,
): ModelTransfer[] {
  const out: ModelTransfer[] = [];
  s.transfers.forEach((t, i) => {
    const path = `transfers[${i}]`;
    const from = index.get(t.from);
    if (from === undefined) r.fail(`${path}.from`, noSuchCompartment(t.from, compartments));
    let to: number | null = null;
    if (t.to !== undefined) {
      const found = index.get(t.to);
      if (found === undefined) r.fail(`${path}.to`, noSuchCompartment(t.to, compartments));
      else if (found === from) r.fail(`${path}.to`, 'must differ from `from` (a transfer into itself does nothing)');
      else to = found;
    }
    const kinds = [t.k !== undefined, t.cl !== undefined, t.vmax !== undefined || t.km !== undefined].filter(Boolean);
    if (kinds.length !== 1) {
      r.fail(path, kinds.length === 0
        ? 'needs one kinetics: a rate constant `k`, a clearance `cl`, or saturable `vmax` with `km`'
        : 'give only one kinetics: `k`, `cl`, or `vmax` with `km`');
      return;
    }
    if (from === undefined) return;
    const volume = compartments[from].volume;
    const needsVolume = (field: string) => {
      if (volume === null && s.compartments[from].volume === undefined) {
        r.fail(`${path}.${field}`, `needs a volume on compartment '${t.from}' (it holds amount only)`);
        return false;
      }
      return true;
    };
    let kinetics: Kinetics | null = null;
    if (t.k !== undefined) {
      const k = r.read(t.k, 'rateConstant', `${path}.k`);
      if (k !== null) kinetics = { kind: 'first-order', k, clearance: null };
    } else if (t.cl !== undefined) {
      const cl = r.read(t.cl, 'clearance', `${path}.cl`);
      if (cl !== null && needsVolume('cl') && volume !== null) {
        kinetics = { kind: 'first-order', k: cl / volume, clearance: cl };
      }
    } else {
      if (t.vmax === undefined) r.fail(`${path}.vmax`, 'is required with `km`');
      if (t.km === undefined) r.fail(`${path}.km`, 'is required with `vmax`');
      const vmax = r.read(t.vmax, 'amountRate', `${path}.vmax`);
      const km = r.read(t.km, 'concentration', `${path}.km`);
      if (vmax !== null && km !== null && needsVolume('km')) kinetics = { kind: 'saturable', vmax, km };
    }
    if (kinetics) out.push({ from, to, kinetics, label: t.label ?? null });
  });
  return out;
}

function readDoses(
  s: Scenario,
  r: Reader,
  compartments: ModelCompartment[],
  index: Map<string, number>,
  span: { start: number; end: number },
  clock: Clock | null,
): { administrations: Administration[]; lines: DoseLineSummary[] } | null {
  const administrations: Administration[] = [];
  const lines: DoseLineSummary[] = [];
  let tooMany = false;
  s.doses.forEach((d, i) => {
    const path = `doses[${i}]`;
    const into = index.get(d.into);
    if (into === undefined) r.fail(`${path}.into`, noSuchCompartment(d.into, compartments));
    const amount = readDoseAmount(d.amount, `${path}.amount`, r);
    const at = readInstant(d.at, `${path}.at`, clock, r);
    if (at !== null && at < span.start) r.fail(`${path}.at`, 'is before output.start; the simulation starts empty at output.start');
    const lag = refuseDateTime(d.lag, `${path}.lag`, r) ? 0 : (r.read(d.lag, 'time', `${path}.lag`, 'non-negative') ?? 0);
    let duration = refuseDateTime(d.duration, `${path}.duration`, r) ? null : r.read(d.duration, 'time', `${path}.duration`);
    const rate = r.read(d.rate, 'amountRate', `${path}.rate`);
    if (rate !== null && amount !== null) {
      const fromRate = amount / rate;
      if (duration !== null && Math.abs(fromRate - duration) > 1e-9 * duration) {
        r.fail(`${path}.rate`, `gives a duration of ${fromRate}, which disagrees with duration ${duration}; give one of them`);
      }
      duration = fromRate;
    }
    const every = refuseDateTime(d.every, `${path}.every`, r) ? null : r.read(d.every, 'time', `${path}.every`);
    const through = readInstant(d.through, `${path}.through`, clock, r);
    if (d.every === undefined && d.count !== undefined && d.count > 1) r.fail(`${path}.count`, 'needs `every` (the dosing interval)');
    if (d.every === undefined && d.through !== undefined) r.fail(`${path}.through`, 'needs `every` (the dosing interval)');
    if (d.count !== undefined && d.through !== undefined) r.fail(`${path}.through`, 'give `count` or `through`, not both');
    if (through !== null && at !== null && through < at) r.fail(`${path}.through`, `is before the first dose at ${at} ${r.units.time}`);
    if (into === undefined || amount === null || at === null || (d.every !== undefined && every === null)) return;

    const bioavailability = d.bioavailability === undefined ? 1 : readFraction(d.bioavailability, `${path}.bioavailability`, r);
    if (bioavailability === null) return;
    const last = every === null ? at : d.count !== undefined ? at + (d.count - 1) * every : (through ?? span.end);
    let count = 0;
    let beyondEnd = 0;
    let nextGiven: number | null = null;
    for (let j = 0; ; j++) {
      const given = every === null ? at : at + j * every;
      if (j > 0 && (every === null || given > last + 1e-9 * every)) break;
      if (given + lag >= span.end) {
        // Doses the user asked for by number, or a single dose, are worth a warning when cut;
        // a repeat that runs `through` past the end is clipped quietly unless a lag pushes a
        // dose given within the span past its end.
        if (d.count !== undefined) beyondEnd = d.count - j;
        else if (every === null || given < span.end) beyondEnd = 1;
        nextGiven = given;
        break;
      }
      if (administrations.length >= limits.administrations) {
        tooMany = true;
        break;
      }
      administrations.push({
        line: i,
        occurrence: j,
        into,
        given,
        arrival: given + lag,
        nominal: amount,
        amount: amount * bioavailability,
        duration: duration ?? 0,
      });
      count++;
      if (every === null) break;
    }
    lines.push({
      line: i,
      label: d.label ?? null,
      into,
      nominal: amount,
      bioavailability,
      lag,
      duration: duration ?? 0,
      firstGiven: at,
      every,
      count,
      beyondEnd,
      nextGiven,
    });
  });
  if (tooMany) {
    r.fail('doses', `the schedule expands to more than ${limits.administrations} administrations within the simulated span`);
    return null;
  }
  administrations.sort((a, b) => a.arrival - b.arrival || a.line - b.line || a.occurrence - b.occurrence);
  return { administrations, lines };
}

function readOutputTimes(s: Scenario, r: Reader, span: { start: number; end: number }, clock: Clock | null): Float64Array | null {
  const width = span.end - span.start;
  const step = s.output.step === undefined || refuseDateTime(s.output.step, 'output.step', r) ? null : r.read(s.output.step, 'time', 'output.step');
  if (s.output.step !== undefined && step === null) return null;
  const gridStep = step ?? (s.output.times === undefined ? width / 500 : null);
  const gridCount = gridStep === null ? 0 : Math.floor(width / gridStep + 1e-9) + 1;
  const extra = s.output.times?.length ?? 0;
  if (gridCount + extra > limits.outputPoints) {
    r.fail(s.output.step !== undefined ? 'output.step' : 'output.times',
      `asks for ${gridCount + extra} reported times; the limit is ${limits.outputPoints}`);
    return null;
  }
  const times = new Float64Array(gridCount + extra + 1);
  let n = 0;
  for (let i = 0; i < gridCount; i++) times[n++] = Math.min(span.end, span.start + i * (gridStep as number));
  let bad = false;
  s.output.times?.forEach((q, i) => {
    const t = readInstant(q, `output.times[${i}]`, clock, r);
    if (t === null) bad = true;
    else if (t < span.start || t > span.end) {
      r.fail(`output.times[${i}]`, `must lie within the simulated span ${span.start} to ${span.end}`);
      bad = true;
    } else times[n++] = t;
  });
  if (bad) return null;
  times[n++] = span.end;
  const sorted = times.subarray(0, n).sort();
  let unique = 0;
  for (let i = 0; i < sorted.length; i++) {
    if (unique === 0 || sorted[i] !== sorted[unique - 1]) sorted[unique++] = sorted[i];
  }
  return sorted.slice(0, unique);
}

function readThresholds(
  s: Scenario,
  r: Reader,
  compartments: ModelCompartment[],
  index: Map<string, number>,
): ModelThreshold[] {
  const out: ModelThreshold[] = [];
  s.output.thresholds.forEach((t, i) => {
    const path = `output.thresholds[${i}]`;
    const c = index.get(t.compartment);
    if (c === undefined) {
      r.fail(`${path}.compartment`, noSuchCompartment(t.compartment, compartments));
      return;
    }
    if (compartments[c].volume === null) {
      // A volume that was given but could not be read is reported at the volume alone.
      if (s.compartments[c].volume === undefined) r.fail(`${path}.compartment`, `'${t.compartment}' has no volume, so it has no concentration`);
      return;
    }
    if (t.above === undefined && t.below === undefined) {
      r.fail(path, 'needs `above`, `below` or both');
      return;
    }
    const above = r.read(t.above, 'concentration', `${path}.above`, 'non-negative');
    const below = r.read(t.below, 'concentration', `${path}.below`);
    if (above !== null && below !== null && !(above < below)) {
      r.fail(`${path}.below`, 'must be greater than `above`');
      return;
    }
    out.push({ compartment: c, above, below, index: i });
  });
  return out;
}

function readSolver(s: Scenario, r: Reader): Model['solver'] | null {
  const step = refuseDateTime(s.solver.step, 'solver.step', r) ? null : r.read(s.solver.step, 'time', 'solver.step');
  if (fixedStepMethods.has(s.solver.method) && s.solver.step === undefined) {
    r.fail('solver.step', `is required by the fixed-step method '${s.solver.method}'`);
    return null;
  }
  if (s.solver.method === 'exact') {
    const saturable = s.transfers.findIndex((t) => t.vmax !== undefined || t.km !== undefined);
    if (saturable >= 0) {
      r.fail('solver.method', `'exact' needs a linear model, but transfers[${saturable}] is saturable; use 'auto'`);
      return null;
    }
  }
  return { method: s.solver.method, rtol: s.solver.rtol, atol: s.solver.atol, step, maxSteps: s.solver.maxSteps };
}
