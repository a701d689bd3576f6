/**
 * Quantities as the form sees them: a number box and a unit picker over the scenario's
 * strings ("12 L", "0.9 1/h") or plain numbers (read in the scenario's units). What the page
 * needs to draw (time placement, labels) and the unit picker's conversion are done here with
 * small tables of exact factors between the units the pickers offer (the page carries no
 * unit library); the server does the real unit handling.
 */
import { hoursFromOrigin, looksLikeDateTime, parseDateTime, type Clock } from '../../models/levels/clock.ts';

export type Dim = 'amount' | 'volume' | 'time' | 'rateConstant' | 'clearance' | 'amountRate' | 'concentration';

export interface UnitSet {
  amount: string;
  volume: string;
  time: string;
}

export const defaultUnits: UnitSet = { amount: 'mg', volume: 'L', time: 'h' };

/** Units offered in each picker; a unit found in a file but not listed here is added to its picker. */
export const unitChoices: Record<Dim, string[]> = {
  amount: ['mg', 'ug', 'ng', 'g'],
  volume: ['L', 'mL', 'dL'],
  time: ['min', 'h', 'day', 'week', 's'],
  rateConstant: ['1/h', '1/min', '1/day'],
  clearance: ['L/h', 'mL/min', 'L/day', 'mL/h'],
  amountRate: ['mg/h', 'mg/min', 'mg/day', 'ug/min', 'ug/h', 'g/day', 'g/h'],
  concentration: ['mg/L', 'ug/mL', 'ug/L', 'ng/mL'],
};

/** The unit a plain number in this dimension is read in. */
export function scenarioUnitOf(dim: Dim, u: UnitSet): string {
  switch (dim) {
    case 'amount':
      return u.amount;
    case 'volume':
      return u.volume;
    case 'time':
      return u.time;
    case 'rateConstant':
      return `1/${u.time}`;
    case 'clearance':
      return `${u.volume}/${u.time}`;
    case 'amountRate':
      return `${u.amount}/${u.time}`;
    case 'concentration':
      return `${u.amount}/${u.volume}`;
  }
}

export interface QuantityParts {
  /** What goes in the number box. */
  value: string;
  /** The unit as written; null when the number box holds text that is not a number followed by a unit. */
  unit: string | null;
}

const numberThenUnit = /^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$/;

/** Splits a stored quantity into the number box and the unit picker. */
export function splitQuantity(q: unknown, dim: Dim, u: UnitSet): QuantityParts {
  if (q === undefined || q === null || q === '') return { value: '', unit: scenarioUnitOf(dim, u) };
  if (typeof q === 'number') return { value: String(q), unit: scenarioUnitOf(dim, u) };
  if (typeof q !== 'string') return { value: JSON.stringify(q), unit: null };
  // A clock time ("2026-03-04T08:00") is one piece of text, not the number 2026 and a unit.
  if (looksLikeDateTime(q)) return { value: q, unit: null };
  const m = numberThenUnit.exec(q);
  if (!m) return { value: q, unit: null };
  return { value: m[1], unit: m[2] === '' ? scenarioUnitOf(dim, u) : m[2] };
}

/** True when the text is a plain finite number as JSON and people write it. */
export function isNumberText(text: string): boolean {
  return /^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*$/.test(text);
}

/** How a quantity reads in a label: the string as written, or a plain number with the scenario's unit. */
export function quantityLabel(q: unknown, dim: Dim, u: UnitSet): string {
  if (q === undefined || q === null || q === '') return '?';
  if (typeof q === 'number') return `${q} ${scenarioUnitOf(dim, u)}`;
  if (typeof q === 'string') return q.trim();
  return '?';
}

// ---- small conversion tables, for drawing only ----

const timeInHours: Record<string, number> = {
  s: 1 / 3600,
  sec: 1 / 3600,
  second: 1 / 3600,
  seconds: 1 / 3600,
  min: 1 / 60,
  minute: 1 / 60,
  minutes: 1 / 60,
  h: 1,
  hr: 1,
  hrs: 1,
  hour: 1,
  hours: 1,
  d: 24,
  day: 24,
  days: 24,
  week: 168,
  weeks: 168,
  wk: 168,
};

