/**
 * NCA on a published worked example: the two-page sheet "Calculation of AUC Using the
 * Trapezoidal Rule" (author not named; https://www.scribd.com/doc/248012686/Auc-calculating,
 * page 1 the table, page 2 the tail). Its levels halve every hour from 100 mg/L at t = 0
 * (printed to three figures as 3.13 and 1.56; its segment areas 4.688 and 2.344 show it worked
 * with 3.125 and 1.5625, which is what is fed here). It prints, by the linear trapezoidal rule,
 * AUC0–6 = 147.657 mg·h/L, and with k = 0.693 h⁻¹, AUC6–∞ = 1.56/0.693 = 2.25 and
 * AUC0–∞ = 149.91 mg·h/L.
 *
 * The sheet prints no figure for the log-down rule; on the same levels that rule is checked
 * against the exact integral of 100·2^(−t) (Gibaldi & Perrier, app. D, from memory), since a
 * log-linear interpolant of a mono-exponential is the curve itself. No published worked example
 * of the linear-up/log-down rule with its numbers was found.
 */
import { describe, expect, it } from 'vitest';
import { ncaProfile } from '../../models/levels/nca.ts';

const times = [0, 1, 2, 3, 4, 5, 6];
const conc = times.map((t) => 100 / 2 ** t); // 100, 50, 25, 12.5, 6.25, 3.125, 1.5625
// No dose: the areas start at time 0 from the level recorded there, as the sheet's first trapezoid does.
const profile = (rule: 'linear' | 'linear-up-log-down') => ncaProfile({ times, concentrations: conc, rule });

describe('the worked sheet "Calculation of AUC Using the Trapezoidal Rule" (scribd.com/doc/248012686)', () => {
  it('linear trapezoidal: AUC0–6 = 147.657 mg·h/L as printed (3 decimals, its rounded areas summed)', () => {
    const r = profile('linear');
    // The sheet sums segment areas it rounded to 3 decimals, so its total may differ by up to 6 × 0.0005.
    expect(Math.abs((r.figures.aucLast ?? NaN) - 147.657)).toBeLessThanOrEqual(0.003);
    expect(r.figures.aucLast).toBeCloseTo(147.65625, 12); // the sum of its unrounded trapezoids
  });

  it('λz = 0.693 h⁻¹ and AUC0–∞ = 149.91 mg·h/L, to the precision printed', () => {
    const r = profile('linear');
    expect(Math.abs((r.figures.terminalRate ?? NaN) - 0.693)).toBeLessThanOrEqual(0.0005);
    expect(Math.abs((r.figures.aucInf ?? NaN) - 149.91)).toBeLessThanOrEqual(0.005);
  });

  it('linear-up/log-down on the same levels: the exact integral 100(1 − 2⁻⁶)/ln 2 (not printed by the sheet)', () => {
    const r = profile('linear-up-log-down');
    const exact = (100 * (1 - 2 ** -6)) / Math.LN2;
    expect(Math.abs((r.figures.aucLast ?? NaN) - exact) / exact).toBeLessThan(1e-12);
    // The linear rule's excess on a falling exponential (the bias the sheet's method carries), computed by the code: 4.0 %.
    const linear = profile('linear').figures.aucLast ?? NaN;
    expect((linear - exact) / exact).toBeCloseTo(0.0397, 3);
    expect(Math.abs((r.figures.aucInf ?? NaN) - 100 / Math.LN2) / (100 / Math.LN2)).toBeLessThan(1e-12);
  });
});
