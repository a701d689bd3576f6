/**
 * NCA of a scenario's observations: levels generated exactly from one-compartment closed forms
 * (from memory of Gibaldi & Perrier, Pharmacokinetics, 2nd ed.: after a bolus C = (D/V)·e^(−kt),
 * AUC0–∞ = D/CL (ch. 1); first-order absorption, the Bateman function
 * C = F·D·ka/(V(ka − k))·(e^(−kt) − e^(−ka·t)), AUC0–∞ = F·D/CL (ch. 1); at steady state
 * AUCτ = F·D/CL (ch. 3)), read back through the scenario, its dose line and its observations.
 */
import { describe, expect, it } from 'vitest';
import { chooseInterval, ncaOfModel } from '../../models/levels/nca-scenario.ts';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { runNcaCli } from '../../server/nca-cli.ts';
import { readFileSync } from 'node:fs';

const D = 500; // mg
const F = 0.8;
const ka = 1.1; // 1/h
const CL = 3.6; // L/h
const V = 38; // L
const k = CL / V;
const A = (F * D * ka) / (V * (ka - k));
const bateman = (t: number) => A * (Math.exp(-k * t) - Math.exp(-ka * t));
const bateman2 = (t: number) => A * (k * k * Math.exp(-k * t) - ka * ka * Math.exp(-ka * t));

/**
 * The trapezoid error bound of a grid (Euler–Maclaurin: h³/12·|f''| per segment, doubled for the
 * change of f'' within a segment), with f'' of the log-linear interpolant C·(C''/C − (C'/C)²) on
 * falling segments: an upper bound of |AUC0–last − exact|. A bound that ignores the log rule's
 * smaller error on falling segments would only be looser.
 */
function areaBound(times: number[], c: (t: number) => number, d1: (t: number) => number, d2: (t: number) => number): number {
  let bound = 0;
  for (let i = 1; i < times.length; i++) {
    const h = times[i] - times[i - 1];
    const m = (times[i] + times[i - 1]) / 2;
    const falling = c(times[i]) < c(times[i - 1]);
    const f2 = falling ? c(m) * (d2(m) / c(m) - (d1(m) / c(m)) ** 2) : d2(m);
    bound += (2 * h ** 3 * Math.abs(f2)) / 12;
  }
  return bound;
}
const bateman1 = (t: number) => A * (-k * Math.exp(-k * t) + ka * Math.exp(-ka * t));

function oralScenario(times: number[], doses: Record<string, unknown>, level: (t: number) => number, extra: Record<string, unknown>[] = []) {
  return {
    title: 'invented one-compartment oral drug',
    units: { amount: 'mg', volume: 'L', time: 'h' },
    compartments: [{ id: 'gut' }, { id: 'central', volume: `${V} L` }],
    transfers: [
      { from: 'gut', to: 'central', k: `${ka} 1/h` },
      { from: 'central', cl: `${CL} L/h` },
    ],
    doses: [{ into: 'gut', amount: `${D} mg`, bioavailability: F, ...doses }],
    output: { end: '240 h', step: '1 h' },
    observations: [...times.map((t) => ({ time: t, compartment: 'central', concentration: level(t), subject: 'S1' })), ...extra],
  };
}

function modelOf(scenario: unknown) {
  const m = normaliseScenario(scenario);
  if (!m.ok) throw new Error(JSON.stringify(m.problems));
  return m.value;
}

