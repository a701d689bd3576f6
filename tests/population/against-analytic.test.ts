/**
 * Virtual populations against closed forms: with only clearance varying (log-normal), the
 * concentration percentiles of a one-compartment bolus and the attainment of a steady-state
 * trough are functions of one normal number, so their exact values follow from the normal
 * distribution; the sampled ones must agree within their Monte Carlo error.
 */
import { describe, expect, it } from 'vitest';
import { normalCdf, normalQuantile } from '../../models/population/normal.ts';
import { planPopulation, runBatch, simulatePopulation } from '../../models/population/population.ts';
import { figureColumn } from '../../models/population/layout.ts';

const clTypical = 4; // L/h
const volume = 20; // L
const dose = 100; // mg
const cv = 0.4;
const spread = Math.sqrt(Math.log(1 + cv * cv)); // SD of ln CL, exact for a log-normal CV

function bolusPopulation(subjects: number) {
  return {
    title: 'One compartment, clearance varying',
    compartments: [{ id: 'central', volume: `${volume} L` }],
    transfers: [{ from: 'central', cl: { typical: `${clTypical} L/h`, cv: `${cv * 100}%`, name: 'CL' } }],
    doses: [{ into: 'central', amount: `${dose} mg` }],
    output: { end: '12 h', times: ['2 h', '6 h', '12 h'] },
    population: { subjects, seed: 11, periods: [] },
  };
}

describe('percentile bands: one-compartment bolus with log-normal clearance', () => {
  // C(t) = D/V·exp(−CL·t/V) falls as CL rises, so the q-th percentile of C is C at the
  // (1 − q)-th percentile of CL, CL_(1−q) = CL_typ·exp(s·Φ⁻¹(1 − q)) (Rowland & Tozer, one-
  // compartment bolus; the log-normal quantile). Mapped back to the normal scale, a sample
  // percentile has standard error √(q(1 − q)/N)/φ(z_q) (the order-statistic standard error).
  const N = 20_000;
  const result = simulatePopulation(bolusPopulation(N));
  if (!result.ok) throw new Error(JSON.stringify(result.problems));
  const r = result.value;

  for (const q of [5, 50, 95]) {
    it(`the ${q}th percentile at 2, 6 and 12 h lies within 4 standard errors of the log-normal quantile`, () => {
      const zq = normalQuantile(1 - q / 100);
      const density = Math.exp(-0.5 * zq * zq) / Math.sqrt(2 * Math.PI);
      const se = Math.sqrt((q / 100) * (1 - q / 100) / N) / density;
      for (const t of [2, 6, 12]) {
        const j = r.times.indexOf(t);
        const c = r.bands.central[String(q)][j];
        // The clearance this concentration implies, on the normal scale of its log.
        const cl = (-volume / t) * Math.log((c * volume) / dose);
        const z = Math.log(cl / clTypical) / spread;
        expect(Math.abs(z - zq)).toBeLessThan(4 * se);
        const exact = (dose / volume) * Math.exp((-clTypical * Math.exp(spread * zq) * t) / volume);
        expect(Math.abs(c / exact - 1)).toBeLessThan(0.05);
      }
    });
  }
});

