/**
 * Bad input: every invalid scenario gives ok:false with a problem whose `path` names the
 * field (a JSON path such as `doses[2].into`) and a plain sentence — never an exception,
 * never a stack trace. Also numerical failures (path 'solver', naming the time and the
 * compartment) and the warnings for coarse fixed steps and doses beyond the end.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { limits, normaliseScenario, simulate, type Problem } from '../../models/index.ts';

/** A valid scenario for a fictional oral compound: gut depot, central and tissue compartments. */
function base(): Record<string, any> {
  return {
    title: 'Fictional compound brevatide',
    compartments: [{ id: 'gut' }, { id: 'central', volume: 20 }, { id: 'tissue', volume: '40 L' }],
    transfers: [
      { from: 'gut', to: 'central', k: '1.2 1/h' },
      { from: 'central', cl: '2 L/h' },
      { from: 'central', to: 'tissue', k: 0.3 },
      { from: 'tissue', to: 'central', k: 0.1 },
    ],
    doses: [
      { into: 'gut', amount: '200 mg', bioavailability: 0.7, lag: '15 min' },
      { into: 'central', amount: 50, at: 2, duration: 1 },
      { into: 'central', amount: 10, at: 4 },
    ],
    output: { end: 24, step: 0.5 },
  };
}

