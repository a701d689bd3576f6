/**
 * Reads quantities ("12 L", "3.5 L/h", "0.2 1/h") into numbers in the scenario's
 * unit system, checking the dimension. mathjs does the parsing and conversion; it is
 * used only here, once per field, never in a numerical loop.
 */
import { create, unitDependencies } from 'mathjs';
import type { Quantity } from './schema.ts';

const math = create({ unitDependencies });
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

// Spellings users write that mathjs does not know; "1/h" after a number confuses its parser.
const aliases: [RegExp, string][] = [
  [/[µμ]/g, 'u'],
  [/\bmcg\b/g, 'ug'],
  [/\bhrs?\b/g, 'h'],
  [/\bd\b/g, 'day'],
  [/\bper\b/g, '/'],
  [/^([-+]?[0-9.]+(?:[eE][-+]?\d+)?)\s*1\s*\//, '$1 /'],
];

export function normaliseUnitText(text: string): string {
  let s = text.trim();
  for (const [pattern, replacement] of aliases) s = s.replace(pattern, replacement);
  return s;
}

function parseUnit(text: string): MathUnit | null {
  try {
    return math.unit(text) as MathUnit;
  } catch {
    return null;
  }
}

const numberThenRest = /^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*)$/;

/** Converts one quantity to the scenario unit of `dimension`. */
export function convertQuantity(q: Quantity, dimension: Dimension, units: UnitSystem): Converted {
  if (typeof q === 'number') {
    return Number.isFinite(q) ? { ok: true, value: q } : { ok: false, message: 'must be a finite number' };
  }
  const text = normaliseUnitText(q);
  const target = unitFor(dimension, units);
  const split = numberThenRest.exec(text);
  if (!split) {
    return { ok: false, message: `expected a number with ${dimensionWords[dimension]}, got '${q}'` };
  }
  const magnitude = Number(split[1]);
  const unitText = split[2].trim();
  // A bare number, or exactly the target unit, needs no conversion (and so no rounding).
  if (unitText === '' || unitText === target || (dimension === 'rateConstant' && unitText === `/${units.time}`)) {
    return Number.isFinite(magnitude)
      ? { ok: true, value: magnitude }
      : { ok: false, message: 'must be a finite number' };
  }
  const parsed = parseUnit(text);
  if (!parsed) return { ok: false, message: `could not read '${q}' as a quantity with a unit` };
  const reference = parseUnit(`1 ${target}`);
  if (!reference) return { ok: false, message: `the scenario unit '${target}' is not a known unit` };
  if (!parsed.equalBase(reference)) {
    return { ok: false, message: `expected ${dimensionWords[dimension]}, got '${unitText}'` };
  }
  // Round off the last bits that base-unit conversion adds (2 ug/mL → 2.0000000000000004 mg/L).
  const value = Number(parsed.toNumber(target).toPrecision(15));
  return Number.isFinite(value) ? { ok: true, value } : { ok: false, message: 'must be a finite number' };
}

const baseDimension: Record<keyof UnitSystem, { probe: string; words: string }[]> = {
  amount: [
    { probe: '1 mg', words: 'mass' },
    { probe: '1 mmol', words: 'amount of substance' },
  ],
  volume: [{ probe: '1 L', words: 'volume' }],
  time: [{ probe: '1 h', words: 'time' }],
};

/** Checks the scenario's own units (amount a mass or moles, volume a volume, time a time) and normalises their spelling. */
export function checkUnitSystem(units: UnitSystem): {
  units: UnitSystem;
  problems: { field: keyof UnitSystem; message: string }[];
} {
  const problems: { field: keyof UnitSystem; message: string }[] = [];
  const normalised: UnitSystem = { ...units };
  for (const field of ['amount', 'volume', 'time'] as const) {
    const text = normaliseUnitText(units[field]);
    const parsed = parseUnit(`1 ${text}`);
    const kinds = baseDimension[field];
    if (!parsed || parsed.value === null) {
      problems.push({ field, message: `'${units[field]}' is not a known unit` });
    } else if (!kinds.some((k) => parsed.equalBase(math.unit(k.probe) as MathUnit))) {
      problems.push({ field, message: `'${units[field]}' is not a unit of ${kinds.map((k) => k.words).join(' or ')}` });
    } else {
      normalised[field] = text;
    }
  }
  return { units: normalised, problems };
}
