/**
 * Reading quantities with units. The number a user writes must come through untouched when
 * it is already in the scenario's unit, and be multiplied by the unit factor otherwise.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { checkUnitSystem, convertQuantity, type Dimension } from '../../models/scenario/units.ts';

const hours = { amount: 'mg', volume: 'L', time: 'h' };

function read(text: string, dimension: Dimension = 'rateConstant', units = hours): number {
  const r = convertQuantity(text, dimension, units);
  if (!r.ok) throw new Error(r.message);
  return r.value;
}

describe('rate constants written with a slash keep every digit', () => {
  // Each of these lost its last digit when an alias for "N 1/h" matched the number's own "1".
  it.each([
    ['0.21 /h', 0.21],
    ['0.21/h', 0.21],
    ['2.1 /h', 2.1],
    ['11 /h', 11],
    ['0.31 per h', 0.31],
    ['0.1 /h', 0.1],
    ['0.1 1/h', 0.1],
    ['1 1/h', 1],
    ['0.2 h^-1', 0.2],
    ['0.21 /hr', 0.21],
    ['0.21 1/hr', 0.21],
  ])('%s is %s per hour', (text, value) => {
    expect(read(text)).toBe(value);
  });

  it('21 /day is 21/24 per hour', () => {
    expect(read('21 /day')).toBe(21 / 24);
    expect(read('21 per day')).toBe(21 / 24);
    expect(read('21 1/d')).toBe(21 / 24);
  });
});

// Every spelling the README lists for a rate constant, plus "per" and "hr".
const perHour = [
  (m: string) => `${m} 1/h`,
  (m: string) => `${m} /h`,
  (m: string) => `${m}/h`,
  (m: string) => `${m} h^-1`,
  (m: string) => `${m} per h`,
  (m: string) => `${m} per hour`,
  (m: string) => `${m} 1/hr`,
  (m: string) => `${m}  1 / h`,
];

// Magnitudes from 1e-12 to 1e12, written as JavaScript prints them (exponent form included).
const magnitude = fc
  .double({ min: 1e-12, max: 1e12, noNaN: true, noDefaultInfinity: true })
  .filter((v) => v > 0);

describe('property: the converted value is the number written', () => {
  it('to the last bit when the unit is the scenario unit (every spelling of 1/h)', () => {
    fc.assert(
      fc.property(magnitude, fc.constantFrom(...perHour), (m, spell) => {
        expect(read(spell(String(m)))).toBe(m);
      }),
      { numRuns: 400 },
    );
  });

  it('to the last bit for amounts, volumes, times and clearances in the scenario units', () => {
    fc.assert(
      fc.property(magnitude, (m) => {
        expect(read(`${m} mg`, 'amount')).toBe(m);
        expect(read(`${m} L`, 'volume')).toBe(m);
        expect(read(`${m} h`, 'time')).toBe(m);
        expect(read(`${m} hr`, 'time')).toBe(m);
        expect(read(`${m} L/h`, 'clearance')).toBe(m);
        expect(read(`${m} mg/L`, 'concentration')).toBe(m);
      }),
      { numRuns: 200 },
    );
  });

  it('times the unit factor, correctly rounded, when a conversion is needed', () => {
    // Factors are exact decimal facts (1 day = 24 h, 1 min = 1/60 h, 1 g = 1000 mg, 1 mL = 1/1000 L).
    fc.assert(
      fc.property(magnitude, (m) => {
        expect(read(`${m} /day`)).toBe(m * (1 / 24));
        expect(read(`${m} per min`)).toBe(m * 60);
        expect(read(`${m} g`, 'amount')).toBe(m * 1000);
        expect(read(`${m} ug/mL`, 'concentration')).toBe(m);
        expect(read(`${m} min`, 'time')).toBe(m * (1 / 60));
        expect(read(`${m} mL/min`, 'clearance')).toBe(m * 0.06);
      }),
      { numRuns: 200 },
    );
  });

  it('in a scenario whose time unit is the minute', () => {
    const minutes = { ...hours, time: 'min' };
    fc.assert(
      fc.property(magnitude, (m) => {
        expect(read(`${m} /min`, 'rateConstant', minutes)).toBe(m);
        expect(read(`${m} 1/min`, 'rateConstant', minutes)).toBe(m);
        expect(read(`${m} /h`, 'rateConstant', minutes)).toBe(m * (1 / 60));
      }),
      { numRuns: 100 },
    );
  });
});

describe('unreadable quantities are refused, quoting what was typed', () => {
  it.each([
    ['12 LL', 'volume', /could not read the unit 'LL' in '12 LL'/],
    ['42,5 L', 'volume', /'42,5 L' has a decimal comma; write a decimal point: '42.5 L'/],
    ['12 mg', 'volume', /expected a volume unit \(e\.g\. L\), got 'mg'/],
    ['L', 'volume', /expected a number with a volume unit/],
    ['1e999 L', 'volume', /'1e999 L' is not a finite number/],
    ['1e308 kg', 'amount', /too large once converted to mg/],
  ])('%s', (text, dimension, message) => {
    const r = convertQuantity(text, dimension as Dimension, hours);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.message).toMatch(message);
  });
});

describe('the scenario unit system takes single unit names', () => {
  it.each([
    ['volume', 'dm*dm*dm'],
    ['time', 'h*h/h'],
    ['volume', 'dm^3'],
    ['amount', 'mg/kg'],
  ])('%s %s is refused at its field', (field, unit) => {
    const { problems } = checkUnitSystem({ ...hours, [field]: unit });
    expect(problems).toEqual([{ field, message: expect.stringMatching(/is not a single unit name/) }]);
  });

  it.each([
    ['volume', 'mL'],
    ['volume', 'dL'],
    ['time', 'min'],
    ['time', 'day'],
    ['time', 'hr'],
    ['amount', 'ug'],
    ['amount', 'µg'],
    ['amount', 'mmol'],
  ])('%s %s is accepted', (field, unit) => {
    expect(checkUnitSystem({ ...hours, [field]: unit }).problems).toEqual([]);
  });
});

describe('everyday units without the general parser', () => {
  // mathjs, an independent unit library, as the reference for every factor of the table.
  it('agree with mathjs for every pair of everyday units and their quotients, within 2 ulp', async () => {
    const { create, unitDependencies } = await import('mathjs');
    const math = create({ unitDependencies });
    const { simpleFactor } = await import('../../models/scenario/simple-units.ts');
    const groups = [
      ['ng', 'ug', 'mg', 'g', 'kg'],
      ['nmol', 'umol', 'mmol', 'mol'],
      ['uL', 'mL', 'dL', 'L'],
      ['s', 'min', 'h', 'day', 'week'],
    ];
    const [mass, , volume, time] = groups;
    const spellings: string[][] = [
      ...groups,
      mass.flatMap((a) => volume.map((v) => `${a}/${v}`)),
      volume.flatMap((v) => time.map((t) => `${v}/${t}`)),
      mass.flatMap((a) => time.map((t) => `${a}/${t}`)),
      time.map((t) => `${t}^-1`),
    ];
    let compared = 0;
    let beyond = 0;
    for (const group of spellings) {
      for (const from of group) {
        for (const to of group) {
          const fast = simpleFactor(from, to);
          // Ratios whose exact fraction passes 2^53 (ng/dL → kg/uL) are left to the general parser.
          if (fast === 'unknown') {
            beyond++;
            continue;
          }
          expect(typeof fast, `${from} → ${to}`).toBe('number');
          const reference = math.unit(`1 ${from}`).toNumber(to);
          expect(Math.abs((fast as number) - reference), `${from} → ${to}`).toBeLessThanOrEqual(2 * Number.EPSILON * Math.abs(reference));
          compared++;
        }
      }
    }
    expect(compared).toBeGreaterThan(500);
    expect(beyond).toBeLessThan(compared / 10);
    expect(simpleFactor('mg', 'L')).toBe('mismatch');
    expect(simpleFactor('furlong', 'L')).toBe('unknown');
  });
});
