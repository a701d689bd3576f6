/**
 * Cross-checks against independent numerical codes: odex (Hairer & Wanner's GBS
 * extrapolation code ODEX, ported to TypeScript) for multiple-dose scenarios, nonlinear and
 * linear, and mathjs `expm` for one propagation of the exact path.
 *
 * The reference right-hand sides and dose schedules are written out here from each
 * scenario's parameters — nothing of the engine's model builder, schedule or integrators is
 * used — and odex is driven from breakpoint to breakpoint, with boluses added and infusion
 * rates switched at the same times.
 */
import { expm, matrix } from 'mathjs';
import { describe, expect, it } from 'vitest';
import { amount, concentration, expectWithin, mmFlux, odexReference, rowsOf, run, type ReferenceEvent, type Row } from './helpers.ts';
import type { SimulationResult } from '../../models/simulate.ts';

/** odex settings: far tighter than anything asked of the engine, so its error is negligible. */
const ODEX_RTOL = 1e-12;
const ODEX_ATOL = 1e-12;

/**
 * Tolerance units allowed to each solver at a reported time: the local error per step is
 * bounded by one unit (rtol·|y| + atol), and the project's integrator tests hold global and
 * dense-output errors to 10 units (tests/numerics/adaptive.test.ts).
 */
const UNITS = 10;

interface Compared {
  /** Largest |engine − odex| in units of the combined tolerance of both solvers. */
  units: number;
  /** Largest |engine − odex| / |odex| over rows with a concentration above 1e-6 of the peak. */
  relative: number;
  at: Row | null;
}

/**
 * Compares the engine's concentrations with odex's over all rows. The row just before a bolus
 * at the very start of the span is left out: it is the engine issue checked and reported in
 * one-compartment.test.ts.
 */
function compare(
  result: SimulationResult,
  reference: number[][],
  compartments: { id: string; index: number; volume: number }[],
  engineTol: { rtol: number; atol: number } | null,
): Compared {
  const rows = rowsOf(result);
  let units = 0;
  let relative = 0;
  let at: Row | null = null;
  for (const { id, index, volume } of compartments) {
    const c = concentration(result, id);
    const peak = Math.max(...reference.map((y) => y[index] / volume));
    rows.forEach((row, k) => {
      if (row.t === result.times[0] && row.side === 'before') return;
      const ref = reference[k][index] / volume;
      const diff = Math.abs(c[row.index] - ref);
      const scale =
        (engineTol ? engineTol.rtol * Math.abs(ref) + engineTol.atol / volume : 0) + ODEX_RTOL * Math.abs(ref) + ODEX_ATOL / volume;
      const u = diff / scale;
      if (u > units) {
        units = u;
        at = row;
      }
      if (Math.abs(ref) > 1e-6 * peak) relative = Math.max(relative, diff / Math.abs(ref));
    });
  }
  return { units, relative, at };
}

const METHODS: [method: string, rtol: number][] = [
  ['auto', 1e-8], // DOP853 (the default)
  ['auto', 1e-6], // DOPRI5
  ['rosenbrock', 1e-8],
];
/** The engine's default absolute tolerance. */
const ATOL = 1e-10;

/**
 * One test per method setting. Settings listed in `knownFailures` (as "method rtol") are the
 * reported engine issue — DOP853, chosen by 'auto' at rtol ≤ 1e-8, misses its tolerance on
 * saturable scenarios — and run as expected failures; remove them from the list once fixed.
 */
function eachMethod(knownFailures: string[], body: (method: string, rtol: number) => void): void {
  for (const [method, rtol] of METHODS) {
    const name = `method ${method}, rtol ${rtol}`;
    if (knownFailures.includes(`${method} ${rtol}`)) {
      it.fails(`${name} (reported engine issue: DOP853 beyond its tolerance)`, () => body(method, rtol));
    } else {
      it(name, () => body(method, rtol));
    }
  }
}

