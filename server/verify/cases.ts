/**
 * The reference cases of `tidemark verify`: each runs a scenario through the engine's public
 * entry (simulate) and lists the values it computed beside values obtained independently of
 * the engine — a closed form from a published source, evaluated here from the scenario's own
 * parameters, or an independent library (mathjs). The runner (run.ts) turns the lists into
 * errors and verdicts. The same formulas and tolerances are held by tests/reference/*.test.ts.
 *
 * Sources (chapter numbers from memory):
 *   Rowland & Tozer, Clinical Pharmacokinetics and Pharmacodynamics, 4th ed.
 *   Gibaldi & Perrier, Pharmacokinetics, 2nd ed.
 *   J. G. Wagner, Fundamentals of Clinical Pharmacokinetics (1975): integrated Michaelis–Menten equation.
 *   mathjs (an independent library): expm, its own Padé matrix exponential.
 *
 * Every compound is fictional; parameters are in mg, L and h.
 */
import { expm, matrix, multiply, type Matrix } from 'mathjs';
import { simulate, type SimulationResult } from '../../models/simulate.ts';

/** One value the engine computed beside the value expected for it. */
export interface Point {
  /** What the value is, e.g. "C(13.5 h)". */
  quantity: string;
  expected: number;
  got: number;
  /** The error is |got − expected|/scale; by default scale = |expected| (relative error). */
  scale?: number;
}

export type CaseOutcome = { ok: true; points: Point[] } | { ok: false; reason: string };

export interface ReferenceCase {
  id: string;
  /** What is checked, in a few words. */
  name: string;
  /** Where the expected values come from. */
  source: string;
  /** Largest error accepted (relative, or relative to each point's scale). */
  tolerance: number;
  run: () => CaseOutcome;
}

/**
 * Linear scenarios take the exact path: e^{Mt}x0 by a scaled Padé matrix exponential, a few
 * units of round-off per propagation (Higham, SIAM J. Matrix Anal. Appl. 26 (2005) 1179);
 * 1e-12 relative leaves three decades for chained propagations and the AUC state.
 */
const EXACT = 1e-12;

/**
 * The adaptive path at rtol 1e-10: the controller bounds the local error per step by rtol and
 * the project's integrator tests hold the global and dense-output error to 10·rtol
 * (tests/numerics/adaptive.test.ts); 1e-8 leaves a further factor 10 for long spans.
 */
const ADAPTIVE_RTOL = 1e-10;
const ADAPTIVE = 1e-8;

type Rows = { index: number; t: number; side: 'before' | 'after' | 'only' }[];

/** The result's rows; a time listed twice is a bolus: the value just before, then just after. */
function rowsOf(result: SimulationResult): Rows {
  const t = result.times;
  const rows: Rows = [];
  for (let i = 0; i < t.length; i++) {
    const side = i + 1 < t.length && t[i + 1] === t[i] ? 'before' : i > 0 && t[i - 1] === t[i] ? 'after' : 'only';
    rows.push({ index: i, t: t[i], side });
  }
  return rows;
}

function series(result: SimulationResult, id: string, kind: 'amount' | 'concentration'): Float64Array | null {
  const s = result.compartments.find((c) => c.id === id);
  return (kind === 'amount' ? s?.amount : s?.concentration) ?? null;
}

/** Runs a scenario; a rejection is a failed case with the engine's own words. */
function computed(scenario: unknown, read: (r: SimulationResult) => Point[] | string): CaseOutcome {
  const outcome = simulate(scenario);
  if (!outcome.ok) return { ok: false, reason: `scenario rejected: ${outcome.problems.map((p) => `${p.path}: ${p.message}`).join('; ')}` };
  const points = read(outcome.value);
  return typeof points === 'string' ? { ok: false, reason: points } : { ok: true, points };
}

/** A time for a label: 47.8333 rather than 47.83333333333333. */
const hours = (t: number) => String(Number(t.toPrecision(6)));

/** One point per reported row of a concentration (or amount) curve against its closed form. */
function curve(result: SimulationResult, id: string, reference: (t: number, side: string) => number | null, kind: 'amount' | 'concentration' = 'concentration'): Point[] | string {
  const values = series(result, id, kind);
  if (!values) return `no ${kind} series for '${id}'`;
  const points: Point[] = [];
  for (const row of rowsOf(result)) {
    const expected = reference(row.t, row.side);
    if (expected === null) continue;
    points.push({ quantity: `${kind === 'amount' ? 'A' : 'C'}(${hours(row.t)} h${row.side === 'before' ? ', before dose' : ''})`, expected, got: values[row.index] });
  }
  return points;
}