const amountInMg: Record<string, number> = {
  ng: 1e-6,
  ug: 1e-3,
  mcg: 1e-3,
  'µg': 1e-3,
  'μg': 1e-3,
  mg: 1,
  g: 1e3,
  kg: 1e6,
};

const volumeInL: Record<string, number> = { uL: 1e-6, mL: 1e-3, ml: 1e-3, dL: 0.1, dl: 0.1, L: 1, l: 1 };

function factor(table: Record<string, number>, unit: string): number | null {
  const f = table[unit.trim()];
  return f === undefined ? null : f;
}

/** Factor turning a value in `from` into `to`, or null when either unit is not in the tables. */
export function timeFactor(from: string, to: string): number | null {
  const a = factor(timeInHours, from);
  const b = factor(timeInHours, to);
  return a === null || b === null ? null : a / b;
}

/** Concentration factor between two "amount/volume" units. */
export function concentrationFactor(from: string, to: string): number | null {
  const [fa, fv] = from.split('/');
  const [ta, tv] = to.split('/');
  if (fv === undefined || tv === undefined) return null;
  const a1 = factor(amountInMg, fa);
  const v1 = factor(volumeInL, fv);
  const a2 = factor(amountInMg, ta);
  const v2 = factor(volumeInL, tv);
  if (a1 === null || v1 === null || a2 === null || v2 === null) return null;
  return a1 / v1 / (a2 / v2);
}

/**
 * A quantity as a number in the scenario's units: a plain number as it is, a string with a
 * unit through `convert` (the factor from that unit to the scenario's, or null if unknown here).
 */
function valueIn(q: unknown, convert: (unit: string) => number | null): number | null {
  if (typeof q === 'number') return Number.isFinite(q) ? q : null;
  if (typeof q !== 'string') return null;
  const m = numberThenUnit.exec(q);
  if (!m) return null;
  const v = Number(m[1]);
  if (m[2] === '') return v;
  const f = convert(m[2]);
  return f === null ? null : v * f;
}

/** A time quantity in the scenario's time unit, or null when it cannot be read here. */
export function timeValue(q: unknown, u: UnitSet): number | null {
  if (q === undefined || q === null || q === '') return null;
  return valueIn(q, (unit) => timeFactor(unit, u.time));
}

/**
 * An instant (a dose's `at` or `through`, output.start or .end) in the scenario's time unit: a
 * quantity as timeValue reads it, or a date-time counted from the scenario's clock (the same
 * rule as the server's, models/levels/clock.ts); null when it cannot be read here.
 */
export function instantValue(q: unknown, u: UnitSet, clock: Clock | null): number | null {
  if (typeof q !== 'string' || !looksLikeDateTime(q)) return timeValue(q, u);
  if (clock === null) return null;
  const at = parseDateTime(q.trim(), clock.zoneMinutes);
  const perHour = timeFactor('h', u.time);
  return at.ok && perHour !== null ? hoursFromOrigin(at.value.epochMs, clock) * perHour : null;
}

/** An amount in the scenario's amount unit, or null. */
function amountValue(q: unknown, u: UnitSet): number | null {
  return valueIn(q, (unit) => {
    const a = factor(amountInMg, unit);
    const b = factor(amountInMg, u.amount);
    return a === null || b === null ? null : a / b;
  });
}

/** An amount/time rate in the scenario's units, or null. */
function amountRateValue(q: unknown, u: UnitSet): number | null {
  return valueIn(q, (unit) => {
    const [am, tm] = unit.split('/');
    if (tm === undefined) return null;
    const a = factor(amountInMg, am);
    const b = factor(amountInMg, u.amount);
    const t = timeFactor(tm, u.time);
    return a === null || b === null || t === null ? null : a / b / t;
  });
}

