/**
 * Reads quantities ("12 L", "3.5 L/h", "0.2 1/h") into numbers in the scenario's
 * unit system, checking the dimension. mathjs does the parsing and conversion; it is
 * used only here, once per field, never in a numerical loop.
 */
import { create, unitDependencies } from 'mathjs';
import type { Quantity } from './schema.ts';
import { simpleFactor, simpleKind } from './simple-units.ts';

// The general unit parser is set up on first use: everyday units never need it (simple-units.ts).
let instance: ReturnType<typeof create> | null = null;
function mathjs(): ReturnType<typeof create> {
  instance ??= create({ unitDependencies });
  return instance;
}
type MathUnit = import("mathjs").Unit;

export interface UnitSystem {
  amount: string;
  volume: string;
  time: string;
}

/** The kinds of quantity a scenario holds, each with its unit in the scenario's system. */
export type Dimension =
  | 'amount'
  | 'volume'
  | 'time'
  | 'rateConstant'
  | 'clearance'
  | 'amountRate'
  | 'concentration';

const dimensionWords: Record<Dimension, string> = {
  amount: 'an amount unit (e.g. mg)',
  volume: 'a volume unit (e.g. L)',
  time: 'a time unit (e.g. h)',
  rateConstant: 'a 1/time unit (e.g. 1/h)',
  clearance: 'a volume/time unit (e.g. L/h)',
  amountRate: 'an amount/time unit (e.g. mg/h)',
  concentration: 'an amount/volume unit (e.g. mg/L)',
};

export type Converted = { ok: true; value: number } | { ok: false; message: string };

/** The unit string of each dimension in a unit system, as mathjs reads it. */
export function unitFor(dimension: Dimension, units: UnitSystem): string {
  switch (dimension) {
    case 'amount':
      return units.amount;
    case 'volume':
      return units.volume;
    case 'time':
      return units.time;
    case 'rateConstant':
      return `${units.time}^-1`;
    case 'clearance':
      return `${units.volume}/${units.time}`;
    case 'amountRate':
      return `${units.amount}/${units.time}`;
    case 'concentration':
      return `${units.amount}/${units.volume}`;
  }
}

/** How a unit is printed for people: "1/h" rather than mathjs's "h^-1". */
export function displayUnit(dimension: Dimension, units: UnitSystem): string {
  return dimension === 'rateConstant' ? `1/${units.time}` : unitFor(dimension, units);
}

// Spellings users write that mathjs does not know. They apply to the unit text alone, after
// the number has been split off, so no rewrite can reach a digit of the number.
const unitAliases: [RegExp, string][] = [
  [/[µμ]/g, 'u'],
  [/\bmcg\b/g, 'ug'],
  [/\bhrs?\b/g, 'h'],
  [/\bd\b/g, 'day'],
  [/\bper\b/g, '/'],
  // "1/h" and "/h" both mean per hour; mathjs reads "1 /h" but not "1 1/h" or "1 /h" twice.
  [/^1\s*\//, '/'],
];

/** The unit part of a quantity in mathjs's spelling ("1/hr" → "/h", "per day" → "/ day"). */
export function normaliseUnitText(text: string): string {
  let s = text.trim();
  for (const [pattern, replacement] of unitAliases) s = s.replace(pattern, replacement);
  return s.trim();
}

function parseUnit(text: string): MathUnit | null {
  try {
    return mathjs().unit(text) as MathUnit;
  } catch {
    return null;
  }
}

const numberThenRest = /^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)(.*)$/;

/**
 * The factor that takes one `unitText` to one `target`, or null when the two differ in
 * dimension. Base-unit arithmetic leaves a few ulps of noise on factors that are exactly
 * decimal (ug/mL → mg/L gives 1.0000000000000002); a factor within 8 ulps of a 12-digit
 * decimal is snapped to it, so "2 ug/mL" reads as 2 mg/L, while 1/60 keeps all its bits.
 */
function conversionFactor(unit: MathUnit, target: MathUnit, targetText: string): number | null {
  if (!unit.equalBase(target)) return null;
  const factor = unit.toNumber(targetText);
  const snapped = Number(factor.toPrecision(12));
  return Math.abs(snapped - factor) <= 8 * Number.EPSILON * Math.abs(factor) ? snapped : factor;
}

function quoted(text: string): string {
  return `'${text.trim()}'`;
}

/**
 * Converts one quantity to the scenario unit of `dimension`. The number is read by
 * JavaScript, never by the unit parser, and only multiplied by the unit's factor: a
 * quantity already in the scenario's unit keeps every bit of the number written.
 */
export function convertQuantity(q: Quantity, dimension: Dimension, units: UnitSystem): Converted {
  return convertToUnit(q, unitFor(dimension, units), dimensionWords[dimension], displayUnit(dimension, units));
}

/**
 * Converts a quantity to `targetText` (a unit mathjs reads); a bare number is taken to be in
 * it already. `words` says what kind of unit is expected, for the messages.
 */
