/**
 * Non-compartmental analysis against closed forms (mono- and bi-exponential, Bateman, steady
 * state by superposition), a hand-worked data set, an independent computation (Simpson
 * quadrature of the interpolant, the terminal line by mathjs lusolve), and summaries worked by hand.
 *
 * Closed forms from memory of Gibaldi & Perrier, Pharmacokinetics (2nd ed.): one compartment
 * after a bolus C = C0·e^(−kt), AUC0–∞ = C0/k, CL = dose/AUC0–∞, V = CL/k, MRT = 1/k (ch. 1, 11);
 * two compartments C = A·e^(−αt) + B·e^(−βt), AUC0–∞ = A/α + B/β (ch. 2); first-order absorption
 * (the Bateman function) AUC0–∞ = F·dose/(V·k) (ch. 1); at steady state AUCτ = F·dose/CL and
 * Cavg = AUCτ/τ (ch. 3).
 */
import { lusolve, mean as mMean, median as mMedian, std as mStd } from 'mathjs';
import { describe, expect, it } from 'vitest';
import { ncaProfile, segmentArea, type NcaRule } from '../../models/levels/nca.ts';
import { summariseNca, summariseValues } from '../../models/levels/nca-summary.ts';

const rel = (a: number | null, b: number) => Math.abs((a ?? NaN) - b) / Math.abs(b);
const grid = (from: number, to: number, step: number) => Array.from({ length: Math.round((to - from) / step) + 1 }, (_, i) => from + i * step);

/**
 * The leading trapezoid error of a grid (Euler–Maclaurin: −h³/12·f'' per segment), summed as
 * absolute values: f'' = C'' on linear segments; on log-linear ones the interpolant is exp of
 * the chord of g = ln C, so the error is C·g''·h³/12 with g'' = C''/C − (C'/C)². Evaluated at
 * each segment's midpoint; the factor 2 covers the change of f'' within a segment (under 10 %
 * here) and the higher-order terms.
 */
function trapezoidBound(t: number[], c: (x: number) => number, d1: (x: number) => number, d2: (x: number) => number, rule: NcaRule): number {
  let bound = 0;
  for (let i = 1; i < t.length; i++) {
    const h = t[i] - t[i - 1];
    const m = (t[i] + t[i - 1]) / 2;
    const log = rule === 'linear-up-log-down' && c(t[i]) < c(t[i - 1]) && c(t[i]) > 0;
    const f2 = log ? c(m) * (d2(m) / c(m) - (d1(m) / c(m)) ** 2) : d2(m);
    bound += (h ** 3 / 12) * Math.abs(f2);
  }
  return 2 * bound;
}

/** How far a least-squares slope can move when every ln C is off by at most δ: δ·Σ|x − x̄|/Sxx. */
function slopeShiftBound(x: number[], delta: number): number {
  const mx = x.reduce((a, b) => a + b, 0) / x.length;
  return (delta * x.reduce((a, b) => a + Math.abs(b - mx), 0)) / x.reduce((a, b) => a + (b - mx) ** 2, 0);
}