function oneValue(quantity: string, expected: number, got: number | null | undefined): Point[] | string {
  return typeof got === 'number' ? [{ quantity, expected, got }] : `the result has no ${quantity}`;
}

/** 1 − e^{−x} without losing digits for small x. */
const oneMinusExp = (x: number) => -Math.expm1(-x);

// --- one compartment, linear ------------------------------------------------------------

const bolus = { D: 500, V: 20, CL: 4 }; // k = 0.2 1/h
const bolusScenario = (end: number, step: number) => ({
  title: 'Verification: IV bolus, one compartment',
  compartments: [{ id: 'central', volume: bolus.V }],
  transfers: [{ from: 'central', cl: bolus.CL }],
  doses: [{ into: 'central', amount: bolus.D }],
  output: { end, step },
});

const oral = { D: 300, F: 0.7, ka: 0.9, V: 35, CL: 5, lag: 0.75 };

const repeated = { D: 250, V: 20, CL: 4, tau: 8, count: 30 };
const repeatedScenario = {
  title: 'Verification: IV bolus every 8 h',
  compartments: [{ id: 'central', volume: repeated.V }],
  transfers: [{ from: 'central', cl: repeated.CL }],
  doses: [{ into: 'central', amount: repeated.D, every: repeated.tau, count: repeated.count }],
  output: { end: repeated.tau * repeated.count, step: 1 },
};

function steadyState(result: SimulationResult) {
  const ss = result.metrics.steadyState;
  if (!ss || !ss.reached) return `no steady state reported${ss ? `: ${ss.message}` : ''}`;
  const c = ss.compartments.find((x) => x.compartment === 'central');
  return c ?? 'no steady-state figures for central';
}

const infusion = { R: 30, V: 50, CL: 6 };

// --- two compartments ---------------------------------------------------------------------

const two = { D: 600, V1: 15, k10: 0.3, k12: 0.8, k21: 0.25 };
const twoScenario = (end: number, step: number) => ({
  title: 'Verification: IV bolus, two compartments',
  compartments: [{ id: 'central', volume: two.V1 }, { id: 'tissue' }],
  transfers: [
    { from: 'central', to: 'tissue', k: two.k12 },
    { from: 'tissue', to: 'central', k: two.k21 },
    { from: 'central', k: two.k10 },
  ],
  doses: [{ into: 'central', amount: two.D }],
  output: { end, step },
});

// --- saturable elimination -----------------------------------------------------------------

const saturable = { D: 800, V: 40, Vmax: 60, Km: 4 };

/**
 * C(t) after an IV bolus under Michaelis–Menten elimination, from the integrated equation
 * t = (C0 − C)/(Vmax/V) + (Km/(Vmax/V))·ln(C0/C) (Wagner; Rowland & Tozer ch. 20; Gibaldi &
 * Perrier ch. 7), solved for C by bisection: the right side falls strictly with C, so the
 * bracket (0, C0] halves until it stops shrinking (the last bit).
 */
