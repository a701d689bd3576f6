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
 * log-linear interpolant of a mono-exponential is the curve itself.
 *
 * No published worked table of the log-down (or linear-up/log-down) rule with its printed
 * intermediate areas was found outside the manuals of pharmacokinetic programs, which are not
 * used here. What was found in print: W. L. Chiou, J Pharmacokinet Biopharm 6(6):539–546 (1978),
 * doi:10.1007/BF01062108, abstract at https://pubmed.ncbi.nlm.nih.gov/731416/, gives the linear
 * rule's excess over the true area on a falling exponential as a function of n = Δt/t½ alone:
 * "about 1%" at n = 0.5, 15.5 % at n = 2, 57.1 % at n = 4. On such a segment our log-down area is
 * the true area, so linear/log-down − 1 must give those figures. The last block derives one
 * log-down segment by hand and checks the rule against a quadrature in mathjs BigNumber arithmetic.
 */
import { all, create, type BigNumber } from 'mathjs';
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

describe('Chiou (1978): the linear rule\'s excess over the log-down (true) area on a falling exponential, by n = Δt/t½', () => {
  // Two levels n half-lives apart, 100 and 100·2^(−n); the excess depends on n only (Chiou's abstract).
  const excessPercent = (n: number) => {
    const profile = { times: [0, 2 * n], concentrations: [100, 100 * 2 ** -n] }; // t½ = 2 h
    const linear = ncaProfile({ ...profile, rule: 'linear' }).figures.aucLast ?? NaN;
    const logDown = ncaProfile({ ...profile, rule: 'linear-up-log-down' }).figures.aucLast ?? NaN;
    return 100 * (linear / logDown - 1);
  };
  it('15.5 % at n = 2 and 57.1 % at n = 4 (to the printed 0.1 %: within 0.05), about 1 % at n = 0.5 (within 0.5)', () => {
    // The code gives 15.5245, 57.1134 and 0.9989.
    expect(Math.abs(excessPercent(2) - 15.5)).toBeLessThanOrEqual(0.05);
    expect(Math.abs(excessPercent(4) - 57.1)).toBeLessThanOrEqual(0.05);
    expect(Math.abs(excessPercent(0.5) - 1)).toBeLessThanOrEqual(0.5);
  });
});

/*
 * One log-down segment by hand. Between (t1, C1) and (t2, C2) with C1 > C2 > 0 the log-linear
 * interpolant is C(t) = C1·e^(−k(t − t1)) with k = ln(C1/C2)/(t2 − t1), so that C(t2) = C2. Then
 *   ∫[t1,t2] C dt = (C1/k)(1 − e^(−k(t2 − t1))) = (C1 − C2)/k = (C1 − C2)(t2 − t1)/ln(C1/C2),
 * the log-trapezoid (Gibaldi & Perrier, app. D, from memory; the pages found printing it belong to
 * pharmacokinetic software and are not cited). For (0 h, 8 mg/L) to (4 h, 2 mg/L):
 *   ln(8/2) = ln 4 = 1.386294361, AUC = 6 · 4/1.386294361 = 24/1.386294361 = 17.31234049 mg·h/L,
 * against the linear trapezoid 4 · (8 + 2)/2 = 20 mg·h/L (two half-lives: Chiou's 15.5 % above).
 */