describe('an exact mono-exponential after a bolus (Gibaldi & Perrier ch. 1 and 11, from memory)', () => {
  const C0 = 12;
  const k = 0.2;
  const dose = 600;
  const times = [0.5, 1, 2, 4, 6, 8, 12, 16, 24];
  const conc = times.map((t) => C0 * Math.exp(-k * t));
  const r = ncaProfile({ times, concentrations: conc, dose: { amount: dose, time: 0, route: 'intravascular' } });

  it('each log-down trapezoid is the exact integral between samples, to 1e-12 relative', () => {
    for (let i = 1; i < times.length; i++) {
      const exact = (C0 / k) * (Math.exp(-k * times[i - 1]) - Math.exp(-k * times[i]));
      expect(rel(segmentArea(times[i - 1], conc[i - 1], times[i], conc[i], 'linear-up-log-down'), exact)).toBeLessThan(1e-12);
    }
    expect(rel(r.figures.aucLast, (C0 / k) * (1 - Math.exp(-k * 24)))).toBeLessThan(1e-12);
  });

  it('C0 back-extrapolated (flagged), λz = k, AUC0–∞ = C0/k, CL = dose/AUC0–∞, Vz = CL/k, MRT = 1/k, all to 1e-12', () => {
    const f = r.figures;
    expect(rel(f.c0, C0)).toBeLessThan(1e-12);
    expect(r.flags.some((x) => x.figure === 'c0' && /back-extrapolated/.test(x.message))).toBe(true);
    expect(rel(f.terminalRate, k)).toBeLessThan(1e-12);
    expect(rel(f.halfLife, Math.LN2 / k)).toBeLessThan(1e-12);
    expect(rel(f.aucInf, C0 / k)).toBeLessThan(1e-12);
    expect(rel(f.aumcInf, C0 / k ** 2)).toBeLessThan(1e-12);
    expect(rel(f.clearance, dose / (C0 / k))).toBeLessThan(1e-12);
    expect(rel(f.volume, dose / (C0 / k) / k)).toBeLessThan(1e-12);
    expect(rel(f.mrt, 1 / k)).toBeLessThan(1e-12);
    expect(f.cmax).toBe(conc[0]);
    expect(f.tmax).toBe(0.5);
    // A bolus's first level lies on the falling line, so every level takes part.
    expect(r.terminal?.indices).toEqual(times.map((_, i) => i));
  });
});

describe('densely sampled curves: AUC0–∞ within the derived trapezoid error, λz towards the slower exponent', () => {
  it('bi-exponential after a bolus: A/α + B/β (Gibaldi & Perrier ch. 2, from memory)', () => {
    const [A, alpha, B, beta] = [8, 1.2, 2, 0.1];
    const h = 0.05;
    const times = grid(h, 72, h);
    const c = (t: number) => A * Math.exp(-alpha * t) + B * Math.exp(-beta * t);
    const d1 = (t: number) => -alpha * A * Math.exp(-alpha * t) - beta * B * Math.exp(-beta * t);
    const d2 = (t: number) => alpha ** 2 * A * Math.exp(-alpha * t) + beta ** 2 * B * Math.exp(-beta * t);
    const r = ncaProfile({ times, concentrations: times.map(c), dose: { amount: 100, time: 0, route: 'intravascular' } });
    const exact = A / alpha + B / beta;
    // ln C of a sum of two exponentials has g'' = w(1 − w)(α − β)² ≤ (α − β)²/4 (w the share of the fast term),
    // so C0 from the chord of the first two levels is low by at most e = (α − β)²/4·t1(t1 + h)/2 in ln C,
    // which moves the first segment's area by at most t1·C0·e.
    const e = ((alpha - beta) ** 2 / 4) * (h * (2 * h)) / 2;
    const startError = h * c(0) * Math.expm1(e);
    // λz: ln C = ln B − βt + δ(t), δ = ln(1 + (A/B)e^(−(α−β)t)). Least squares is linear in the data, so the
    // fitted slope is exactly −β + Σ(t − t̄)δ/Sxx over the chosen points: checked to 1e-9. With 1e-4 ties going to
    // more points, the dense line starts early (at 2.45 h the fast term is still 27 % of the slow one), so λz sits
    // 0.3 % above β: the price of the tie rule on 1,440 levels.
    const line = r.terminal?.times ?? [];
    const mt = line.reduce((a, b) => a + b, 0) / line.length;
    const delta = (t: number) => Math.log1p((A / B) * Math.exp(-(alpha - beta) * t));
    const sxx = line.reduce((a, t) => a + (t - mt) ** 2, 0);
    const predicted = beta - line.reduce((a, t) => a + (t - mt) * delta(t), 0) / sxx;
    expect(rel(r.figures.terminalRate, predicted)).toBeLessThan(1e-9);
    expect(rel(r.figures.terminalRate, beta)).toBeLessThan(5e-3);
    const clast = c(72);
    // The tail Clast/λz against the true area after 72 h.
    const tailError = Math.abs(clast / (r.figures.terminalRate ?? NaN) - ((A / alpha) * Math.exp(-alpha * 72) + (B / beta) * Math.exp(-beta * 72)));
    const tolerance = trapezoidBound([0, ...times], c, d1, d2, 'linear-up-log-down') + startError + tailError;
    expect(tolerance / exact).toBeLessThan(1e-3); // the bound is tight enough to mean something
    expect(Math.abs((r.figures.aucInf ?? NaN) - exact)).toBeLessThanOrEqual(tolerance);
  });

  it('Bateman curve after an oral dose: F·dose/(V·k), by both rules (Gibaldi & Perrier ch. 1, from memory)', () => {
    const [F, dose, V, ka, k] = [0.8, 500, 40, 1.4, 0.12];
    const K = (F * dose * ka) / (V * (ka - k));
    const c = (t: number) => K * (Math.exp(-k * t) - Math.exp(-ka * t));
    const d1 = (t: number) => K * (-k * Math.exp(-k * t) + ka * Math.exp(-ka * t));
    const d2 = (t: number) => K * (k * k * Math.exp(-k * t) - ka * ka * Math.exp(-ka * t));
    const h = 0.05;
    const times = grid(0, 96, h);
    const exact = (F * dose) / (V * k);
    for (const rule of ['linear-up-log-down', 'linear'] as const) {
      const r = ncaProfile({ times, concentrations: times.map(c), dose: { amount: dose, time: 0, route: 'extravascular' }, rule });
      // ln C = ln K − kt + ln(1 − e^(−(ka−k)t)): the absorption term lowers ln C by at most δ at the line's first point.
      const line = r.terminal?.times ?? [];
      const delta = -Math.log1p(-Math.exp(-(ka - k) * line[0]));
      const shift = slopeShiftBound(line, delta);
      expect(Math.abs((r.figures.terminalRate ?? NaN) - k)).toBeLessThanOrEqual(shift);
      const tailError = (c(96) / k) * (shift / (k - shift));
      const tolerance = trapezoidBound(times, c, d1, d2, rule) + tailError;
      expect(tolerance / exact).toBeLessThan(1e-3);
      expect(Math.abs((r.figures.aucInf ?? NaN) - exact)).toBeLessThanOrEqual(tolerance);
      // CL/F = dose/AUC0–∞ = V·k/F.
      expect(rel(r.figures.clearance, (V * k) / F)).toBeLessThan((2 * tolerance) / exact);
    }
  });
});

