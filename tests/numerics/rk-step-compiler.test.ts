/**
 * The compiled step kernels (straight-line code generated from a tableau and a model's
 * derivative) must do exactly what the interpreted kernel does: the same trajectories to
 * the last bit, the same step and evaluation counts, for every tableau, with linear and
 * saturable transfers and infusions. Where code generation is refused the engine falls
 * back to the interpreter; model text never reaches the generated source.
 */
import fc from 'fast-check';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { setCodeGeneration } from '../../models/solving/numerics/generated-code.ts';
import { kernelSource } from '../../models/solving/numerics/rk-step-compiler.ts';
import { unpack } from '../../models/solving/numerics/rk-step.ts';
import { DOP853, DOPRI5, EULER, HEUN, RK4 } from '../../models/solving/numerics/tableaux.ts';
import { simulate, simulateModel, type SimulationResult } from '../../models/simulate.ts';
import { CompartmentSystem } from '../../models/building/system.ts';

afterEach(() => {
  setCodeGeneration(true);
  vi.unstubAllGlobals();
});

/**
 * Fictional "trelanix": oral doses into a gut depot, a loading infusion, a peripheral
 * compartment, parallel linear and saturable elimination and a saturable transfer back
 * from tissue (cycles in the graph), so every kind of term appears in the derivative.
 */
function scenario(method: string, extra: Record<string, unknown> = {}) {
  return {
    title: 'Trelanix loading infusion then oral doses',
    compartments: [{ id: 'gut' }, { id: 'central', volume: 25 }, { id: 'tissue', volume: 60 }],
    transfers: [
      { from: 'gut', to: 'central', k: 0.9 },
      { from: 'central', to: 'tissue', cl: 6 },
      { from: 'tissue', to: 'central', vmax: 20, km: 2 },
      { from: 'central', cl: 2.5 },
      { from: 'central', vmax: 30, km: 4 },
    ],
    doses: [
      { into: 'central', amount: 300, at: 0, duration: 2 },
      { into: 'gut', amount: 150, at: 6, every: 12, count: 4, bioavailability: 0.7, lag: 0.5 },
    ],
    output: { end: 60, step: 0.5 },
    solver: { method, ...extra },
  };
}

function run(method: string, compiled: boolean, extra: Record<string, unknown> = {}): SimulationResult {
  setCodeGeneration(compiled);
  const result = simulate(scenario(method, extra));
  if (!result.ok) throw new Error(JSON.stringify(result.problems));
  return result.value;
}

function expectIdentical(a: SimulationResult, b: SimulationResult): void {
  expect(a.diagnostics.acceptedSteps).toBe(b.diagnostics.acceptedSteps);
  expect(a.diagnostics.rejectedSteps).toBe(b.diagnostics.rejectedSteps);
  expect(a.diagnostics.derivativeEvaluations).toBe(b.diagnostics.derivativeEvaluations);
  a.compartments.forEach((series, c) => {
    // Bit for bit: the compiled code performs the interpreter's operations in the same order.
    expect(Array.from(series.amount)).toEqual(Array.from(b.compartments[c].amount));
  });
  expect(a.metrics).toEqual(b.metrics);
}