describe('NCA of a scenario', () => {
  it('one oral dose: extravascular, CL/F against the scenario CL/F within the trapezoid bound', () => {
    const times = [0.25, 0.5, 0.75, 1, 1.5, 2, 3, 4, 5, 6, 8, 10, 12, 16, 24, 36, 48, 72, 96];
    const out = ncaOfModel(modelOf(oralScenario(times, {}, bateman)));
    if (!out.ok) throw new Error(JSON.stringify(out.problems));
    const nca = out.value;
    expect(nca.route).toBe('extravascular');
    expect(nca.profiles).toHaveLength(1);
    const p = nca.profiles[0];
    expect(p).toMatchObject({ subject: 'S1', compartment: 'central', interval: null, doseNumber: 1 });
    expect(p.dose).toEqual({ amount: D, time: 0, route: 'extravascular' });
    const fig = p.result.figures;
    // The exact AUC0–∞ = F·D/CL (Bateman, Gibaldi & Perrier ch. 1). The error: the trapezoid bound over the
    // sampled span (from C(0) = 0, which ncaProfile puts in for an extravascular single dose), plus the
    // tail's, Clast·|1/λz − 1/k| (Clast is exact; the true tail past 96 h is Clast/k to e^(−ka·96) ≈ 1e-46).
    const exact = (F * D) / CL;
    const lz = fig.terminalRate as number;
    const bound = areaBound([0, ...times], bateman, bateman1, bateman2) + (fig.clast as number) * Math.abs(1 / lz - 1 / k);
    expect(Math.abs((fig.aucInf as number) - exact)).toBeLessThanOrEqual(bound);
    expect(bound / exact).toBeLessThan(0.01); // the grid is fine enough for the check to mean something
    // CL/F = D/AUC0–∞: the scenario's CL/F = 3.6/0.8 = 4.5 L/h, to the same relative bound.
    const clOverF = CL / F;
    expect(Math.abs((fig.clearance as number) - clOverF) / clOverF).toBeLessThanOrEqual(bound / (exact - bound));
    // λz: the line chosen by best adjusted R² may start where e^(−ka·t) still bends the curve a little,
    // so it is near k, not exact; 1 % is a loose check (common practice), the area bound above is the real one.
    expect(Math.abs(lz - k) / k).toBeLessThan(0.01);
    expect(nca.summary.subjects).toBe(1);
    expect(nca.summary.figures.clearance?.geometricMean).toBe(fig.clearance);
    expect(nca.units).toEqual({ time: 'h', concentration: 'mg/L', amount: 'mg' });
  });

  it('a bolus into the central compartment: intravascular, CL and V exact (log-down is exact on a mono-exponential)', () => {
    const c = (t: number) => (D / V) * Math.exp(-k * t);
    const times = [0.5, 1, 2, 4, 8, 12, 24, 36, 48];
    const scenario = { ...oralScenario(times, {}, c), compartments: [{ id: 'central', volume: `${V} L` }], transfers: [{ from: 'central', cl: `${CL} L/h` }], doses: [{ into: 'central', amount: `${D} mg` }] };
    const out = ncaOfModel(modelOf(scenario));
    if (!out.ok) throw new Error(JSON.stringify(out.problems));
    const p = out.value.profiles[0];
    expect(p.dose?.route).toBe('intravascular');
    // C0 by back-extrapolation and every log-down segment are exact on e^(−kt): AUC0–∞ = D/CL (Gibaldi & Perrier ch. 1), to rounding.
    expect(p.result.figures.clearance as number).toBeCloseTo(CL, 9);
    expect(p.result.figures.volume as number).toBeCloseTo(V, 7);
    expect(p.result.figures.mrt as number).toBeCloseTo(1 / k, 7);
  });

  it('an infusion into the central compartment: route infusion with its duration', () => {
    const scenario = { ...oralScenario([2, 4, 8, 12, 24], {}, (t) => Math.exp(-t)), compartments: [{ id: 'central', volume: `${V} L` }], transfers: [{ from: 'central', cl: `${CL} L/h` }], doses: [{ into: 'central', amount: `${D} mg`, duration: '30 min' }] };
    const out = ncaOfModel(modelOf(scenario));
    if (!out.ok) throw new Error(JSON.stringify(out.problems));
    expect(out.value.profiles[0].dose).toEqual({ amount: D, time: 0, route: 'infusion', duration: 0.5 });
  });

  it('a repeated oral dose: steady-state figures over the last interval with levels; AUCτ = F·D/CL', () => {
    // Ten doses every 12 h; levels in the tenth interval (108–120 h), by superposition of the Bateman
    // function over the ten doses (Gibaldi & Perrier ch. 3). After 108 h, e^(−k·108) = 3.6e-5 of the
    // way from steady state: the exact steady-state AUCτ = F·D/CL differs from this interval's by at
    // most F·D/CL·e^(−k·108) (the missing doses' share), added to the trapezoid bound; and the
    // pre-dose trough at 107.5 h stands for the level at 108 h, which moves the first trapezoid
    // (0.25 h wide) by at most |ΔC|·0.25/2.
    const tau = 12;
    const n = 10;
    const level = (t: number) => {
      let s = 0;
      for (let j = 0; j < n; j++) if (t > j * tau) s += bateman(t - j * tau);
      return s;
    };
    const level1 = (t: number) => { let s = 0; for (let j = 0; j < n; j++) if (t > j * tau) s += bateman1(t - j * tau); return s; };
    const level2 = (t: number) => { let s = 0; for (let j = 0; j < n; j++) if (t > j * tau) s += bateman2(t - j * tau); return s; };
    const inside = [108.25, 108.5, 108.75, 109, 109.5, 110, 111, 112, 113, 114, 116, 118, 120];
    // A trough before the ninth dose (not a quarter of τ before the tenth): left out by the rule.
    const times = [95.5, 107.5, ...inside];
    const out = ncaOfModel(modelOf(oralScenario(times, { every: '12 h', count: n }, level)));
    if (!out.ok) throw new Error(JSON.stringify(out.problems));
    const p = out.value.profiles[0];
    expect(p.doseNumber).toBe(10);
    expect(p.interval).toBe(tau);
    expect(p.dose?.time).toBe(108);
    expect(p.leftOut.map((l) => l.path)).toEqual(['observations[0]']);
    expect(p.paths[0]).toBe('observations[1]'); // 107.5 h: the pre-dose trough of the tenth dose
    const exact = (F * D) / CL;
    const bound = areaBound([108, ...inside], level, level1, level2) + exact * Math.exp(-k * 108) + (Math.abs(level(107.5) - level(108)) * 0.25) / 2;
    expect(Math.abs((p.result.figures.aucTau as number) - exact)).toBeLessThanOrEqual(bound);
    expect(bound / exact).toBeLessThan(0.02);
    expect(p.result.figures.cavg as number).toBeCloseTo((p.result.figures.aucTau as number) / tau, 12);
    expect(p.result.flags.some((f) => /taken to be at steady state/.test(f.message))).toBe(true);
  });

  it('excludes a level below the limit and names it by its path; groups by subject', () => {
    const times = [1, 2, 4, 8, 12, 24];
    const scenario = oralScenario(times, {}, bateman, [
      { time: 72, compartment: 'central', belowLimit: true, limit: '0.05 mg/L', subject: 'S1' },
      ...times.map((t) => ({ time: t, compartment: 'central', concentration: 1.2 * bateman(t), subject: 'S2' })),
    ]);
    const out = ncaOfModel(modelOf(scenario));
    if (!out.ok) throw new Error(JSON.stringify(out.problems));
    expect(out.value.profiles.map((p) => p.subject)).toEqual(['S1', 'S2']);
    const s1 = out.value.profiles[0];
    expect(s1.result.excluded).toHaveLength(1);
    expect(s1.result.flags).toContainEqual({ figure: 'levels', message: 'observations[6] (time 72 h) is below the limit: excluded from every figure' });
    // Two subjects, the second's levels 1.2× the first's: the geometric mean of Cmax is √1.2 times the first's (exact).
    const cmax = out.value.summary.figures.cmax?.geometricMean as number;
    expect(cmax / (s1.result.figures.cmax as number)).toBeCloseTo(Math.sqrt(1.2), 12);
  });

  it('refuses two levels at one time in one profile, naming the path', () => {
    const scenario = oralScenario([1, 2, 2, 4], {}, bateman);
    const out = ncaOfModel(modelOf(scenario));
    expect(out.ok).toBe(false);
    if (!out.ok) expect(out.problems[0].path).toBe('observations[2].time');
  });

  it('chooses the last interval holding two levels (pre-dose trough counted), else the last holding one', () => {
    // Doses at 0, 12, 24, 36; τ 12. Levels at 23.5 (trough before the third), 26 (after it), 47 (after the fourth, alone).
    expect(chooseInterval([0, 12, 24, 36], 12, [23.5, 26, 47], false)).toBe(2);
    expect(chooseInterval([0, 12, 24, 36], 12, [47], false)).toBe(3);
    expect(chooseInterval([0, 12, 24, 36], 12, [60], false)).toBeNull();
  });

  it('nca SCENARIO.json on the command line: the same profiles as the core, in JSON; dose options refused', () => {
    const out = runNcaCli(['samples/orvanix-levels.json', '--format', 'json'], { folder: process.cwd() });
    expect(out.code).toBe(0);
    const direct = ncaOfModel(modelOf(JSON.parse(readFileSync('samples/orvanix-levels.json', 'utf8'))));
    if (!direct.ok) throw new Error('sample must give an NCA');
    expect(JSON.parse(out.stdout).profiles).toEqual(JSON.parse(JSON.stringify(direct.value.profiles)));
    const text = runNcaCli(['samples/orvanix-levels.json'], { folder: process.cwd() });
    // The sample's clock starts at 2026-03-04T08:00 at +01:00, so 24 h is the next morning at 08:00 there (as the simulate text shows clock times).
    expect(text.stdout).toMatch(/subject P-017 \/ central\n  after dose 3 at 24 h \(2026-03-05 08:00 \(\+01:00\)\), steady state over τ = 12 h/);
    expect(text.stdout).toMatch(/not dosing advice/);
    const refused = runNcaCli(['samples/orvanix-levels.json', '--dose', '5'], { folder: process.cwd() });
    expect(refused.code).toBe(2);
    expect(refused.stderr).toMatch(/--dose is for a CSV of levels/);
  });
});