export function integratedMichaelisMenten(t: number, c0: number, vmaxOverV: number, km: number): number {
  if (t <= 0) return c0;
  const timeOf = (c: number) => (c0 - c) / vmaxOverV + (km / vmaxOverV) * Math.log(c0 / c);
  let lo = 0; // timeOf(lo) = +∞ > t
  let hi = c0; // timeOf(hi) = 0 ≤ t
  for (let i = 0; i < 2000; i++) {
    const mid = lo > 0 ? Math.sqrt(lo * hi) : hi / 2; // geometric steps once bracketed away from 0: C spans decades
    if (!(mid > lo && mid < hi)) break;
    if (timeOf(mid) > t) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

export const referenceCases: ReferenceCase[] = [
  {
    id: 'iv-bolus-curve',
    name: 'One compartment, IV bolus: C(t) = (D/V)·e^{−kt}',
    source: 'Rowland & Tozer ch. 3',
    tolerance: EXACT, // exact path: ~1e-12 relative (see EXACT)
    run: () =>
      computed(bolusScenario(24, 0.5), (r) => {
        const k = bolus.CL / bolus.V;
        // The first row holds the empty state just before the dose at t = 0: not part of the formula.
        return curve(r, 'central', (t, side) => (t === 0 && side === 'before' ? null : (bolus.D / bolus.V) * Math.exp(-k * t)));
      }),
  },
  {
    id: 'iv-bolus-auc',
    name: 'One compartment, IV bolus: AUC = D/CL',
    source: 'Rowland & Tozer ch. 3',
    tolerance: EXACT, // exact path: ~1e-12 relative; the tail after 400 h, e^{−80}, is below rounding
    run: () =>
      computed(bolusScenario(400, 10), (r) =>
        oneValue('AUC(0–400 h)', bolus.D / bolus.CL, r.metrics.compartments.find((c) => c.compartment === 'central')?.overall.auc),
      ),
  },
  {
    id: 'oral-bateman',
    name: 'One compartment, oral with lag: Bateman function',
    source: 'Gibaldi & Perrier ch. 1',
    tolerance: EXACT, // exact path: ~1e-12 relative
    run: () =>
      computed(
        {
          title: 'Verification: oral dose with absorption lag',
          compartments: [{ id: 'gut' }, { id: 'central', volume: oral.V }],
          transfers: [
            { from: 'gut', to: 'central', k: oral.ka },
            { from: 'central', cl: oral.CL },
          ],
          doses: [{ into: 'gut', amount: oral.D, bioavailability: oral.F, lag: '45 min' }],
          output: { end: 48, step: 0.25 },
        },
        (r) => {
          const { D, F, ka, V, CL, lag } = oral;
          const k = CL / V;
          // C = F·D·ka/(V(ka − k))·(e^{−k s} − e^{−ka s}), s = t − tlag > 0; expm1 keeps the digits of the difference.
          return curve(r, 'central', (t) => {
            const s = t - lag;
            return s <= 0 ? 0 : ((F * D * ka) / (V * (ka - k))) * (Math.expm1(-k * s) - Math.expm1(-ka * s));
          });
        },
      ),
  },
  {
    id: 'repeated-bolus-peak',
    name: 'Repeated IV bolus: steady-state peak (D/V)/(1 − e^{−kτ})',
    source: 'Gibaldi & Perrier ch. 3',
    tolerance: EXACT, // exact path: ~1e-12 relative
    run: () =>
      computed(repeatedScenario, (r) => {
        const c = steadyState(r);
        if (typeof c === 'string') return c;
        const k = repeated.CL / repeated.V;
        return oneValue('Cmax,ss', repeated.D / repeated.V / oneMinusExp(k * repeated.tau), c.cmax);
      }),
  },
  {
    id: 'repeated-bolus-trough',
    name: 'Repeated IV bolus: steady-state trough (D/V)·e^{−kτ}/(1 − e^{−kτ})',
    source: 'Gibaldi & Perrier ch. 3',
    tolerance: EXACT, // exact path: ~1e-12 relative
    run: () =>
      computed(repeatedScenario, (r) => {
        const c = steadyState(r);
        if (typeof c === 'string') return c;
        const k = repeated.CL / repeated.V;
        return oneValue('trough,ss', ((repeated.D / repeated.V) * Math.exp(-k * repeated.tau)) / oneMinusExp(k * repeated.tau), c.trough);
      }),
  },
  {
    id: 'infusion-css',
    name: 'Constant-rate infusion: Css = R/CL',
    source: 'Rowland & Tozer ch. 10',
    tolerance: EXACT, // exact path: ~1e-12 relative; after 400 h the gap e^{−48} is below rounding
    run: () =>
      computed(
        {
          title: 'Verification: long constant-rate infusion',
          compartments: [{ id: 'central', volume: infusion.V }],
          transfers: [{ from: 'central', cl: infusion.CL }],
          doses: [{ into: 'central', amount: infusion.R * 500, duration: 500 }],
          output: { end: 400, step: 5 },
        },
        (r) => {
          const c = series(r, 'central', 'concentration');
          return c ? oneValue('C(400 h)', infusion.R / infusion.CL, c[c.length - 1]) : 'no concentration series for central';
        },
      ),
  },
  {
    id: 'time-to-90',
    name: 'Repeated IV bolus: time to 90% of steady state ln10/k',
    source: 'Rowland & Tozer ch. 10',
    tolerance: EXACT, // exact path: ~1e-12 relative (the engine solves one cycle's doses exactly)
    run: () =>
      computed(
        {
          title: 'Verification: approach to steady state',
          compartments: [{ id: 'central', volume: infusion.V }],
          transfers: [{ from: 'central', cl: infusion.CL }],
          doses: [{ into: 'central', amount: 100, every: 6, count: 30 }],
          output: { end: 180, step: 1 },
        },
        (r) => {
          const c = steadyState(r);
          if (typeof c === 'string') return c;
          return oneValue('time to 90% (h)', Math.LN10 / (infusion.CL / infusion.V), c.timeTo90);
        },
      ),
  },
  {
    id: 'two-compartment-biexponential',
    name: 'Two compartments, IV bolus: biexponential from the micro-constants',
    source: 'Gibaldi & Perrier ch. 2',
    tolerance: EXACT, // exact path: ~1e-12 relative
    run: () =>
      computed(twoScenario(48, 1 / 6), (r) => {
        const { D, V1, k10, k12, k21 } = two;
        // α, β = ½[(k12 + k21 + k10) ± √((k12 + k21 + k10)² − 4·k21·k10)];
        // C(t) = (D/V1)[((α − k21)/(α − β))e^{−αt} + ((k21 − β)/(α − β))e^{−βt}].
        const sum = k12 + k21 + k10;
        const root = Math.sqrt(sum * sum - 4 * k21 * k10);
        const alpha = 0.5 * (sum + root);
        const beta = 0.5 * (sum - root);
        return curve(r, 'central', (t, side) =>
          t === 0 && side === 'before'
            ? null
            : (D / V1) * (((alpha - k21) / (alpha - beta)) * Math.exp(-alpha * t) + ((k21 - beta) / (alpha - beta)) * Math.exp(-beta * t)),
        );
      }),
  },
  {
    id: 'two-compartment-mathjs-expm',
    name: 'Two compartments, IV bolus: amounts against e^{Mt}·x0',
    source: 'mathjs expm (independent library)',
    // Normwise: both exponentials are backward stable, forward error ≈ c·‖Mt‖₁·u with ‖Mt‖₁ ≤ 1.9·24 ≈ 46
    // and c ≤ 1024 (tests/linalg/expm.test.ts): ≤ 5e-12 for each of the two computations.
    tolerance: 1e-11,
    run: () =>
      computed(twoScenario(24, 1), (r) => {
        const { D, k10, k12, k21 } = two;
        // dx/dt = M·x for x = (central, tissue) amounts.
        const M = [
          [-(k10 + k12), k21],
          [k12, -k21],
        ];
        const central = series(r, 'central', 'amount');
        const tissue = series(r, 'tissue', 'amount');
        if (!central || !tissue) return 'no amount series';
        const points: Point[] = [];
        for (const row of rowsOf(r)) {
          if (row.t === 0) continue; // the dose itself
          const x = (multiply(expm(matrix(M.map((line) => line.map((m) => m * row.t)))), matrix([D, 0])) as Matrix).toArray() as number[];
          const scale = Math.max(Math.abs(x[0]), Math.abs(x[1]));
          points.push({ quantity: `A_central(${hours(row.t)} h)`, expected: x[0], got: central[row.index], scale });
          points.push({ quantity: `A_tissue(${hours(row.t)} h)`, expected: x[1], got: tissue[row.index], scale });
        }
        return points;
      }),
  },
  {
    id: 'michaelis-menten-bolus',
    name: 'Michaelis–Menten, IV bolus: integrated equation',
    source: 'Wagner 1975; Rowland & Tozer ch. 20',
    tolerance: ADAPTIVE, // adaptive at rtol 1e-10: 1e-8 (see ADAPTIVE)
    run: () =>
      computed(
        {
          title: 'Verification: IV bolus, saturable elimination',
          compartments: [{ id: 'central', volume: saturable.V }],
          transfers: [{ from: 'central', vmax: saturable.Vmax, km: saturable.Km }],
          doses: [{ into: 'central', amount: saturable.D }],
          // C falls from 20 to about 1 mg/L (5·Km to Km/4): the saturated and the linear regime.
          output: { end: 20, step: 0.25 },
          // atol far below rtol·C everywhere here, so the relative tolerance governs.
          solver: { rtol: ADAPTIVE_RTOL, atol: 1e-14 },
        },
        (r) => {
          const { D, V, Vmax, Km } = saturable;
          return curve(r, 'central', (t, side) => (t === 0 && side === 'before' ? null : integratedMichaelisMenten(t, D / V, Vmax / V, Km)));
        },
      ),
  },
  {
    id: 'michaelis-menten-infusion-css',
    name: 'Michaelis–Menten, constant infusion: Css = Km·R/(Vmax − R)',
    source: 'Rowland & Tozer ch. 20',
    tolerance: ADAPTIVE, // adaptive at rtol 1e-10: 1e-8; after 600 h the transient is e^{−56}
    run: () =>
      computed(
        {
          title: 'Verification: infusion, saturable elimination',
          compartments: [{ id: 'central', volume: saturable.V }],
          transfers: [{ from: 'central', vmax: saturable.Vmax, km: saturable.Km }],
          doses: [{ into: 'central', amount: 30 * 1000, rate: 30 }],
          output: { end: 600, step: 10 },
          solver: { rtol: ADAPTIVE_RTOL },
        },
        (r) => {
          const c = series(r, 'central', 'concentration');
          const R = 30;
          return c ? oneValue('C(600 h)', (saturable.Km * R) / (saturable.Vmax - R), c[c.length - 1]) : 'no concentration series for central';
        },
      ),
  },
];