describe('a worked example of eight levels after an oral dose of 100 (hand computation, invented data)', () => {
  const times = [0, 0.5, 1, 2, 4, 6, 8, 12];
  const conc = [0, 2.0, 3.2, 4.0, 3.0, 2.0, 1.4, 0.7];
  const dose = { amount: 100, time: 0, route: 'extravascular' as const };

  it('linear trapezoids: AUC0–12 = 25 exactly', () => {
    // 0.5·(0 + 2)/2 = 0.5; 0.5·(2 + 3.2)/2 = 1.3; 1·(3.2 + 4)/2 = 3.6; 2·(4 + 3)/2 = 7; 2·(3 + 2)/2 = 5;
    // 2·(2 + 1.4)/2 = 3.4; 4·(1.4 + 0.7)/2 = 4.2. Sum: 25.0.
    // AUMC by trapezoids of t·C: 0.5·(0 + 1)/2 + 0.5·(1 + 3.2)/2 + (3.2 + 8)/2 + 2·(8 + 12)/2 + 2·(12 + 12)/2
    //   + 2·(12 + 11.2)/2 + 4·(11.2 + 8.4)/2 = 0.25 + 1.05 + 5.6 + 20 + 24 + 23.2 + 39.2 = 113.3.
    const r = ncaProfile({ times, concentrations: conc, dose, rule: 'linear' });
    expect(r.figures.aucLast).toBeCloseTo(25, 12);
    expect(r.figures.aumcLast).toBeCloseTo(113.3, 12);
    expect(r.figures.cmax).toBe(4);
    expect(r.figures.tmax).toBe(2);
  });

  it('linear up, log-linear down: AUC0–12 = 24.68868, and λz from the last 3 levels', () => {
    // Rising: 0.5 + 1.3 + 3.6 = 5.4 (linear). Falling, Δt(c1 − c2)/ln(c1/c2):
    // 2·1/ln(4/3) = 2/0.2876821 = 6.952119; 2·1/ln 1.5 = 2/0.4054651 = 4.932607;
    // 2·0.6/ln(2/1.4) = 1.2/0.3566749 = 3.364408; 4·0.7/ln 2 = 2.8/0.6931472 = 4.039546.
    // Sum: 5.4 + 19.288680 = 24.688680.
    // λz over t = 6, 8, 12 (ln C = 0.693147, 0.336472, −0.356675): x̄ = 8.6667, ȳ = 0.224315,
    // Sxx = 7.1111 + 0.4444 + 11.1111 = 18.6667, Sxy = −1.250219 − 0.074771 − 1.936633 = −3.261623,
    // slope −0.174730; adjusted R² 0.999898 against 0.998142 for the last 4, so 3 points.
    // AUC0–∞ = 24.688680 + 0.7/0.174730 = 24.688680 + 4.006185 = 28.694864.
    const r = ncaProfile({ times, concentrations: conc, dose });
    expect(rel(r.figures.aucLast, 24.68868)).toBeLessThan(1e-6);
    expect(r.terminal?.times).toEqual([6, 8, 12]);
    expect(rel(r.figures.terminalRate, 0.17473)).toBeLessThan(1e-5);
    expect(rel(r.figures.terminalAdjustedR2, 0.999898)).toBeLessThan(1e-6);
    expect(rel(r.figures.aucInf, 28.694864)).toBeLessThan(1e-6);
    expect(rel(r.figures.clearance, 100 / 28.694864)).toBeLessThan(1e-6);
  });

  it('agrees with an independent computation: Simpson quadrature of the interpolant, the line by mathjs lusolve', () => {
    for (const rule of ['linear-up-log-down', 'linear'] as const) {
      const r = ncaProfile({ times, concentrations: conc, dose, rule });
      // The interpolant written as c1·(c2/c1)^s (a power, not the exponential of a log ratio) where log-down applies.
      const logDown = (i: number) => rule === 'linear-up-log-down' && conc[i] < conc[i - 1] && conc[i] > 0;
      const at = (i: number, x: number) => {
        const s = (x - times[i - 1]) / (times[i] - times[i - 1]);
        return logDown(i) ? conc[i - 1] * Math.pow(conc[i] / conc[i - 1], s) : conc[i - 1] + s * (conc[i] - conc[i - 1]);
      };
      // Composite Simpson, 400 panels a segment: error h⁴/180·f⁗ per unit length, under 1e-12 relative here.
      const simpson = (f: (x: number) => number, a: number, b: number) => {
        const n = 400;
        const w = (b - a) / n;
        let s = f(a) + f(b);
        for (let j = 1; j < n; j++) s += (j % 2 === 1 ? 4 : 2) * f(a + j * w);
        return (s * w) / 3;
      };
      let auc = 0;
      let aumc = 0;
      for (let i = 1; i < times.length; i++) {
        auc += simpson((x) => at(i, x), times[i - 1], times[i]);
        // t·C integrated where the segment is log-linear; the linear rule's t·C trapezoid otherwise (common practice).
        aumc += logDown(i) ? simpson((x) => x * at(i, x), times[i - 1], times[i]) : ((times[i] - times[i - 1]) * (times[i - 1] * conc[i - 1] + times[i] * conc[i])) / 2;
      }
      // The line by the normal equations over the chosen levels.
      const idx = r.terminal?.indices ?? [];
      const x = idx.map((i) => times[i]);
      const y = idx.map((i) => Math.log(conc[i]));
      const sum = (v: number[]) => v.reduce((a, b) => a + b, 0);
      const solved = lusolve([[x.length, sum(x)], [sum(x), sum(x.map((v) => v * v))]], [sum(y), sum(x.map((v, j) => v * y[j]))]) as number[][];
      const lz = -solved[1][0];
      const aucInf = auc + 0.7 / lz;
      const aumcInf = aumc + (0.7 * 12) / lz + 0.7 / lz ** 2;
      expect(rel(r.figures.aucLast, auc)).toBeLessThan(1e-10);
      expect(rel(r.figures.aumcLast, aumc)).toBeLessThan(1e-10);
      expect(rel(r.figures.terminalRate, lz)).toBeLessThan(1e-10);
      expect(rel(r.figures.aucInf, aucInf)).toBeLessThan(1e-10);
      expect(rel(r.figures.aumcInf, aumcInf)).toBeLessThan(1e-10);
      expect(rel(r.figures.clearance, 100 / aucInf)).toBeLessThan(1e-10);
      expect(rel(r.figures.volume, 100 / (lz * aucInf))).toBeLessThan(1e-10);
      expect(rel(r.figures.mrt, aumcInf / aucInf)).toBeLessThan(1e-10);
      expect(rel(r.figures.aucExtrapolatedPercent, (100 * 0.7) / lz / aucInf)).toBeLessThan(1e-10);
    }
  });
});