describe('attainment against the log-normal CDF: intermittent infusion at steady state', () => {
  // Steady-state trough of a one-compartment intermittent infusion (Gibaldi & Perrier,
  // Pharmacokinetics, 2nd ed., ch. 1: zero-order input at steady state):
  //   C_trough = (R/CL)·(1 − e^{−kT})·e^{−k(τ − T)}/(1 − e^{−kτ}),  k = CL/V, R = D/T.
  // It falls as CL rises, so trough ≥ X exactly when CL ≤ CL*, and the probability is
  // Φ(ln(CL*/CL_typ)/s), the log-normal CDF at CL*.
  const tau = 12;
  const T = 1;
  const X = 0.5;
  const N = 4000;
  const trough = (cl: number) => {
    const k = cl / volume;
    return ((dose / T / cl) * (1 - Math.exp(-k * T)) * Math.exp(-k * (tau - T))) / (1 - Math.exp(-k * tau));
  };
  let lo = 1e-3;
  let hi = 1e3;
  for (let i = 0; i < 200; i++) {
    const mid = Math.sqrt(lo * hi);
    if (trough(mid) >= X) lo = mid;
    else hi = mid;
  }
  const clStar = lo;
  const exact = normalCdf(Math.log(clStar / clTypical) / spread);
  const scenario = {
    ...bolusPopulation(N),
    doses: [{ into: 'central', amount: `${dose} mg`, duration: `${T} h`, every: `${tau} h` }],
    output: { end: '24 h', step: '12 h' },
    population: { subjects: N, seed: 5, periods: ['steady state'], targets: [{ trough: { atLeast: `${X} mg/L` } }] },
  };
  const result = simulatePopulation(scenario);
  if (!result.ok) throw new Error(JSON.stringify(result.problems));
  const a = result.value.attainment[0];

  it('the share of subjects with trough ≥ X is within 4 Monte Carlo standard errors of Φ(ln(CL*/CL)/s)', () => {
    expect(exact).toBeGreaterThan(0.2);
    expect(exact).toBeLessThan(0.8);
    const se = Math.sqrt((exact * (1 - exact)) / N);
    expect(Math.abs(a.probability - exact)).toBeLessThan(4 * se);
    // The reported standard error is the binomial one of the estimate.
    expect(a.standardError).toBeCloseTo(Math.sqrt((a.probability * (1 - a.probability)) / N), 12);
    expect(a.attained).toBe(Math.round(a.probability * N));
  });

  it('each subject attains exactly when its own trough, from the closed form, is at least X', () => {
    const plan = planPopulation({ ...scenario, population: { ...scenario.population, subjects: 200 } });
    if (!plan.ok) throw new Error('plan');
    const batch = runBatch(plan.value, 0, 200);
    if (!batch.ok) throw new Error('batch');
    const col = figureColumn(plan.value.layout, 0, 0, 'trough');
    const auc = figureColumn(plan.value.layout, 0, 0, 'auc');
    for (let s = 0; s < 200; s++) {
      const figures = batch.value.figures.subarray(s * plan.value.layout.columns);
      // AUC over a cycle at steady state is D/CL (Rowland & Tozer), which gives the subject's CL.
      const cl = dose / figures[auc];
      expect(Math.abs(figures[col] / trough(cl) - 1)).toBeLessThan(1e-10);
    }
  });
});

describe('between-subject variability as a coefficient of variation', () => {
  // For a log-normal CL with median CL_typ and SD s of its log: E[1/CL] = e^{s²/2}/CL_typ and
  // CV(1/CL) = √(e^{s²} − 1) = cv exactly when s² = ln(1 + cv²) (log-normal moments; Johnson,
  // Kotz & Balakrishnan). The small-CV shortcut s = cv would give 1.133 for the mean ratio and
  // a CV of 0.417 at cv = 0.4, both well outside the sampling error at N = 20,000.
  const N = 20_000;
  const scenario = {
    ...bolusPopulation(N),
    doses: [{ into: 'central', amount: `${dose} mg`, every: '24 h' }],
    output: { end: '24 h', step: '24 h' },
    population: { subjects: N, seed: 3, periods: ['steady state'] },
  };
  const plan = planPopulation(scenario);
  if (!plan.ok) throw new Error('plan');
  const batch = runBatch(plan.value, 0, N);
  if (!batch.ok) throw new Error('batch');
  const col = figureColumn(plan.value.layout, 0, 0, 'auc');
  const aucs = Array.from({ length: N }, (_, s) => batch.value.figures[s * plan.value.layout.columns + col]);
  const mean = aucs.reduce((a, b) => a + b, 0) / N;
  const sd = Math.sqrt(aucs.reduce((a, b) => a + (b - mean) ** 2, 0) / (N - 1));

  it('the mean of D/CL over the population is e^{s²/2}·D/CL_typ within 4 standard errors', () => {
    const expected = (dose / clTypical) * Math.exp((spread * spread) / 2);
    expect(Math.abs(mean / expected - 1)).toBeLessThan(4 * (cv / Math.sqrt(N)));
  });

  it('its coefficient of variation is the cv given, within sampling error', () => {
    // SE of a sample CV for a log-normal: about cv·√((1 + 2cv²... ) / 2N); 0.01 is over 4 of them here.
    expect(Math.abs(sd / mean - cv)).toBeLessThan(0.01);
  });
});

