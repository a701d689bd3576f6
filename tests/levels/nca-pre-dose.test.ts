/**
 * The pre-dose level at steady state: only a level drawn within τ/4 before the dose stands for
 * the level at the dose time (our rule, shared by a levels file and a scenario); otherwise the
 * level at the end of the interval does, C(0) = C(τ) at steady state (Gibaldi & Perrier,
 * Pharmacokinetics, 2nd ed., ch. 3, from memory; common practice), and the fallback is flagged.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { isPreDoseTime, ncaFigureInfo, ncaProfile, PRE_DOSE_SHARE } from '../../models/levels/nca.ts';
import { PRE_DOSE_SHARE as scenarioShare } from '../../models/levels/nca-scenario.ts';
import { runNcaCli } from '../../server/nca-cli.ts';

const dir = mkdtempSync(join(tmpdir(), 'tidemark-nca-pre-dose-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

// A level at 0 h (48 h before the dose: an earlier interval's), then the interval 48–60 h.
const times = [0, 49, 50, 52, 56, 60];
const levels = [0, 9, 10, 8, 6, 4.5];
const dose = { amount: 500, time: 48, route: 'extravascular' as const };

/**
 * AUCτ by hand, linear up and log-linear down (Gibaldi & Perrier, app. D, from memory): the
 * interval starts at (48 h, 4.5), the level at its end (60 h) standing for the dose-time level.
 *   48→49 rising:  (1)(4.5 + 9)/2            = 6.75
 *   49→50 rising:  (1)(9 + 10)/2             = 9.5
 *   50→52 falling: (2)(10 − 8)/ln(10/8)      = 4/0.2231435513 = 17.925680…
 *   52→56 falling: (4)(8 − 6)/ln(8/6)        = 8/0.2876820725 = 27.808476…
 *   56→60 falling: (4)(6 − 4.5)/ln(6/4.5)    = 6/0.2876820725 = 20.856357…
 *   AUCτ = 82.840513… mg/L·h, so CL/F = 500/82.840513 = 6.035694 L/h
 */
const handAucTau = 6.75 + 9.5 + (2 * (10 - 8)) / Math.log(10 / 8) + (4 * (8 - 6)) / Math.log(8 / 6) + (4 * (6 - 4.5)) / Math.log(6 / 4.5);

describe('the pre-dose level at steady state', () => {
  it('a level 48 h before the dose is not its trough: the level at the end of the interval is, flagged; Cmin 4.5 and AUCτ by hand', () => {
    const r = ncaProfile({ times, concentrations: levels, dose, interval: 12 });
    // The hand sum above, to the 8 figures written there.
    expect(handAucTau).toBeCloseTo(82.840513, 5);
    // The same five segments in the same formulas: equal to rounding (1e-12 relative).
    expect(r.figures.aucTau).toBeCloseTo(handAucTau, 10);
    expect(r.figures.cminTau).toBe(4.5);
    expect(r.figures.cmaxTau).toBe(10);
    expect(r.figures.cavg).toBeCloseTo(handAucTau / 12, 12);
    // Fluctuation and swing from those (common practice): 100·(10 − 4.5)/Cavg and 100·(10 − 4.5)/4.5.
    expect(r.figures.fluctuationPercent).toBeCloseTo((100 * 5.5 * 12) / handAucTau, 10);
    expect(r.figures.swingPercent).toBeCloseTo((100 * 5.5) / 4.5, 10);
    expect(r.figures.clearance).toBeCloseTo(500 / handAucTau, 12);
    expect(r.figures.clearance).toBeCloseTo(6.035694, 6);
    const messages = r.flags.map((f) => `${f.figure}: ${f.message}`);
    expect(messages).toContain('aucTau: no pre-dose level within τ/4 before the dose (from 45 to 48): the level at the end of the interval (60) is taken as the level at the dose time, C(0) = C(τ) at steady state (fallback)');
    expect(messages).toContain('levels: the level at 0 is not used: only the last level drawn within τ/4 before the dose (from 45 to 48) counts as its pre-dose level');
  });

  it('a level within τ/4 before the dose is its trough: it starts the interval and counts for Cmin', () => {
    // 46 h is 2 h before the dose, inside the 3 h window.
    const r = ncaProfile({ times: [0, 46, 49, 50, 52, 56, 60], concentrations: [0, 4, 9, 10, 8, 6, 4.5], dose, interval: 12 });
    // Only the first segment changes: (1)(4 + 9)/2 = 6.5 in place of 6.75.
    expect(r.figures.aucTau).toBeCloseTo(handAucTau - 0.25, 10);
    expect(r.figures.cminTau).toBe(4);
    expect(r.flags.some((f) => f.figure === 'aucTau' && f.message.startsWith('the pre-dose level at 46 (within τ/4 before the dose)'))).toBe(true);
    // Just outside the window (3.5 h before): not the trough, so the end-of-interval fallback again.
    const outside = ncaProfile({ times: [44.5, 49, 50, 52, 56, 60], concentrations: [4, 9, 10, 8, 6, 4.5], dose, interval: 12 });
    expect(outside.figures.aucTau).toBeCloseTo(handAucTau, 10);
    expect(outside.figures.cminTau).toBe(4.5);
  });

  it('no pre-dose level and none at τ: the lowest in the interval, flagged as the last fallback', () => {
    const r = ncaProfile({ times: [49, 50, 52, 56, 59], concentrations: [9, 10, 8, 6, 4.8], dose, interval: 12 });
    expect(r.flags.some((f) => f.figure === 'aucTau' && /none at the end of the interval \(60\): the lowest level in the interval \(4\.8\)/.test(f.message))).toBe(true);
  });

  it('one rule for both paths, stated in the figures\' rule text', () => {
    expect(PRE_DOSE_SHARE).toBe(0.25);
    expect(scenarioShare).toBe(PRE_DOSE_SHARE);
    expect(isPreDoseTime(45, 48, 12, false)).toBe(true);
    expect(isPreDoseTime(44.99, 48, 12, false)).toBe(false);
    expect(isPreDoseTime(48, 48, 12, false)).toBe(false);
    expect(isPreDoseTime(48, 48, 12, true)).toBe(true); // a level at the bolus is drawn before it
    expect(ncaFigureInfo.aucTau.rule).toContain('within τ/4 before it, else the level at dose time + τ (C(0) = C(τ) at steady state)');
    expect(ncaFigureInfo.cminTau.rule).toContain('within τ/4 before the dose');
  });

  it('the command line on the levels file gives the same: Cmin 4.5, AUCτ by hand, CL/F = 500/AUCτ', () => {
    const file = join(dir, 'ss.csv');
    writeFileSync(file, 'time [h],concentration [mg/L]\n0,0\n49,9\n50,10\n52,8\n56,6\n60,4.5\n');
    const o = runNcaCli([file, '--dose', '500 mg', '--dose-time', '48', '--interval', '12', '--format', 'json'], { folder: dir });
    expect(o.stderr).toBe('');
    const out = JSON.parse(o.stdout) as { subjects: { figures: Record<string, number | null> }[] };
    const f = out.subjects[0].figures;
    expect(f.cminTau).toBe(4.5);
    expect(f.aucTau).toBeCloseTo(handAucTau, 10);
    expect(f.clearance).toBeCloseTo(500 / handAucTau, 10);
    const text = runNcaCli([file, '--dose', '500 mg', '--dose-time', '48', '--interval', '12'], { folder: dir }).stdout;
    expect(text).toMatch(/CL\/F\s+6\.036\s+L\/h/);
    expect(text).toContain('(fallback)');
  });
});
