// The report's building blocks that need no PDF: axis ticks, the regimen in words, the
// derived parameters (k = CL/V, volume at steady state) and the independent check.
import { describe, expect, it } from 'vitest';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { simulateModel } from '../../models/simulate.ts';
import { independentCheck, checkSettings } from '../../server/report/check.ts';
import { fontBytes } from '../../server/report/font-file.ts';
import { duration, reportFileName, unitText } from '../../server/report/format.ts';
import { modelParameters } from '../../server/report/parameters.ts';
import { readReportRequest } from '../../server/report/request.ts';
import { describeDoseLine } from '../../server/report/regimen.ts';
import { linearAxis, logAxis, niceNumber, timeAxis } from '../../models/result/axis-ticks.ts';
import { readSample } from './helpers.ts';

function run(scenario: unknown) {
  const model = normaliseScenario(scenario);
  if (!model.ok) throw new Error(JSON.stringify(model.problems));
  const result = simulateModel(model.value);
  if (!result.ok) throw new Error(JSON.stringify(result.problems));
  return { model: model.value, result: result.value };
}

describe('axis ticks', () => {
  it('steps linear axes by 1, 2 or 5 × 10ⁿ and covers the data', () => {
    // Heckbert's nice numbers (Graphics Gems, 1990): 9.205 over about 6 ticks → steps of 2 up to 10.
    const axis = linearAxis(0, 9.205, 6);
    expect(axis.ticks.map((t) => t.label)).toEqual(['0', '2', '4', '6', '8', '10']);
    expect(niceNumber(0.37, true)).toBe(0.5);
    expect(niceNumber(0.037, false)).toBeCloseTo(0.05, 15);
    const small = linearAxis(0, 0.27, 6);
    expect(small.ticks.map((t) => t.label)).toEqual(['0', '0.1', '0.2', '0.3']);
    expect(linearAxis(0, 1.1, 6).ticks.map((t) => t.label)).toEqual(['0', '0.5', '1.0', '1.5']);
  });

  it('labels a log axis at each decade with minor ticks in between', () => {
    const axis = logAxis(2.8, 9.2);
    expect(axis.ticks.map((t) => t.label)).toEqual(['1', '10']);
    expect(axis.minor).toHaveLength(8);
    const wide = logAxis(1e-9, 23.3, 4);
    // Never more than 4 decades below the top one.
    expect(wide.ticks.map((t) => t.label)).toEqual(['0.01', '0.1', '1', '10', '100']);
  });

  it('steps hour axes in whole days or weeks, and labels long spans in days', () => {
    expect(timeAxis(0, 168, 'h').ticks.map((t) => t.value)).toEqual([0, 24, 48, 72, 96, 120, 144, 168]);
    const sixWeeks = timeAxis(0, 1008, 'h');
    expect(sixWeeks.ticks.map((t) => t.value)).toEqual([0, 168, 336, 504, 672, 840, 1008]);
    expect(sixWeeks.ticks.map((t) => t.label)).toEqual(['0', '7', '14', '21', '28', '35', '42']);
    expect(sixWeeks.note).toMatch(/days/);
    expect(timeAxis(0, 12, 'h').ticks.map((t) => t.value)).toEqual([0, 2, 4, 6, 8, 10, 12]);
  });
});

describe('regimen and units in words', () => {
  it('writes a repeated oral line as one sentence', () => {
    const { model } = run(readSample('brennock-oral-bid'));
    expect(describeDoseLine(model.doseLines[0], model)).toBe('400 mg into gut every 12 h × 14 from 0 h, F 0.85, lag 20 min');
  });

  it('writes infusions with their duration and rate', () => {
    const { model } = run(readSample('tallowen-infusion-loading'));
    expect(describeDoseLine(model.doseLines[0], model)).toBe('1500 mg into central at 0 h, infused over 2 h (750 mg/h)');
    expect(describeDoseLine(model.doseLines[1], model)).toBe('750 mg into central every 8 h × 14 from 8 h, infused over 1 h (750 mg/h)');
  });

  it('prints micro as µ and short hour durations in minutes', () => {
    expect(unitText('ug/L')).toBe('µg/L');
    expect(unitText('mg/L')).toBe('mg/L');
    expect(unitText('umol')).toBe('µmol');
    expect(duration(1 / 3, 'h')).toBe('20 min');
    expect(duration(12, 'h')).toBe('12 h');
  });

  it('names the file after the title and the fingerprint', () => {
    expect(reportFileName('Brennock 400 mg by mouth twice daily', '0123456789ab')).toBe('tidemark-brennock-400-mg-by-mouth-twice-daily-0123456789ab.pdf');
  });

  it('reads a plain scenario or a { scenario, reference } body', () => {
    const brennock = readSample('brennock-oral-bid');
    expect(readReportRequest(brennock)).toEqual({ scenario: brennock });
    expect(readReportRequest({ scenario: brennock, reference: brennock })).toEqual({ scenario: brennock, reference: brennock });
    expect(readReportRequest({ scenario: brennock, reference: null })).toEqual({ scenario: brennock });
  });
});