describe('nonlinear multiple-dose scenarios against odex', () => {
  describe('two compartments with saturable elimination, repeated IV boluses', () => {
    // Fictional "mirelant": 600 mg IV every 8 h × 6 into V1 = 20 L; k12 = 0.5, k21 = 0.2 1/h;
    // Vmax = 80 mg/h, Km = 5 mg/L from the central compartment, plus a renal clearance of 1 L/h.
    const V1 = 20;
    const k12 = 0.5;
    const k21 = 0.2;
    const Vmax = 80;
    const Km = 5;
    const CLr = 1;
    const scenario = (method: string, rtol: number) => ({
      title: 'Mirelant 600 mg IV every 8 h',
      compartments: [
        { id: 'central', volume: `${V1} L` },
        { id: 'tissue' },
      ],
      transfers: [
        { from: 'central', to: 'tissue', k: k12 },
        { from: 'tissue', to: 'central', k: k21 },
        { from: 'central', vmax: `${Vmax} mg/h`, km: `${Km} mg/L` },
        { from: 'central', cl: `${CLr} L/h` },
      ],
      doses: [{ into: 'central', amount: 600, every: 8, count: 6 }],
      output: { end: 60, step: 0.25 },
      solver: { method, rtol, atol: ATOL },
    });
    const rhs = (y: number[], rates: number[]) => {
      const mm = mmFlux(y[0], V1, Vmax, Km);
      return [rates[0] - k12 * y[0] + k21 * y[1] - mm - (CLr / V1) * y[0], k12 * y[0] - k21 * y[1]];
    };
    const events: ReferenceEvent[] = [0, 1, 2, 3, 4, 5].map((j) => ({ time: 8 * j, jumps: [[0, 600]] }));

    eachMethod([], (method, rtol) => {
      const result = run(scenario(method, rtol));
      expect(result.diagnostics.path).toBe('adaptive');
      const reference = odexReference({ n: 2, rhs, events, start: 0, end: 60, rtol: ODEX_RTOL, atol: ODEX_ATOL }, rowsOf(result));
      const d = compare(result, reference, [{ id: 'central', index: 0, volume: V1 }], { rtol, atol: ATOL });
      if (process.env.REFERENCE_REPORT) console.log(`[reference] odex two-compartment MM ${method} ${rtol}: relative ${d.relative.toExponential(2)}`);
      // Independent integrator: odex (Hairer & Wanner, Solving ODEs I, §II.9, code ODEX).
      expectWithin(d.units, UNITS, `odex two-compartment MM, ${method} rtol ${rtol} (tolerance units)`);
      // The peripheral amount too (amount-only compartment).
      const tissue = amount(result, 'tissue');
      const rows = rowsOf(result);
      let worst = 0;
      rows.forEach((row, k) => {
        if (row.t === 0 && row.side === 'before') return;
        const ref = reference[k][1];
        worst = Math.max(worst, Math.abs(tissue[row.index] - ref) / (rtol * Math.abs(ref) + ATOL + ODEX_RTOL * Math.abs(ref) + ODEX_ATOL));
      });
      expectWithin(worst, UNITS, `odex two-compartment MM peripheral amount, ${method} rtol ${rtol} (tolerance units)`);
    });
  });

  describe('oral doses with lag and bioavailability, saturable elimination', () => {
    // Fictional "quorinex": 500 mg by mouth every 12 h × 5, F = 0.75, lag 30 min, ka = 1.1 1/h;
    // V = 30 L, Vmax = 40 mg/h, Km = 3 mg/L.
    const V = 30;
    const ka = 1.1;
    const Vmax = 40;
    const Km = 3;
    const F = 0.75;
    const scenario = (method: string, rtol: number) => ({
      title: 'Quorinex 500 mg by mouth every 12 h',
      compartments: [{ id: 'gut' }, { id: 'central', volume: V }],
      transfers: [
        { from: 'gut', to: 'central', k: ka },
        { from: 'central', vmax: Vmax, km: Km },
      ],
      doses: [{ into: 'gut', amount: 500, bioavailability: F, lag: '30 min', every: 12, count: 5 }],
      output: { end: 72, step: 0.25 },
      solver: { method, rtol, atol: ATOL },
    });
    const rhs = (y: number[], rates: number[]) => {
      const mm = mmFlux(y[1], V, Vmax, Km);
      return [rates[0] - ka * y[0], rates[1] + ka * y[0] - mm];
    };
    // The bioavailable amount arrives in the depot at given time + lag.
    const events: ReferenceEvent[] = [0, 1, 2, 3, 4].map((j) => ({ time: 12 * j + 0.5, jumps: [[0, F * 500]] }));

    eachMethod([], (method, rtol) => {
      const result = run(scenario(method, rtol));
      const reference = odexReference({ n: 2, rhs, events, start: 0, end: 72, rtol: ODEX_RTOL, atol: ODEX_ATOL }, rowsOf(result));
      const d = compare(result, reference, [{ id: 'central', index: 1, volume: V }], { rtol, atol: ATOL });
      if (process.env.REFERENCE_REPORT) console.log(`[reference] odex oral lag MM ${method} ${rtol}: relative ${d.relative.toExponential(2)}`);
      // Independent integrator: odex (Hairer & Wanner, Solving ODEs I, §II.9, code ODEX).
      expectWithin(d.units, UNITS, `odex oral lag MM, ${method} rtol ${rtol} (tolerance units)`);
    });
  });

  describe('an infusion overlapping boluses, saturable and first-order elimination, two compartments', () => {
    // Fictional "zentharide": 50 mg/h over 0–6 h with a 200 mg bolus at 2 h; 60 mg/h over 10–14 h with
    // a 150 mg bolus at 12 h. V1 = 25 L, k12 = 0.3, k21 = 0.15 1/h, Vmax = 50 mg/h, Km = 2 mg/L, CL = 2 L/h.
    const V1 = 25;
    const k12 = 0.3;
    const k21 = 0.15;
    const Vmax = 50;
    const Km = 2;
    const CL = 2;
    const scenario = (method: string, rtol: number) => ({
      title: 'Zentharide infusions with boluses',
      compartments: [{ id: 'central', volume: V1 }, { id: 'tissue' }],
      transfers: [
        { from: 'central', to: 'tissue', k: k12 },
        { from: 'tissue', to: 'central', k: k21 },
        { from: 'central', vmax: Vmax, km: Km },
        { from: 'central', cl: CL },
      ],
      doses: [
        { into: 'central', amount: 300, duration: 6, label: 'first infusion' },
        { into: 'central', amount: 200, at: 2 },
        { into: 'central', amount: 240, at: 10, rate: '60 mg/h' },
        { into: 'central', amount: 150, at: 12 },
      ],
      output: { end: 36, step: 0.2 },
      solver: { method, rtol, atol: ATOL },
    });
    const rhs = (y: number[], rates: number[]) => {
      const mm = mmFlux(y[0], V1, Vmax, Km);
      return [rates[0] - k12 * y[0] + k21 * y[1] - mm - (CL / V1) * y[0], rates[1] + k12 * y[0] - k21 * y[1]];
    };
    const events: ReferenceEvent[] = [
      { time: 0, rateChanges: [[0, 50]] },
      { time: 2, jumps: [[0, 200]] },
      { time: 6, rateChanges: [[0, -50]] },
      { time: 10, rateChanges: [[0, 60]] },
      { time: 12, jumps: [[0, 150]] },
      { time: 14, rateChanges: [[0, -60]] },
    ];

    eachMethod([], (method, rtol) => {
      const result = run(scenario(method, rtol));
      const reference = odexReference({ n: 2, rhs, events, start: 0, end: 36, rtol: ODEX_RTOL, atol: ODEX_ATOL }, rowsOf(result));
      const d = compare(result, reference, [{ id: 'central', index: 0, volume: V1 }], { rtol, atol: ATOL });
      if (process.env.REFERENCE_REPORT) console.log(`[reference] odex infusion+bolus MM ${method} ${rtol}: relative ${d.relative.toExponential(2)}`);
      // Independent integrator: odex (Hairer & Wanner, Solving ODEs I, §II.9, code ODEX).
      expectWithin(d.units, UNITS, `odex infusion+bolus MM, ${method} rtol ${rtol} (tolerance units)`);
    });
  });
});