/** Infusion length from duration, or amount/rate; null for a bolus or when it cannot be read. */
export function infusionLength(duration: unknown, rate: unknown, amount: unknown, u: UnitSet): number | null {
  if (duration !== undefined) return timeValue(duration, u);
  if (rate === undefined) return null;
  const a = amountValue(amount, u);
  const r = amountRateValue(rate, u);
  return a === null || r === null || r <= 0 ? null : a / r;
}

/** Adds a time to a time quantity, keeping the unit of `base` when it can (for the loading-dose shift). */
export function addTime(base: unknown, add: unknown, u: UnitSet): string | number | null {
  const addV = timeValue(add, u);
  const baseV = timeValue(base ?? 0, u);
  if (addV === null || baseV === null) return null;
  const total = baseV + addV;
  // Keep the unit the interval was written in, which is usually the one people think in.
  if (typeof add === 'string') {
    const m = numberThenUnit.exec(add);
    if (m && m[2] !== '') {
      const f = timeFactor(u.time, m[2]);
      if (f !== null) return `${tidy(total * f)} ${m[2]}`;
    }
  }
  return tidy(total);
}

/** Doubles an amount, keeping its unit. */
export function scaleQuantity(q: unknown, by: number): string | number | null {
  if (typeof q === 'number') return tidy(q * by);
  if (typeof q !== 'string') return null;
  const m = numberThenUnit.exec(q);
  if (!m) return null;
  const v = tidy(Number(m[1]) * by);
  return m[2] === '' ? v : `${v} ${m[2]}`;
}

/** Rounds away binary noise (0.1 + 0.2) without touching meaningful digits. */
function tidy(v: number): number {
  return Number(v.toPrecision(12));
}

// ---- the unit picker: converting a number from one offered unit to another ----

/** "1/h", "/h", "h^-1", "h-1", "per h" → "h"; null when the text is not a reciprocal time. */
function reciprocalTime(unit: string): string | null {
  const u = unit.trim();
  const m = /^(?:1\s*\/|\/|per\s+)\s*(\S+)$/.exec(u) ?? /^(\S+?)\s*(?:\^\s*-\s*1|-1)$/.exec(u);
  return m ? m[1] : null;
}

/** "a/b" split once at the slash, both sides trimmed; null without exactly one slash. */
function ratio(unit: string): [string, string] | null {
  const parts = unit.split('/');
  return parts.length === 2 ? [parts[0].trim(), parts[1].trim()] : null;
}

/**
 * How large one `unit` of this dimension is, in mg, L and h (e.g. "mL/min" as a clearance is
 * 1e-3 L / (1/60 h) = 0.06 L/h); null for a unit outside the tables.
 */
export function unitSize(unit: string, dim: Dim): number | null {
  switch (dim) {
    case 'amount':
      return factor(amountInMg, unit);
    case 'volume':
      return factor(volumeInL, unit);
    case 'time':
      return factor(timeInHours, unit);
    case 'rateConstant': {
      const t = reciprocalTime(unit);
      const h = t === null ? null : factor(timeInHours, t);
      return h === null ? null : 1 / h;
    }
    case 'clearance':
    case 'amountRate':
    case 'concentration': {
      const r = ratio(unit);
      if (!r) return null;
      const top = factor(dim === 'clearance' ? volumeInL : amountInMg, r[0]);
      const bottom = factor(dim === 'concentration' ? volumeInL : timeInHours, r[1]);
      return top === null || bottom === null ? null : top / bottom;
    }
  }
}

/**
 * A value in `from` expressed in `to` (0.9 1/h → 0.015 1/min), rounded to 15 significant
 * digits so that the division's binary noise does not show (0.9/60 is 0.015000000000000001
 * in doubles); the quantity moves by less than 1e-15 relative. Null when either unit is
 * outside the tables.
 */
export function convertUnit(value: number, from: string, to: string, dim: Dim): number | null {
  if (from.trim() === to.trim()) return value;
  const a = unitSize(from, dim);
  const b = unitSize(to, dim);
  if (a === null || b === null || !Number.isFinite(value)) return null;
  return Number(((value * a) / b).toPrecision(15));
}
