/**
 * Problems in the trade's words, each at the one field that has it: one cause, one message,
 * quoting what was typed.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { normaliseScenario } from '../../models/scenario/normalize.ts';

type Scenario = Record<string, any>;
const brennock: Scenario = JSON.parse(readFileSync('samples/brennock-oral-bid.json', 'utf8'));

function problems(change: (s: Scenario) => void): { path: string; message: string }[] {
  const s = structuredClone(brennock);
  change(s);
  const r = normaliseScenario(s);
  return r.ok ? [] : r.problems;
}

describe('a bad volume is reported once, at the volume', () => {
  // Before: the target window on 'central' also said "'central' has no volume".
  it.each([
    [-20, 'must be positive'],
    ['20 LL', "could not read the unit 'LL' in '20 LL'"],
    ['42,5', "'42,5' has a decimal comma; write a decimal point: '42.5'"],
  ])('%s', (volume, message) => {
    expect(problems((s) => (s.compartments[1].volume = volume))).toEqual([{ path: 'compartments[1].volume', message }]);
  });

  it('a compartment without a volume still may not carry a window', () => {
    expect(problems((s) => (s.output.thresholds[0].compartment = 'gut'))).toEqual([
      { path: 'output.thresholds[0].compartment', message: "'gut' has no volume, so it has no concentration" },
    ]);
  });
});

describe('bioavailability as a fraction or a percentage', () => {
  it.each([
    [0.85, 0.85],
    ['0.85', 0.85],
    ['85%', 0.85],
    ['85 %', 0.85],
    ['100%', 1],
    [0, 0],
  ])('%s is read as %s', (written, fraction) => {
    const s = structuredClone(brennock);
    s.doses[0].bioavailability = written;
    const r = normaliseScenario(s);
    expect(r.ok).toBe(true);
    if (r.ok) expect(r.value.doseLines[0].bioavailability).toBeCloseTo(fraction, 15);
  });

  it.each([
    [85, /got 85; 85 looks like a percentage — write "85%" or 0\.85/],
    ['120%', /got '120%'/],
    [-0.1, /must be a fraction from 0 to 1/],
    ['most', /expected a fraction from 0 to 1 or a percentage such as "85%", got 'most'/],
  ])('%s is refused with a hint', (written, message) => {
    const found = problems((s) => (s.doses[0].bioavailability = written));
    expect(found).toHaveLength(1);
    expect(found[0].path).toBe('doses[0].bioavailability');
    expect(found[0].message).toMatch(message);
  });
});

describe("the validator's messages in plain words", () => {
  it.each([
    [(s: Scenario) => (s.doses[0].count = 0), 'doses[0].count', 'must be at least 1'],
    [(s: Scenario) => (s.doses[0].count = 1.5), 'doses[0].count', 'must be a whole number, got the number 1.5'],
    [(s: Scenario) => (s.doses[0].count = '3'), 'doses[0].count', "must be a number, got the text '3'"],
    [(s: Scenario) => (s.solver = { rtol: 2 }), 'solver.rtol', 'must be at most 0.1'],
    [(s: Scenario) => (s.compartments = []), 'compartments', 'needs at least 1 entry'],
    [(s: Scenario) => (s.doses = {}), 'doses', 'must be a list, got an object'],
    [(s: Scenario) => (s.title = ''), 'title', 'must not be empty'],
    [
      (s: Scenario) => (s.solver = { method: 'rk45' }),
      'solver.method',
      "must be one of 'auto', 'exact', 'dopri5', 'dop853', 'rosenbrock', 'euler', 'heun', 'rk4', 'abm2', got the text 'rk45'",
    ],
  ])('%#', (change, path, message) => {
    expect(problems(change)).toEqual([{ path, message }]);
  });
});