describe('the terminal line inside a profile: flags and fixed points (common practice)', () => {
  it('fewer than 3 levels after Cmax: no λz, no AUC0–∞, and a flag', () => {
    const r = ncaProfile({ times: [0, 1, 2, 4, 6], concentrations: [0, 1, 3, 5, 4], dose: { amount: 10, time: 0, route: 'extravascular' } });
    expect(r.figures.terminalRate).toBeNull();
    expect(r.figures.aucInf).toBeNull();
    expect(r.figures.clearance).toBeNull();
    expect(r.figures.aucLast).not.toBeNull();
    expect(r.flags.find((f) => f.figure === 'terminalRate')?.message).toMatch(/1 positive level after Cmax; at least 3/);
  });

  it('only 2 levels after Cmax: the line through them is given, λz exact for a mono-exponential tail, and flagged as fewer than the rule\'s 3', () => {
    // After the peak at 2 h the levels fall as 8·e^(−0.3(t − 2)): two points fix λz = 0.3 exactly (log-linear through two points).
    const times = [0, 1, 2, 4, 6];
    const conc = [0, 5, 8, 8 * Math.exp(-0.6), 8 * Math.exp(-1.2)];
    const r = ncaProfile({ times, concentrations: conc, dose: { amount: 10, time: 0, route: 'extravascular' } });
    expect(Math.abs((r.figures.terminalRate as number) - 0.3)).toBeLessThan(1e-12);
    expect(r.terminal?.chosenBy).toBe('two levels only');
    expect(r.figures.aucInf).not.toBeNull();
    expect(r.flags.find((f) => f.figure === 'terminalRate')?.message).toBe(
      'the terminal line has only 2 points (the only ones after Cmax); the rule asks for at least 3: λz and every figure from it (t½, AUC0–∞, CL, Vz, MRT) are doubtful',
    );
  });

  it('more than 20 % extrapolated: AUC0–∞ flagged', () => {
    // Sampled to 8 h of a 23 h half-life: e^(−0.03·8) of the area is still to come.
    const times = [0, 1, 2, 3, 4, 6, 8];
    const conc = times.map((t) => 10 * (Math.exp(-0.03 * t) - Math.exp(-2 * t)));
    const r = ncaProfile({ times, concentrations: conc, dose: { amount: 10, time: 0, route: 'extravascular' } });
    expect(r.figures.aucExtrapolatedPercent ?? 0).toBeGreaterThan(20);
    expect(r.flags.some((f) => f.figure === 'aucInf' && /more than 20 %/.test(f.message))).toBe(true);
  });

  it('fixed terminal points are used as given; a doubtful line (adjusted R² < 0.9) is flagged', () => {
    const times = [0, 1, 2, 4, 6, 8, 12, 24];
    const conc = [0, 5, 8, 6, 4.5, 3.2, 1.9, 0.5];
    const r = ncaProfile({ times, concentrations: conc, dose: { amount: 10, time: 0, route: 'extravascular' }, terminalPoints: [5, 6, 7] });
    expect(r.terminal?.indices).toEqual([5, 6, 7]);
    expect(r.terminal?.chosenBy).toBe('fixed');
    const noisy = ncaProfile({ times: [0, 1, 2, 3, 4, 5], concentrations: [0, 9, 4, 6, 2.5, 3.5] });
    expect(noisy.figures.terminalAdjustedR2 ?? 1).toBeLessThan(0.9);
    expect(noisy.flags.some((f) => f.figure === 'terminalRate' && /below 0.9/.test(f.message))).toBe(true);
  });

  it('levels below the limit are excluded and named; levels before a single dose are left out and said', () => {
    const r = ncaProfile({
      times: [-0.5, 0, 1, 2, 4, 8, 12],
      concentrations: [0.3, 0, 4, 3, 2, 1, 0],
      excluded: [6],
      dose: { amount: 10, time: 0, route: 'extravascular' },
    });
    expect(r.excluded).toEqual([{ index: 6, time: 12 }]);
    expect(r.figures.tlast).toBe(8);
    expect(r.flags.some((f) => f.figure === 'levels' && /time 12 is below the limit/.test(f.message))).toBe(true);
    expect(r.flags.some((f) => f.figure === 'levels' && /1 level before the dose time/.test(f.message))).toBe(true);
    // AUC from the dose time: 0.5·4 + (4 + 3)/2 by linear up, then log-down from 4 to 8 h.
    const expected = 2 + segmentArea(1, 4, 2, 3, 'linear-up-log-down') + segmentArea(2, 3, 4, 2, 'linear-up-log-down') + segmentArea(4, 2, 8, 1, 'linear-up-log-down');
    expect(rel(r.figures.aucLast, expected)).toBeLessThan(1e-14);
  });

  it('refuses negative levels and times out of order with a sentence each', () => {
    const bad = () => ncaProfile({ times: [0, 2, 1], concentrations: [0, -1, 2] });
    expect(bad).toThrow(/times\[2\] \(1\) does not come after times\[1\] \(2\)/);
    expect(bad).toThrow(/concentrations\[1\] is negative \(-1\)/);
  });
});