export function convertToUnit(q: Quantity, targetText: string, words: string, shown = targetText): Converted {
  if (typeof q === 'number') {
    return Number.isFinite(q) ? { ok: true, value: q } : { ok: false, message: 'must be a finite number' };
  }
  const split = numberThenRest.exec(q.trim());
  if (!split) {
    return { ok: false, message: `expected a number with ${words}, got ${quoted(q)}` };
  }
  const magnitude = Number(split[1]);
  if (!Number.isFinite(magnitude)) return { ok: false, message: `${quoted(q)} is not a finite number` };
  const typedUnit = split[2].trim();
  if (typedUnit === '') return { ok: true, value: magnitude };
  const decimalComma = /^,(\d+)(.*)$/.exec(typedUnit);
  if (decimalComma) {
    return { ok: false, message: `${quoted(q)} has a decimal comma; write a decimal point: '${split[1]}.${decimalComma[1]}${decimalComma[2]}'` };
  }
  const unitText = normaliseUnitText(typedUnit);
  const simple = simpleFactor(unitText, targetText);
  if (simple === 'mismatch') return { ok: false, message: `expected ${words}, got ${quoted(typedUnit)}` };
  if (simple !== 'unknown') {
    const value = magnitude * simple;
    return Number.isFinite(value) ? { ok: true, value } : { ok: false, message: `${quoted(q)} is too large once converted to ${shown}` };
  }
  const parsed = parseUnit(`1 ${unitText}`);
  if (!parsed) return { ok: false, message: `could not read the unit ${quoted(typedUnit)} in ${quoted(q)}` };
  const target = parseUnit(`1 ${targetText}`);
  if (!target) return { ok: false, message: `the unit '${targetText}' is not a known unit` };
  const factor = conversionFactor(parsed, target, targetText);
  if (factor === null) {
    return { ok: false, message: `expected ${words}, got ${quoted(typedUnit)}` };
  }
  const value = magnitude * factor;
  return Number.isFinite(value) ? { ok: true, value } : { ok: false, message: `${quoted(q)} is too large once converted to ${shown}` };
}

/** The unit written after the number of a quantity string, or null for a bare number or a number. */
export function unitWritten(q: Quantity): string | null {
  if (typeof q === 'number') return null;
  const split = numberThenRest.exec(q.trim());
  const unit = split ? split[2].trim() : '';
  return unit === '' ? null : normaliseUnitText(unit);
}

const baseDimension: Record<keyof UnitSystem, { probe: string; words: string; example: string }[]> = {
  amount: [
    { probe: '1 mg', words: 'mass', example: "'mg', 'ug' or 'mmol'" },
    { probe: '1 mmol', words: 'amount of substance', example: "'mmol'" },
  ],
  volume: [{ probe: '1 L', words: 'volume', example: "'L' or 'mL'" }],
  time: [{ probe: '1 h', words: 'time', example: "'h', 'min' or 'day'" }],
};

/** The kinds of everyday unit each field of the unit system accepts without the general parser. */
const everydayKinds: Record<keyof UnitSystem, string[]> = { amount: ['mass', 'substance'], volume: ['volume'], time: ['time'] };

/** A unit name with its prefix (mg, mL, min, day): letters only. */
const singleUnitName = /^[A-Za-z]+$/;

/** Checks the scenario's own units (amount a mass or moles, volume a volume, time a time) and normalises their spelling. */
export function checkUnitSystem(units: UnitSystem): {
  units: UnitSystem;
  problems: { field: keyof UnitSystem; message: string }[];
} {
  const problems: { field: keyof UnitSystem; message: string }[] = [];
  const normalised: UnitSystem = { ...units };
  for (const field of ['amount', 'volume', 'time'] as const) {
    const text = normaliseUnitText(units[field]);
    const kinds = baseDimension[field];
    const everyday = simpleKind(text);
    if (everyday !== null && everydayKinds[field].includes(everyday)) {
      normalised[field] = text;
      continue;
    }
    const parsed = singleUnitName.test(text) ? parseUnit(`1 ${text}`) : null;
    if (!singleUnitName.test(text)) {
      // Compound spellings ("dm*dm*dm", "h*h/h") would reach every derived unit (mg/dm*dm*dm) and
      // break the reading of concentrations and rate constants, so the system takes plain names.
      problems.push({ field, message: `'${units[field]}' is not a single unit name; write one such as ${kinds[0].example}` });
    } else if (!parsed || parsed.value === null) {
      problems.push({ field, message: `'${units[field]}' is not a known unit` });
    } else if (!kinds.some((k) => parsed.equalBase(mathjs().unit(k.probe) as MathUnit))) {
      problems.push({ field, message: `'${units[field]}' is not a unit of ${kinds.map((k) => k.words).join(' or ')}` });
    } else {
      normalised[field] = text;
    }
  }
  return { units: normalised, problems };
}