describe('derived parameters', () => {
  it('gives k = CL/V and the one-compartment Vss = V', () => {
    const { model, result } = run(readSample('brennock-oral-bid'));
    const p = modelParameters(model, result);
    expect(p.compartments.map((c) => c.role)).toEqual(['depot', 'central']);
    // 4.2 L/h / 42 L = 0.1 1/h, printed with fmt.
    expect(p.transfers[1].rateConstant).toBe('0.1 1/h');
    expect(p.steadyVolume).toMatchObject({ applies: true, value: 42 });
  });

  it('gives Vss = V1 + V2 for equal distribution clearances (tallowen, 6 L/h both ways)', () => {
    // Vss = V1·(1 + k12/k21) (Gibaldi & Perrier, Pharmacokinetics, 2nd ed., ch. 2 — from memory);
    // with CL12 = CL21 = 6 L/h, k12 = 6/18 and k21 = 6/35, so Vss = 18 + 35 = 53 L.
    const { model, result } = run(readSample('tallowen-infusion-loading'));
    const sv = modelParameters(model, result).steadyVolume;
    if (!sv.applies) throw new Error('Vss must apply to a two-compartment mammillary model');
    // Three floating-point operations: agreement to 1e-12 relative.
    expect(sv.value).toBeCloseTo(53, 10);
    expect(sv.sumOfVolumes).toBeCloseTo(53, 12);
  });

  it('gives Vss = V1·(1 + Σ k1j/kj1) when the entered volumes do not balance (merridune)', () => {
    // 6 L × (1 + 0.30/0.10 + 0.05/0.004) = 6 × 16.5 = 99 L, while the entered volumes sum to 140 L.
    const { model, result } = run(readSample('merridune-three-compartment-bolus'));
    const sv = modelParameters(model, result).steadyVolume;
    if (!sv.applies) throw new Error('Vss must apply to a three-compartment mammillary model');
    expect(sv.value).toBeCloseTo(99, 10);
    expect(sv.sumOfVolumes).toBeCloseTo(140, 12);
  });

  it('states no Vss for a chain that is not mammillary', () => {
    const chain = {
      title: 'Fictional parent and metabolite',
      compartments: [
        { id: 'central', volume: 10 },
        { id: 'metabolite', volume: 20 },
      ],
      transfers: [
        { from: 'central', to: 'metabolite', k: 0.2 },
        { from: 'metabolite', k: 0.1 },
      ],
      doses: [{ into: 'central', amount: 100 }],
      output: { end: 24 },
    };
    const { model, result } = run(chain);
    const sv = modelParameters(model, result).steadyVolume;
    expect(sv.applies).toBe(false);
  });

  it('gives the low-concentration clearance Vmax/Km of a saturable route', () => {
    const { model, result } = run(readSample('skorvel-saturable-dose-increase'));
    const p = modelParameters(model, result);
    // 20 mg/h / 4 mg/L = 5 L/h; 5 L/h / 50 L = 0.1 1/h.
    expect(p.transfers[1].clearance).toBe('5 L/h');
    expect(p.transfers[1].rateConstant).toBe('0.1 1/h');
  });
});

describe('independent check', () => {
  it('checks the exact path with DOP853 and finds agreement far below the printed digits', () => {
    const scenario = readSample('brennock-oral-bid');
    const { model, result } = run(scenario);
    const check = independentCheck(scenario, result, model.linear);
    expect(check.settings.method).toBe('dop853');
    expect(check.result?.diagnostics.path).toBe('adaptive');
    expect(check.ok).toBe(true);
    // DOP853 at rtol 1e-10 on amounts of a few hundred mg: errors of order 1e-10·C; 1e-6 of Cmax leaves a wide margin.
    expect(check.maxRelativeToCmax).toBeLessThan(1e-6);
    expect(check.maxRelativeToCmax).toBeGreaterThan(0);
  });

  it('checks a saturable model at a 100× tighter tolerance', () => {
    const scenario = readSample('skorvel-saturable-dose-increase');
    const { model, result } = run(scenario);
    const settings = checkSettings(result, scenario, model.linear);
    expect(settings.rtol).toBeCloseTo(1e-10, 20);
    expect(settings.atol).toBeCloseTo(1e-12, 22);
  });

  it('checks a numerically solved linear model with the exact path and sees a coarse fixed step', () => {
    const scenario = { ...readSample('brennock-oral-bid'), solver: { method: 'rk4', step: '30 min' } };
    const { model, result } = run(scenario);
    const check = independentCheck(scenario, result, model.linear);
    expect(check.settings.method).toBe('exact');
    expect(check.result?.diagnostics.path).toBe('exact');
    // RK4 with h = 0.5 h against rates up to 0.9 1/h: h·λ = 0.45, local error ~ (hλ)^5/120 ≈ 1.5e-4 per step, so well above 1e-7 and below 1e-2 of Cmax.
    expect(check.maxRelativeToCmax).toBeGreaterThan(1e-7);
    expect(check.maxRelativeToCmax).toBeLessThan(1e-2);
  });
});

describe('embedded font', () => {
  it('unpacks the WOFF face into a TrueType file with every table', () => {
    const ttf = fontBytes('400-normal');
    // An sfnt starts with version 0x00010000 (TrueType outlines) and its table count (OpenType spec, offset table).
    expect(ttf.readUInt32BE(0)).toBe(0x00010000);
    const tables = ttf.readUInt16BE(4);
    const tags = Array.from({ length: tables }, (_, i) => ttf.toString('latin1', 12 + 16 * i, 16 + 16 * i));
    for (const tag of ['cmap', 'glyf', 'head', 'hmtx', 'loca', 'name']) expect(tags).toContain(tag);
    // Every table lies inside the file.
    for (let i = 0; i < tables; i++) {
      const offset = ttf.readUInt32BE(12 + 16 * i + 8);
      const length = ttf.readUInt32BE(12 + 16 * i + 12);
      expect(offset + length).toBeLessThanOrEqual(ttf.length);
    }
  });
});