describe('correlated variabilities through the scenario', () => {
  // IV boluses every 24 h: the first interval's Cmax is D/V (at the first dose) and the AUC over a
  // cycle at steady state is D/CL (Rowland & Tozer), so ln Cmax and ln AUC are −ln V and −ln CL
  // shifted: their correlation is the one given between the logs of CL and V. A sample
  // correlation of N pairs has standard error about (1 − ρ²)/√N (Fisher's large-sample formula).
  const N = 20_000;
  const rho = 0.6;
  const scenario = {
    title: 'CL and V correlated',
    compartments: [{ id: 'central', volume: { typical: '20 L', cv: '25%', name: 'V' } }],
    transfers: [{ from: 'central', cl: { typical: '4 L/h', cv: '40%', name: 'CL' } }],
    doses: [{ into: 'central', amount: '100 mg', every: '24 h' }],
    output: { end: '48 h', step: '24 h' },
    population: { subjects: N, seed: 8, periods: ['first interval', 'steady state'], correlations: [{ between: ['V', 'CL'], value: rho }] },
  };
  const plan = planPopulation(scenario);
  if (!plan.ok) throw new Error(JSON.stringify(plan.problems));
  const batch = runBatch(plan.value, 0, N);
  if (!batch.ok) throw new Error(JSON.stringify(batch.problems));
  const layout = plan.value.layout;
  const cmax = figureColumn(layout, 0, 0, 'cmax');
  const auc = figureColumn(layout, 1, 0, 'auc');
  const x = new Float64Array(N);
  const y = new Float64Array(N);
  for (let s = 0; s < N; s++) {
    x[s] = Math.log(batch.value.figures[s * layout.columns + cmax]);
    y[s] = Math.log(batch.value.figures[s * layout.columns + auc]);
  }
  const mean = (a: Float64Array) => a.reduce((p, v) => p + v, 0) / a.length;
  const mx = mean(x);
  const my = mean(y);
  let sxy = 0;
  let sxx = 0;
  let syy = 0;
  for (let s = 0; s < N; s++) {
    sxy += (x[s] - mx) * (y[s] - my);
    sxx += (x[s] - mx) ** 2;
    syy += (y[s] - my) ** 2;
  }

  it('the sample correlation of ln Cmax (first dose) and ln AUC (steady state) is the one given, within 4 standard errors', () => {
    expect(Math.abs(sxy / Math.sqrt(sxx * syy) - rho)).toBeLessThan((4 * (1 - rho * rho)) / Math.sqrt(N));
  });

  it('the SDs of the logs are √ln(1 + cv²) within 4 standard errors (SE of an SD ≈ s/√(2N))', () => {
    const sx = Math.sqrt(sxx / (N - 1));
    const sy = Math.sqrt(syy / (N - 1));
    expect(Math.abs(sx - Math.sqrt(Math.log(1 + 0.25 ** 2)))).toBeLessThan((4 * sx) / Math.sqrt(2 * N));
    expect(Math.abs(sy - Math.sqrt(Math.log(1 + 0.4 ** 2)))).toBeLessThan((4 * sy) / Math.sqrt(2 * N));
  });
});

describe('the figures of a dosing interval', () => {
  it('the first interval of boluses every 24 h: Cmax = D/V at the dose and trough = D/V·e^{−k·24 h} just before the next (not after it)', () => {
    const N = 50;
    const plan = planPopulation({
      title: 'first interval',
      compartments: [{ id: 'central', volume: { typical: '20 L', cv: '25%' } }],
      transfers: [{ from: 'central', cl: { typical: '4 L/h', cv: '40%' } }],
      doses: [{ into: 'central', amount: '100 mg', every: '24 h' }],
      output: { end: '72 h', step: '6 h' },
      population: { subjects: N, seed: 2, periods: ['first interval', 'steady state'] },
    });
    if (!plan.ok) throw new Error('plan');
    const batch = runBatch(plan.value, 0, N);
    if (!batch.ok) throw new Error('batch');
    const layout = plan.value.layout;
    for (let s = 0; s < N; s++) {
      const f = batch.value.figures.subarray(s * layout.columns);
      const cmax = f[figureColumn(layout, 0, 0, 'cmax')];
      // k = CL/V = (D/AUC_ss)/(D/C0) (one compartment, Rowland & Tozer).
      const k = cmax / f[figureColumn(layout, 1, 0, 'auc')];
      expect(Math.abs(f[figureColumn(layout, 0, 0, 'trough')] / (cmax * Math.exp(-k * 24)) - 1)).toBeLessThan(1e-10);
      expect(Math.abs(f[figureColumn(layout, 0, 0, 'cmin')] / (cmax * Math.exp(-k * 24)) - 1)).toBeLessThan(1e-10);
      expect(f[figureColumn(layout, 0, 0, 'tmax')]).toBe(0);
    }
  });
});