describe('the exact linear path against independent references', () => {
  // Fictional "velquin": oral 250 mg every 8 h × 6 (F = 0.9, lag 15 min, ka = 1.4 1/h) plus a 100 mg
  // IV loading bolus and a 2 h infusion of 120 mg at 30 h; V1 = 18 L, V2 = 40 L (with volume),
  // CL = 3 L/h, Q = 6 L/h (k12 = Q/V1, k21 = Q/V2).
  const V1 = 18;
  const V2 = 40;
  const CL = 3;
  const Q = 6;
  const ka = 1.4;
  const F = 0.9;
  const scenario = {
    title: 'Velquin oral regimen with IV loading and an infusion',
    compartments: [{ id: 'gut' }, { id: 'central', volume: V1 }, { id: 'tissue', volume: V2 }],
    transfers: [
      { from: 'gut', to: 'central', k: ka },
      { from: 'central', to: 'tissue', cl: Q },
      { from: 'tissue', to: 'central', cl: Q },
      { from: 'central', cl: CL },
    ],
    doses: [
      { into: 'central', amount: 100, label: 'loading' },
      { into: 'gut', amount: 250, bioavailability: F, lag: '15 min', every: 8, count: 6 },
      { into: 'central', amount: 120, at: 30, duration: 2 },
    ],
    output: { end: 60, step: 0.25 },
  };
  const k12 = Q / V1;
  const k21 = Q / V2;
  const k10 = CL / V1;

  it('matches odex over the whole multiple-dose schedule', () => {
    const result = run(scenario);
    expect(result.diagnostics.path).toBe('exact');
    const rhs = (y: number[], rates: number[]) => [
      rates[0] - ka * y[0],
      rates[1] + ka * y[0] - (k12 + k10) * y[1] + k21 * y[2],
      rates[2] + k12 * y[1] - k21 * y[2],
    ];
    const events: ReferenceEvent[] = [
      { time: 0, jumps: [[1, 100]] },
      ...[0, 1, 2, 3, 4, 5].map((j): ReferenceEvent => ({ time: 8 * j + 0.25, jumps: [[0, F * 250]] })),
      { time: 30, rateChanges: [[1, 60]] },
      { time: 32, rateChanges: [[1, -60]] },
    ];
    const reference = odexReference({ n: 3, rhs, events, start: 0, end: 60, rtol: ODEX_RTOL, atol: ODEX_ATOL }, rowsOf(result));
    // The exact path has only round-off (≈ 1e-15 relative), so the comparison measures odex's own
    // error: tolerance units of odex alone.
    const d = compare(
      result,
      reference,
      [
        { id: 'central', index: 1, volume: V1 },
        { id: 'tissue', index: 2, volume: V2 },
      ],
      null,
    );
    if (process.env.REFERENCE_REPORT) console.log(`[reference] odex linear exact path: relative ${d.relative.toExponential(2)}`);
    // Independent integrator: odex (Hairer & Wanner, Solving ODEs I, §II.9, code ODEX).
    expectWithin(d.units, UNITS, 'odex linear multiple-dose, exact path (odex tolerance units)');
  });

  it('one propagation equals mathjs expm(M·t)·x0', () => {
    // Single 250 mg oral dose (no lag) and nothing else: the amounts at t are e^{Mt}·x0, with M the
    // compartment matrix of the first-order rates written out here.
    const single = {
      ...scenario,
      doses: [{ into: 'gut', amount: 250, bioavailability: F }],
      output: { end: 7.3, times: [1.7] },
    };
    const result = run(single);
    const M = [
      [-ka, 0, 0],
      [ka, -(k12 + k10), k21],
      [0, k12, -k21],
    ];
    const x0 = [F * 250, 0, 0];
    for (const t of [1.7, 7.3]) {
      // Matrix exponential: mathjs expm (Padé approximation with scaling and squaring, independent of ours).
      const phi = expm(matrix(M.map((row) => row.map((m) => m * t)))).toArray() as number[][];
      const expected = phi.map((row) => row.reduce((s, p, j) => s + p * x0[j], 0));
      const i = Array.from(result.times).lastIndexOf(t);
      expect(i).toBeGreaterThanOrEqual(0);
      const got = ['gut', 'central', 'tissue'].map((id) => amount(result, id)[i]);
      const norm = Math.max(...expected.map(Math.abs));
      const err = Math.max(...got.map((g, j) => Math.abs(g - expected[j]))) / norm;
      // Both are Padé approximants accurate to a few ulps of ‖e^{Mt}‖·‖x0‖; 1e-12 leaves ample room.
      expectWithin(err, 1e-12, `mathjs expm single propagation at t = ${t}`);
    }
  });
});