describe('steady state over an interval (Gibaldi & Perrier ch. 3, from memory)', () => {
  it('bolus doses superposed: AUCτ = dose/CL exactly, Cavg = AUCτ/τ, Cmin the pre-dose trough, Vz = V', () => {
    const [dose, V, k, tau, td] = [100, 20, 0.1, 12, 48];
    // One compartment at steady state after boluses every τ: C(t') = (dose/V)·e^(−kt')/(1 − e^(−kτ)).
    const css = (s: number) => ((dose / V) * Math.exp(-k * s)) / -Math.expm1(-k * tau);
    const after = [0.5, 1, 2, 4, 8, 12];
    const times = [td, ...after.map((s) => td + s)];
    const conc = [css(tau), ...after.map(css)];
    const r = ncaProfile({ times, concentrations: conc, dose: { amount: dose, time: td, route: 'intravascular' }, interval: tau });
    const f = r.figures;
    expect(rel(f.aucTau, dose / (V * k))).toBeLessThan(1e-12);
    expect(rel(f.cavg, dose / (V * k) / tau)).toBeLessThan(1e-12);
    expect(rel(f.clearance, V * k)).toBeLessThan(1e-12);
    expect(rel(f.volume, V)).toBeLessThan(1e-12);
    expect(f.cminTau).toBe(css(tau));
    expect(f.cmaxTau).toBe(css(0.5));
    expect(rel(f.fluctuationPercent, (100 * (css(0.5) - css(tau))) / (f.cavg ?? NaN))).toBeLessThan(1e-14);
    expect(rel(f.swingPercent, (100 * (css(0.5) - css(tau))) / css(tau))).toBeLessThan(1e-14);
    expect(f.mrt).toBeNull();
    expect(r.flags.some((x) => x.figure === 'mrt')).toBe(true);
  });

  it('oral doses superposed: AUCτ = F·dose/CL within the trapezoid error, from a level at the dose time or a pre-dose level', () => {
    const [F, dose, V, ka, k, tau, td] = [0.9, 200, 30, 1.1, 0.15, 12, 24];
    const K = (F * dose * ka) / (V * (ka - k));
    // The Bateman function summed over all earlier doses: each exponential divided by 1 − e^(−rate·τ).
    const css = (s: number) => K * (Math.exp(-k * s) / -Math.expm1(-k * tau) - Math.exp(-ka * s) / -Math.expm1(-ka * tau));
    const d1 = (s: number) => K * ((-k * Math.exp(-k * s)) / -Math.expm1(-k * tau) + (ka * Math.exp(-ka * s)) / -Math.expm1(-ka * tau));
    const d2 = (s: number) => K * ((k * k * Math.exp(-k * s)) / -Math.expm1(-k * tau) - (ka * ka * Math.exp(-ka * s)) / -Math.expm1(-ka * tau));
    const s = grid(0, tau, 0.05);
    const exact = (F * dose) / (V * k);
    const tolerance = trapezoidBound(s, css, d1, d2, 'linear-up-log-down');
    expect(tolerance / exact).toBeLessThan(1e-3);
    const atDose = ncaProfile({ times: s.map((x) => td + x), concentrations: s.map(css), dose: { amount: dose, time: td, route: 'extravascular' }, interval: tau });
    expect(Math.abs((atDose.figures.aucTau ?? NaN) - exact)).toBeLessThanOrEqual(tolerance);
    expect(atDose.figures.cavg).toBe((atDose.figures.aucTau ?? NaN) / tau);
    // The same levels with the first drawn just before the dose instead: taken as the level at the dose time, and said.
    const times = [td - 0.1, ...s.slice(1).map((x) => td + x)];
    const predose = ncaProfile({ times, concentrations: s.map(css), dose: { amount: dose, time: td, route: 'extravascular' }, interval: tau });
    expect(predose.figures.aucTau).toBe(atDose.figures.aucTau);
    expect(predose.flags.some((x) => x.figure === 'aucTau' && /pre-dose level/.test(x.message))).toBe(true);
  });

  it('an interval longer than the levels is completed on the terminal line, and said', () => {
    const k = 0.2;
    const times = [0, 1, 2, 4, 6, 8];
    const conc = times.map((t) => 10 * (Math.exp(-k * t) - Math.exp(-3 * t)));
    const r = ncaProfile({ times, concentrations: conc, dose: { amount: 10, time: 0, route: 'extravascular' }, interval: 12 });
    const lz = r.figures.terminalRate ?? NaN;
    const clast = conc[5];
    expect(rel(r.figures.aucTau, (r.figures.aucLast ?? NaN) + (clast / lz) * -Math.expm1(-lz * 4))).toBeLessThan(1e-14);
    expect(r.flags.some((f) => f.figure === 'aucTau' && /completed on the terminal line/.test(f.message))).toBe(true);
  });
});