/** Signs that an exception or a debugging dump leaked into a message. */
function expectPlain(p: Problem): void {
  expect(typeof p.path).toBe('string');
  expect(typeof p.message).toBe('string');
  expect(p.message.length).toBeGreaterThan(2);
  expect(p.message).not.toContain('    at ');
  expect(p.message).not.toMatch(/\n/);
  expect(p.message).not.toMatch(/\b(TypeError|RangeError|ReferenceError|IntegrationFailure|ZodError)\b/);
  expect(p.message).not.toMatch(/\[object |undefined|^Invalid input$/);
}

function problemsOf(scenario: unknown): Problem[] {
  const outcome = simulate(scenario);
  expect(outcome.ok).toBe(false);
  if (outcome.ok) return [];
  expect(outcome.problems.length).toBeGreaterThan(0);
  outcome.problems.forEach(expectPlain);
  return outcome.problems;
}

function mutated(change: (s: Record<string, any>) => void): Record<string, any> {
  const s = base();
  change(s);
  return s;
}

it('the base scenario is valid', () => {
  const outcome = simulate(base());
  expect(outcome.ok).toBe(true);
});

type Case = [name: string, change: (s: Record<string, any>) => void, path: string, message: RegExp];

const cases: Case[] = [
  ['unknown compartment in a dose', (s) => (s.doses[2].into = 'tisue'), 'doses[2].into', /^no compartment named 'tisue' \(compartments are 'gut', 'central', 'tissue'\)$/],
  ['unknown compartment in a transfer', (s) => (s.transfers[2].to = 'tisue'), 'transfers[2].to', /no compartment named 'tisue'/],
  ['clearance with a mass unit', (s) => (s.transfers[1].cl = '3 mg'), 'transfers[1].cl', /^expected a volume\/time unit .*got 'mg'$/],
  ['rate constant with a clearance unit', (s) => (s.transfers[0].k = '2 L/h'), 'transfers[0].k', /expected a 1\/time unit .*got 'L\/h'/],
  ['dose amount with a time unit', (s) => (s.doses[0].amount = '3 h'), 'doses[0].amount', /expected an amount unit .*got 'h'/],
  ['negative volume', (s) => (s.compartments[1].volume = -3), 'compartments[1].volume', /^must be positive$/],
  ['zero volume', (s) => (s.compartments[2].volume = '0 L'), 'compartments[2].volume', /^must be positive$/],
  ['negative rate constant', (s) => (s.transfers[2].k = -0.3), 'transfers[2].k', /^must be positive$/],
  ['negative lag', (s) => (s.doses[0].lag = '-1 h'), 'doses[0].lag', /^must not be negative$/],
  ['clearance from a compartment without a volume', (s) => (s.transfers[0] = { from: 'gut', to: 'central', cl: 2 }), 'transfers[0].cl', /needs a volume on compartment 'gut'/],
  ['saturable transfer from a compartment without a volume', (s) => (s.transfers[0] = { from: 'gut', to: 'central', vmax: 20, km: 2 }), 'transfers[0].km', /needs a volume on compartment 'gut'/],
  ['km without vmax', (s) => (s.transfers[1] = { from: 'central', km: 2 }), 'transfers[1].vmax', /^is required with `km`$/],
  ['vmax without km', (s) => (s.transfers[1] = { from: 'central', vmax: 40 }), 'transfers[1].km', /^is required with `vmax`$/],
  ['two kinetics at once', (s) => (s.transfers[1] = { from: 'central', k: 0.1, cl: 2 }), 'transfers[1]', /give only one kinetics/],
  ['no kinetics', (s) => (s.transfers[1] = { from: 'central' }), 'transfers[1]', /needs one kinetics/],
  ['transfer into itself', (s) => (s.transfers[3].to = 'tissue'), 'transfers[3].to', /must differ from `from`/],
  ['unknown key in a dose (typo)', (s) => (s.doses[0].amout = 3), 'doses[0]', /^unknown field 'amout'$/],
  ['unknown key at the top (typo)', (s) => (s.solvr = { method: 'rk4' }), '', /^unknown field 'solvr'$/],
  ['unknown key in output (typo)', (s) => (s.output.stpe = 1), 'output', /^unknown field 'stpe'$/],
  ['missing title', (s) => delete s.title, 'title', /^is required$/],
  ['missing output', (s) => delete s.output, 'output', /^is required$/],
  ['missing output.end', (s) => delete s.output.end, 'output.end', /^is required$/],
  ['missing compartments', (s) => delete s.compartments, 'compartments', /^is required$/],
  ['missing compartment id', (s) => delete s.compartments[2].id, 'compartments[2].id', /^is required$/],
  ['missing dose amount', (s) => delete s.doses[1].amount, 'doses[1].amount', /^is required$/],
  ['missing dose target', (s) => delete s.doses[1].into, 'doses[1].into', /^is required$/],
  ['missing transfer source', (s) => delete s.transfers[3].from, 'transfers[3].from', /^is required$/],
  ['quantity of the wrong type', (s) => (s.doses[0].amount = true), 'doses[0].amount', /^must be a number, or a string with a unit/],
  ['wrong type for the title', (s) => (s.title = 42), 'title', /must be text, got the number 42/],
  ['no compartments', (s) => (s.compartments = []), 'compartments', /1/],
  ['rate and duration that disagree', (s) => Object.assign(s.doses[1], { amount: 100, rate: 50, duration: 3 }), 'doses[1].rate', /gives a duration of 2, which disagrees with duration 3/],
  ['count without every', (s) => (s.doses[1].count = 3), 'doses[1].count', /^needs `every`/],
  ['through without every', (s) => (s.doses[1].through = 20), 'doses[1].through', /^needs `every`/],
  ['until, renamed through', (s) => (s.doses[1].until = 20), 'doses[1].until', /^`until` is now called `through`/],
  ['through with count', (s) => Object.assign(s.doses[1], { every: 6, count: 3, through: 20 }), 'doses[1].through', /give `count` or `through`, not both/],
  ['through before the first dose', (s) => Object.assign(s.doses[1], { at: 10, every: 4, through: 5 }), 'doses[1].through', /^is before the first dose at 10 h$/],
  ['bioavailability above 1', (s) => (s.doses[0].bioavailability = 1.5), 'doses[0].bioavailability', /1/],
  ['dose before the start of the span', (s) => (s.output.start = 1), 'doses[0].at', /before output\.start/],
  ['threshold with above = below', (s) => (s.output.thresholds = [{ compartment: 'central', above: 5, below: 5 }]), 'output.thresholds[0].below', /must be greater than `above`/],
  ['threshold with above > below', (s) => (s.output.thresholds = [{ compartment: 'central', above: '8 mg/L', below: '2 ug/mL' }]), 'output.thresholds[0].below', /must be greater than `above`/],
  ['threshold on a depot', (s) => (s.output.thresholds = [{ compartment: 'gut', above: 5 }]), 'output.thresholds[0].compartment', /'gut' has no volume/],
  ['threshold with neither edge', (s) => (s.output.thresholds = [{ compartment: 'central' }]), 'output.thresholds[0]', /needs `above`, `below` or both/],
  ['threshold edge with a volume unit', (s) => (s.output.thresholds = [{ compartment: 'central', above: '3 L' }]), 'output.thresholds[0].above', /expected an amount\/volume unit/],
  ['output.end equal to start', (s) => (s.output = { start: 10, end: 10 }), 'output.end', /^must be after output\.start$/],
  ['output.end before start', (s) => (s.output = { start: '10 h', end: '300 min' }), 'output.end', /^must be after output\.start$/],
  ['output time after the span', (s) => (s.output.times = [1, 30]), 'output.times[1]', /must lie within the simulated span 0 to 24/],
  ['output time before the span', (s) => (s.output.times = ['-1 h']), 'output.times[0]', /must lie within the simulated span/],
  ['zero output step', (s) => (s.output.step = 0), 'output.step', /^must be positive$/],
  ['fixed-step method without solver.step', (s) => (s.solver = { method: 'rk4' }), 'solver.step', /required by the fixed-step method 'rk4'/],
  ['unknown solver method', (s) => (s.solver = { method: 'magic' }), 'solver.method', /auto/],
  ['maxSteps below its minimum', (s) => (s.solver = { maxSteps: 50 }), 'solver.maxSteps', /100/],
  ["method 'exact' on a saturable model", (s) => {
    s.transfers[1] = { from: 'central', vmax: 40, km: 2 };
    s.solver = { method: 'exact' };
  }, 'solver.method', /'exact' needs a linear model, but transfers\[1\] is saturable/],
  ['an unknown unit', (s) => (s.compartments[1].volume = '12 flurbs'), 'compartments[1].volume', /could not read the unit 'flurbs' in '12 flurbs'/],
  ['a quantity with no number', (s) => (s.compartments[1].volume = 'twelve L'), 'compartments[1].volume', /expected a number with a volume unit/],
  ['an empty quantity', (s) => (s.doses[0].amount = '  '), 'doses[0].amount', /must not be empty/],
  ['scenario volume unit that is a mass', (s) => (s.units = { volume: 'mg' }), 'units.volume', /^'mg' is not a unit of volume$/],
  ['scenario amount unit that is a volume', (s) => (s.units = { amount: 'L' }), 'units.amount', /'L' is not a unit of mass/],
  ['scenario time unit that is unknown', (s) => (s.units = { time: 'fortnights' }), 'units.time', /'fortnights' is not a known unit/],
  ['duplicate compartment ids', (s) => s.compartments.push({ id: 'central', volume: 5 }), 'compartments[3].id', /^'central' is already used by compartments\[1\]$/],
  ['compartment id that starts with a digit', (s) => (s.compartments[0].id = '1gut'), 'compartments[0].id', /must start with a letter/],
];

describe('invalid scenarios name the field and say what is wrong', () => {
  it.each(cases)('%s', (_name, change, path, message) => {
    const problems = problemsOf(mutated(change));
    const hit = problems.find((p) => p.path === path);
    expect(hit, `problems: ${JSON.stringify(problems)}`).toBeDefined();
    expect(hit?.message).toMatch(message);
  });

  it('a bad volume is reported once, not again as a missing volume on the transfers that read it', () => {
    // compartments[1] has a volume, only an unreadable one: "needs a volume … (it holds amount only)" would mislead.
    for (const volume of [-3, 0, '12 flurbs']) {
      const problems = problemsOf(mutated((s) => (s.compartments[1].volume = volume)));
      expect(problems.map((p) => p.path)).toEqual(['compartments[1].volume']);
    }
  });

  it('lists every problem, each at its own path', () => {
    const problems = problemsOf(
      mutated((s) => {
        s.doses[2].into = 'tisue';
        s.transfers[1].cl = '3 mg';
        s.compartments[2].volume = -1;
      }),
    );
    expect(problems.map((p) => p.path).sort()).toEqual(['compartments[2].volume', 'doses[2].into', 'transfers[1].cl']);
  });

  it('too many output points: the limit of models/scenario/limits.ts', () => {
    const step = 24 / limits.outputPoints; // limit + 1 grid points over [0, 24]
    const problems = problemsOf(mutated((s) => (s.output.step = step)));
    const hit = problems.find((p) => p.path === 'output.step');
    expect(hit?.message).toMatch(new RegExp(`the limit is ${limits.outputPoints}$`));
    // One point fewer — the grid 0, h, …, 24 h with exactly the limit of points — is accepted
    // (checked by the normaliser alone, without simulating two million rows).
    const atLimit = normaliseScenario(mutated((s) => (s.output.step = 24 / (limits.outputPoints - 1))));
    expect(atLimit.ok).toBe(true);
    if (atLimit.ok) expect(atLimit.value.outputTimes.length).toBeLessThanOrEqual(limits.outputPoints);
  });

  it.each(['euler', 'heun', 'rk4', 'abm2'])("fixed-step method '%s' needs solver.step", (method) => {
    const problems = problemsOf(mutated((s) => (s.solver = { method })));
    expect(problems.find((p) => p.path === 'solver.step')?.message).toMatch(new RegExp(`'${method}'`));
  });

  it.each([
    ['a number', 42],
    ['a string', 'scenario'],
    ['null', null],
    ['an array', [base()]],
    ['a boolean', true],
  ])('JSON that is not an object (%s) is one problem at the root', (_name, value) => {
    const problems = problemsOf(value);
    expect(problems).toHaveLength(1);
    expect(problems[0].path).toBe('');
    expect(problems[0].message).toMatch(/object/);
  });
});

describe('never throws', () => {
  it('on arbitrary JSON values', () => {
    fc.assert(
      fc.property(fc.jsonValue(), (value) => {
        const outcome = simulate(value);
        expect(outcome.ok).toBe(false);
        if (!outcome.ok) outcome.problems.forEach(expectPlain);
      }),
      { numRuns: 200, seed: 11 },
    );
  });

  it('on a valid scenario with one field replaced by an arbitrary JSON value', () => {
    const fields: [string, (s: Record<string, any>, v: unknown) => void][] = [
      ['compartments[1].volume', (s, v) => (s.compartments[1].volume = v)],
      ['compartments[0].id', (s, v) => (s.compartments[0].id = v)],
      ['transfers[1].cl', (s, v) => (s.transfers[1].cl = v)],
      ['transfers[0].k', (s, v) => (s.transfers[0].k = v)],
      ['transfers[2].to', (s, v) => (s.transfers[2].to = v)],
      ['doses[0].amount', (s, v) => (s.doses[0].amount = v)],
      ['doses[1].duration', (s, v) => (s.doses[1].duration = v)],
      ['doses[2].into', (s, v) => (s.doses[2].into = v)],
      ['doses[0].lag', (s, v) => (s.doses[0].lag = v)],
      ['output.end', (s, v) => (s.output.end = v)],
      ['output.times', (s, v) => (s.output.times = v)],
      ['units', (s, v) => (s.units = v)],
      ['solver', (s, v) => (s.solver = v)],
    ];
    const quantityLike = fc.oneof(
      fc.jsonValue({ maxDepth: 2 }),
      fc.double(),
      fc.constantFrom('12', '12 L', '-4 L/h', '1e400 mg', '0.5 h', '3 mg/L', 'L', '', 'NaN', '1/h', '2 ug/mL', '  7  '),
    );
    fc.assert(
      fc.property(fc.constantFrom(...fields), quantityLike, ([, set], value) => {
        const s = base();
        set(s, value);
        const outcome = simulate(s);
        if (!outcome.ok) outcome.problems.forEach(expectPlain);
      }),
      { numRuns: 300, seed: 12 },
    );
  });
});

describe('numerical failure is a problem at path solver, not an exception', () => {
  function solverProblem(scenario: unknown): Problem {
    const problems = problemsOf(scenario);
    expect(problems).toHaveLength(1);
    expect(problems[0].path).toBe('solver');
    return problems[0];
  }

  it('too few steps allowed for a long saturable run (maxSteps at its minimum, 100)', () => {
    const p = solverProblem({
      title: 'Fictional saturable compound over a month',
      compartments: [{ id: 'central', volume: 10 }],
      transfers: [{ from: 'central', vmax: 50, km: 1 }],
      doses: [{ into: 'central', amount: 100, every: 6 }],
      output: { end: '30 day' },
      solver: { maxSteps: 100 },
    });
    // Names the time (in scenario units) and the compartment that holds the step down.
    expect(p.message).toMatch(/at t = [0-9.]+ h/);
    expect(p.message).toMatch(/compartment 'central'/);
    expect(p.message).toMatch(/maxSteps \(100\)/);
  });

  it('a stiff linear model on an explicit adaptive method with maxSteps 100', () => {
    const p = solverProblem({
      title: 'Fictional stiff two-compartment compound',
      compartments: [{ id: 'central', volume: 10 }, { id: 'tissue', volume: 100 }],
      transfers: [{ from: 'central', k: 500 }, { from: 'central', to: 'tissue', k: 0.1 }, { from: 'tissue', to: 'central', k: 0.01 }],
      doses: [{ into: 'central', amount: 100 }],
      output: { end: '1000 h' },
      solver: { method: 'dopri5', maxSteps: 100 },
    });
    expect(p.message).toMatch(/at t = [0-9.e-]+ h/);
    expect(p.message).toMatch(/compartment '(central|tissue)'/);
  });

  it.each([
    ['euler', 1e6, 1],
    ['rk4', 1e3, 0.5],
    ['heun', 1e4, 0.1],
  ])('huge rates with %s (k = %d, step %d) overflow to a non-finite value', (method, k, step) => {
    const p = solverProblem({
      title: 'Fictional compound with an absurd clearance',
      compartments: [{ id: 'gut' }, { id: 'central', volume: 10 }],
      transfers: [{ from: 'gut', to: 'central', k: 1 }, { from: 'central', k }],
      doses: [{ into: 'gut', amount: 100 }, { into: 'central', amount: 100 }],
      output: { end: 500 },
      solver: { method, step },
    });
    expect(p.message).toMatch(/at t = [0-9.e+-]+ h/);
    expect(p.message).toMatch(/compartment 'central'/);
    expect(p.message).toMatch(/non-finite/);
  });
});

describe('warnings', () => {
  const oneCompartment = (solver: object) => ({
    title: 'Fictional one-compartment bolus',
    compartments: [{ id: 'central', volume: 10 }],
    transfers: [{ from: 'central', k: 3 }],
    doses: [{ into: 'central', amount: 100 }],
    output: { end: 24 },
    solver,
  });

  function warningsOf(scenario: unknown): string[] {
    const outcome = simulate(scenario);
    expect(outcome.ok).toBe(true);
    return outcome.ok ? outcome.value.diagnostics.warnings : [];
  }

  // RK4's stability interval on the negative real axis is about [−2.785, 0] (Hairer & Wanner,
  // Solving ODEs II, §IV.2, from memory); with λ = −3 the limit on h is 2.785/3 ≈ 0.928.
  it('rk4 with a step beyond the stability limit warns that the curve is not to be trusted', () => {
    const warnings = warningsOf(oneCompartment({ method: 'rk4', step: 1 }));
    expect(warnings).toHaveLength(1);
    expect(warnings[0]).toMatch(/beyond the stability limit of rk4/);
    expect(warnings[0]).toMatch(/h·λ = 3 > 2\.785/);
  });

  it('rk4 just inside the stability limit warns only that the step is coarse', () => {
    const warnings = warningsOf(oneCompartment({ method: 'rk4', step: 0.92 }));
    expect(warnings).toHaveLength(1);
    expect(warnings[0]).toMatch(/coarse/);
    expect(warnings[0]).not.toMatch(/stability limit/);
  });

  it('rk4 with h·λ well below the limit gives no warning', () => {
    expect(warningsOf(oneCompartment({ method: 'rk4', step: 0.05 }))).toEqual([]);
  });

  it('euler uses its own limit (2): h·λ = 2.4 is beyond it', () => {
    const warnings = warningsOf(oneCompartment({ method: 'euler', step: 0.8 }));
    expect(warnings.some((w) => /beyond the stability limit of euler/.test(w))).toBe(true);
  });

  it('count asking for more doses than fit in the span: the extra ones are named and left out', () => {
    const outcome = simulate({
      title: 'Fictional twice-daily regimen, cut short',
      compartments: [{ id: 'central', volume: 10 }],
      transfers: [{ from: 'central', k: 0.1 }],
      doses: [
        { into: 'central', amount: 5, at: 0 },
        { into: 'central', amount: 100, every: 12, count: 10 },
      ],
      output: { end: 48 },
    });
    expect(outcome.ok).toBe(true);
    if (!outcome.ok) return;
    const r = outcome.value;
    // Given at 0, 12, 24, 36 h: four fit before the end at 48 h; 48…108 h are six beyond it.
    expect(r.diagnostics.warnings).toEqual([expect.stringMatching(/^doses\[1\]: 6 doses arrive at or after the end of the simulated span and are not included$/)]);
    expect(r.events.filter((e) => e.line === 1).map((e) => e.time)).toEqual([0, 12, 24, 36]);
    expect(r.diagnostics.massBalance.dosed).toBe(405);
  });

  it('a single dose whose lag takes it past the end is named too', () => {
    const warnings = warningsOf({
      title: 'Fictional late oral dose',
      compartments: [{ id: 'gut' }, { id: 'central', volume: 10 }],
      transfers: [{ from: 'gut', to: 'central', k: 1 }, { from: 'central', k: 0.1 }],
      doses: [{ into: 'gut', amount: 100, at: 0 }, { into: 'gut', amount: 100, at: 23, lag: '2 h' }],
      output: { end: 24 },
    });
    expect(warnings).toEqual([expect.stringMatching(/^doses\[1\]: 1 dose arrives at or after the end/)]);
  });
});