describe('compiled step kernels', () => {
  it.each([
    ['dopri5', {}],
    ['dop853', {}],
    ['dop853', { rtol: 1e-10, atol: 1e-12 }],
    ['euler', { step: 0.01 }],
    ['heun', { step: 0.05 }],
    ['rk4', { step: 0.1 }],
  ])('%s %j: the same trajectory, figures and counts as the interpreted kernel', (method, extra) => {
    const compiled = run(method, true, extra);
    const interpreted = run(method, false, extra);
    expect(compiled.diagnostics.methodsUsed).toEqual([method]);
    expectIdentical(compiled, interpreted);
  });

  it('falls back to the interpreter where code generation is refused (a strict Content-Security-Policy)', () => {
    // A model shape no other test compiles (a fourth, amount-only compartment), so its kernel is not cached.
    const input = scenario('dop853');
    const shaped = { ...input, compartments: [...input.compartments, { id: 'bladder' }], transfers: [...input.transfers, { from: 'tissue', to: 'bladder', k: 0.01 }] };
    const model = normaliseScenario(shaped);
    if (!model.ok) throw new Error('scenario rejected');
    let refusals = 0;
    vi.stubGlobal('Function', function refuse() {
      refusals++;
      throw new EvalError('code generation from strings disallowed for this context');
    });
    const refused = simulateModel(model.value);
    vi.unstubAllGlobals();
    expect(refusals).toBeGreaterThan(0);
    setCodeGeneration(false);
    const interpreted = simulateModel(model.value);
    if (!refused.ok || !interpreted.ok) throw new Error('simulation failed');
    expect(refused.value.diagnostics.methodsUsed).toEqual(['dop853']);
    expectIdentical(refused.value, interpreted.value);
  });

  it('generates sources that compile, for every tableau (a broken source would throw, not fall back)', () => {
    const model = normaliseScenario(scenario('dopri5'));
    if (!model.ok) throw new Error('scenario rejected');
    const system = new CompartmentSystem(model.value);
    for (const tab of [DOPRI5, DOP853, EULER, HEUN, RK4]) {
      const source = kernelSource(system.code, unpack(tab), system.dimension);
      const phases = (new Function('p', 'u', 'y0', 'k', 'y1', 'yStiff', 'scale', source) as (...a: Float64Array[]) => object)();
      expect(Object.keys(phases)).toEqual(['attempt', 'complete']);
    }
  });

  it('writes model parameters as array reads and never copies model text into the source', () => {
    const model = normaliseScenario({
      ...scenario('dopri5'),
      title: '"); globalThis.pwned = 1; ("',
      compartments: [{ id: 'gut', label: '`${pwned}`' }, { id: 'central', volume: 25 }, { id: 'tissue', volume: 60 }],
    });
    if (!model.ok) throw new Error('scenario rejected');
    const system = new CompartmentSystem(model.value);
    for (const tab of [DOPRI5, DOP853, EULER, HEUN, RK4]) {
      const source = kernelSource(system.code, unpack(tab), system.dimension);
      expect(source).not.toMatch(/pwned|gut|central|tissue/);
      // Only the kernel's own vocabulary: numbers, local names, p[…], u[…], the work arrays and Math.
      const words = new Set(source.match(/[A-Za-z_$][\w$]*/g));
      const allowed = /^(?:[abcegmswx]\d*(?:_\d+)?|k\d+_\d+|w[a-z]\d*_\d+|acc\d+|dacc\d+|[kpu]|y0|y1|yStiff|scale|out|at|t|h|rtol|atol|sum5?|sum3|deno|theta1?|flux|attempt|complete|return|const|let|use|strict|Math|max|abs|sqrt|e)$/;
      expect([...words].filter((w) => !allowed.test(w))).toEqual([]);
    }
  });

  it('emits a derivative that equals derivative() bit for bit on random states (fast-check)', () => {
    const model = normaliseScenario(scenario('dopri5'));
    if (!model.ok) throw new Error('scenario rejected');
    const system = new CompartmentSystem(model.value);
    const n = system.dimension;
    const code = system.code;
    const body = `${code.emit((i) => `y[${i}]`, (i) => `f${i}`)}\n${Array.from({ length: n }, (_, i) => `out[${i}] = f${i};`).join('\n')}`;
    const straight = new Function('p', 'u', 'y', 'out', body) as (p: Float64Array, u: Float64Array, y: Float64Array, out: Float64Array) => void;
    const state = fc.float64Array({ minLength: n, maxLength: n, noNaN: true, noDefaultInfinity: true, min: -1e3, max: 1e4 });
    const rates = fc.float64Array({ minLength: n, maxLength: n, noNaN: true, noDefaultInfinity: true, min: 0, max: 500 });
    fc.assert(
      fc.property(state, rates, (y, r) => {
        system.input.set(r);
        const a = new Float64Array(n);
        const b = new Float64Array(n);
        system.derivative(0, y, a);
        straight(code.params, code.input, y, b);
        expect(Array.from(b)).toEqual(Array.from(a));
      }),
      { numRuns: 300 },
    );
  });
});