describe('an infusion (Gibaldi & Perrier ch. 11, from memory: the infusion adds half its duration to AUMC/AUC)', () => {
  it('one compartment, 2 h infusion: MRT = AUMC0–∞/AUC0–∞ − 1 = 1/k within the rising limb\'s trapezoid error, AUC0–∞ = dose/(V·k)', () => {
    const [dose, V, k, D] = [100, 25, 0.2, 2];
    const R = dose / D;
    // Rising while the infusion runs, C = R/(V·k)·(1 − e^(−kt)); after it an exact exponential from C(D).
    const c = (t: number) => (t <= D ? (R / (V * k)) * -Math.expm1(-k * t) : (R / (V * k)) * -Math.expm1(-k * D) * Math.exp(-k * (t - D)));
    const rising = grid(0, D, 0.01);
    const times = [...rising, 3, 4, 6, 8, 12, 16, 24, 36, 48];
    const r = ncaProfile({ times, concentrations: times.map(c), dose: { amount: dose, time: 0, route: 'infusion', duration: D } });
    expect(rel(r.figures.terminalRate, k)).toBeLessThan(1e-12);
    // Only the rising limb is inexact (linear trapezoids): f'' = C'' for AUC and (tC)'' = 2C' + tC'' for AUMC there.
    const C1 = (t: number) => (R / V) * Math.exp(-k * t);
    const C2 = (t: number) => -k * (R / V) * Math.exp(-k * t);
    const aucError = trapezoidBound(rising, c, C1, C2, 'linear');
    const aumcError = trapezoidBound(rising, (t) => t * c(t), (t) => c(t) + t * C1(t), (t) => 2 * C1(t) + t * C2(t), 'linear');
    const auc = dose / (V * k);
    expect(Math.abs((r.figures.aucInf ?? NaN) - auc)).toBeLessThanOrEqual(aucError);
    expect(Math.abs((r.figures.mrt ?? NaN) - 1 / k)).toBeLessThanOrEqual((aumcError + (1 / k + D / 2) * aucError) / (auc - aucError));
    expect(aumcError / (auc / k)).toBeLessThan(1e-4);
  });
});