describe('the log-down rule against a quadrature of the interpolant in mathjs BigNumber arithmetic (50 digits)', () => {
  const M = create(all, { number: 'BigNumber', precision: 50 });
  // mathjs BigNumbers of this instance (50 significant digits); their own methods keep the types exact for TypeScript.
  const big = (x: number | string): BigNumber => M.bignumber(x);
  // The segment's interpolant in that arithmetic: linear where the level rises or stays, exponential where it falls.
  const interpolant = (t1: BigNumber, c1: BigNumber, t2: BigNumber, c2: BigNumber) => {
    const dt = t2.minus(t1);
    if (!c1.gt(c2) || !c2.gt(0)) return (t: BigNumber) => c1.plus(t.minus(t1).div(dt).times(c2.minus(c1)));
    const k = c1.div(c2).ln().div(dt);
    return (t: BigNumber) => c1.times(k.neg().times(t.minus(t1)).exp());
  };
  // Romberg's method (trapezoids on 1, 2, …, 2^7 panels, Richardson-extrapolated): on these smooth integrands the
  // error after the last column is below 1e-24 (checked against the closed form below), far under the digits compared.
  const romberg = (f: (t: BigNumber) => BigNumber, a: BigNumber, b: BigNumber): BigNumber => {
    const levels = 8;
    let row: BigNumber[] = [b.minus(a).div(2).times(f(a).plus(f(b)))];
    for (let j = 1; j < levels; j++) {
      const panels = 2 ** j;
      const h = b.minus(a).div(panels);
      let mid = big(0);
      for (let i = 1; i < panels; i += 2) mid = mid.plus(f(a.plus(h.times(i))));
      const next: BigNumber[] = [row[0].div(2).plus(h.times(mid))];
      for (let m = 1; m <= j; m++) next.push(next[m - 1].plus(next[m - 1].minus(row[m - 1]).div(4 ** m - 1)));
      row = next;
    }
    return row[row.length - 1];
  };
  const reference = (times: BigNumber[], conc: BigNumber[]) => {
    let area = big(0);
    for (let i = 1; i < times.length; i++) area = area.plus(romberg(interpolant(times[i - 1], conc[i - 1], times[i], conc[i]), times[i - 1], times[i]));
    return area.toNumber();
  };
  const relative = (x: number | null, ref: number) => Math.abs((x ?? NaN) - ref) / ref;

  it('the segment worked by hand: 17.31234049 mg·h/L (10 figures: within 5e-9, half its last digit), and the quadrature to 1e-14', () => {
    // Without a dose the area starts at time 0, so the segment is placed there (a level at 0 starts it).
    const r = ncaProfile({ times: [0, 4], concentrations: [8, 2] });
    expect(Math.abs((r.figures.aucLast ?? NaN) - 17.31234049)).toBeLessThanOrEqual(5e-9);
    expect(relative(r.figures.aucLast, reference([big(0), big(4)], [big(8), big(2)]))).toBeLessThan(1e-14);
    // The quadrature itself against the hand formula, both in 50-digit arithmetic.
    const quadrature = romberg(interpolant(big(0), big(8), big(4), big(2)), big(0), big(4));
    expect(quadrature.minus(big(24).div(big(4).ln())).abs().toNumber()).toBeLessThan(1e-24);
    expect(ncaProfile({ times: [0, 4], concentrations: [8, 2], rule: 'linear' }).figures.aucLast).toBe(20);
  });

  it('two levels 2⁻³⁰ apart: the quotient ln(C1/C2) taken naively would be off by 1e-9 relative; the rule is within 1e-14', () => {
    const c2 = 1 - 2 ** -30; // exact in binary; its BigNumber is built exactly as 1 − 2^(−30)
    const r = ncaProfile({ times: [0, 4], concentrations: [1, c2] });
    const ref = reference([big(0), big(4)], [big(1), big(1).minus(big(2).pow(-30))]);
    expect(relative(r.figures.aucLast, ref)).toBeLessThan(1e-14);
    const naive = (4 * (1 - c2)) / Math.log(1 / c2);
    expect(relative(naive, ref)).toBeGreaterThan(1e-10); // the cancellation the rule avoids
  });

  it('a short profile, linear up then log down (0, 5, 8, 2, 0.5 mg/L at 0, 1, 2, 6, 12 h), to 1e-14', () => {
    const times = [0, 1, 2, 6, 12];
    const conc = [0, 5, 8, 2, 0.5];
    const r = ncaProfile({ times, concentrations: conc });
    expect(relative(r.figures.aucLast, reference(times.map(big), conc.map(big)))).toBeLessThan(1e-14);
  });
});