describe('steady-state figures need the level at the dose time', () => {
  it('with no level inside the interval they are left out, and said', () => {
    const r = ncaProfile({ times: [30, 31, 32, 34], concentrations: [5, 4, 3, 2], dose: { amount: 1, time: 0, route: 'extravascular' }, interval: 12 });
    expect([r.figures.aucTau, r.figures.cavg, r.figures.cminTau, r.figures.clearance]).toEqual([null, null, null, null]);
    expect(r.flags.some((f) => f.figure === 'aucTau' && /no level inside the interval/.test(f.message))).toBe(true);
  });
});

describe('summaries over subjects', () => {
  it('geometric mean and CV of 10, 20, 40, 80 by hand; arithmetic figures as mathjs gives them', () => {
    // ln x = ln 10 + (0, 1, 2, 3)·ln 2: mean ln 10 + 1.5 ln 2, so the geometric mean is 10·2^1.5 = 28.284271.
    // s² = ((1.5² + 0.5² + 0.5² + 1.5²)/3)(ln 2)² = (5/3)(0.480453) = 0.800755; √(e^0.800755 − 1) = √1.227222 = 1.107800.
    const s = summariseValues([40, 10, 80, 20], true);
    expect(s.geometricMean).toBeCloseTo(28.284271, 6);
    expect(s.geometricCv).toBeCloseTo(1.1078, 6);
    expect(s.mean).toBeCloseTo(mMean([40, 10, 80, 20]), 12);
    expect(s.sd).toBeCloseTo(mStd([40, 10, 80, 20]) as unknown as number, 12);
    expect([s.min, s.max, s.median]).toEqual([10, 80, mMedian([40, 10, 80, 20])]);
  });

  it('Tmax by median and range; figures missing in a subject are left out of its n', () => {
    const profile = (tmax: number, withTail: boolean) => {
      const times = [0, 1, 2, 4, 8, 12];
      const conc = times.map((t) => (t === 0 ? 0 : t <= tmax ? t : tmax * Math.exp(-0.2 * (t - tmax))));
      return ncaProfile({ times: withTail ? times : times.slice(0, 4), concentrations: withTail ? conc : conc.slice(0, 4), dose: { amount: 10, time: 0, route: 'extravascular' } });
    };
    const results = [profile(1, true), profile(2, true), profile(2, true), profile(4, false)].map((result, i) => ({ subject: `S${i + 1}`, result }));
    const summary = summariseNca(results);
    expect(summary.subjects).toBe(4);
    const tmax = summary.figures.tmax;
    expect([tmax?.n, tmax?.median, tmax?.min, tmax?.max, tmax?.geometricMean]).toEqual([4, 2, 1, 4, null]);
    expect(summary.figures.terminalRate?.n).toBe(3);
    expect(summary.figures.terminalAdjustedR2).toBeUndefined();
  });
});
